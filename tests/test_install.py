"""A regular (non-editable) install holds every module and the shipped profiles.

setuptools installs only the packages ``pyproject.toml`` lists, so a module
in an unlisted folder works in the editable install used for development and
is silently missing from a regular one.  This test builds a regular install
into a temporary folder and imports every module of every layer from there,
from a working folder outside the repository.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from conftest import REPO

LAYERS = ("analysis", "ingest", "dashboard", "demo_league", "cli")


def repo_modules() -> list[str]:
    """``streakwise.<layer>[.<subpackage>].<module>`` for every .py file of the layers."""
    names = []
    for layer in LAYERS:
        folder = REPO / layer
        for path in sorted(folder.rglob("*.py")):
            relative = path.relative_to(folder)
            if path.name == "__main__.py" or "__pycache__" in relative.parts:
                continue
            parts = list(relative.with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            names.append(".".join(["streakwise", layer, *parts]))
    return names


def _pip_install(source: Path, site: Path, *, isolated: bool) -> subprocess.CompletedProcess:
    command = [sys.executable, "-m", "pip", "install", "--no-deps", "--no-input", "--disable-pip-version-check", "--target", str(site), str(source)]
    if not isolated:
        command.insert(4, "--no-build-isolation")
    return subprocess.run(command, capture_output=True, text=True, timeout=600)


@pytest.fixture(scope="module")
def installed(tmp_path_factory) -> Path:
    """A regular install of the repository in ``<tmp>/site``."""
    root = tmp_path_factory.mktemp("install")
    # Build from a clean copy: pip builds in the source tree, and the repository
    # must not get a build/ folder from the tests (others may build at the same time).
    source = root / "source"
    source.mkdir()
    for item in REPO.iterdir():  # the files at the root (pyproject.toml, README.md, ...) and the layers
        if item.is_file():
            shutil.copy2(item, source / item.name)
        elif item.name in LAYERS:
            shutil.copytree(item, source / item.name, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    site = root / "site"
    result = _pip_install(source, site, isolated=False)
    if result.returncode != 0:
        import setuptools

        major = int(setuptools.__version__.split(".")[0])
        # pyproject.toml needs setuptools>=77 (the test extras pin it); an older
        # one in this environment can still build through an isolated build.
        assert major < 77, f"regular install failed:\n{result.stdout}\n{result.stderr}"
        shutil.rmtree(site, ignore_errors=True)
        result = _pip_install(source, site, isolated=True)
        assert result.returncode == 0, f"regular install failed (setuptools {setuptools.__version__} here):\n{result.stderr}"
    return site


def _run_outside(site: Path, workdir: Path, *args: str) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "STREAKWISE_STORE")}
    env["PYTHONPATH"] = str(site)
    env["PYTHONDONTWRITEBYTECODE"] = "1"
    return subprocess.run([sys.executable, *args], capture_output=True, text=True, timeout=300, cwd=workdir, env=env)


def test_layers_have_modules():
    modules = repo_modules()
    for layer in LAYERS:
        assert f"streakwise.{layer}" in modules, f"{layer}/__init__.py is missing"
    assert "streakwise.ingest.store" in modules
    assert "streakwise.cli.__main__" not in modules


IMPORT_ALL = textwrap.dedent(
    """
    import importlib, json, sys
    from pathlib import Path

    site = Path(sys.argv[1]).resolve()
    report = {"outside": [], "failed": {}}
    for name in json.loads(sys.argv[2]):
        try:
            module = importlib.import_module(name)
        except Exception as exc:
            report["failed"][name] = f"{type(exc).__name__}: {exc}"
            continue
        where = Path(module.__file__).resolve()
        if site not in where.parents:
            report["outside"].append(f"{name} from {where}")

    import streakwise.ingest as ingest

    shipped = ingest.shipped_profiles()
    report["shipped"] = {name: str(path) for name, path in shipped.items()}
    report["parsed"] = sorted(ingest.load_profile(name).name for name in shipped)
    print(json.dumps(report))
    """
)


def test_every_module_imports_from_the_regular_install(installed, tmp_path):
    modules = repo_modules()
    result = _run_outside(installed, tmp_path, "-c", IMPORT_ALL, str(installed), json.dumps(modules))
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout.strip().splitlines()[-1])
    assert report["failed"] == {}, "modules missing or broken in a regular install"
    assert report["outside"] == [], "modules imported from outside the regular install"

    # The shipped profiles are in the installed tree, found and parsed from there.
    in_repo = sorted(path.stem for path in (REPO / "ingest" / "profiles").glob("*.toml"))
    installed_files = sorted(path.stem for path in (installed / "streakwise" / "ingest" / "profiles").glob("*.toml"))
    assert installed_files == in_repo
    assert sorted(report["shipped"]) == in_repo
    for path in report["shipped"].values():
        assert Path(path).resolve().is_relative_to(installed.resolve())
    assert len(report["parsed"]) == len(in_repo)


def test_python_m_cli_from_the_regular_install(installed, tmp_path):
    result = _run_outside(installed, tmp_path, "-m", "streakwise.cli", "--help")
    assert result.returncode == 0, result.stderr
    assert "usage: streakwise" in result.stdout
    where = _run_outside(installed, tmp_path, "-c", "import streakwise.cli, sys; print(streakwise.cli.__file__)")
    assert Path(where.stdout.strip()).resolve().is_relative_to(installed.resolve())


def test_entry_point_is_declared(installed):
    (info,) = installed.glob("streakwise-*.dist-info")
    entry_points = (info / "entry_points.txt").read_text()
    assert "streakwise = streakwise.cli:main" in entry_points


def test_no_streakwise_folder_at_the_repository_root():
    # It would shadow the installed package for commands run from the root.
    assert not (REPO / "streakwise").exists()
