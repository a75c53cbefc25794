"""Each package's ``__all__`` is sorted, complete and importable."""

from __future__ import annotations

import importlib

import pytest

PACKAGES = ["streakwise.analysis", "streakwise.cli", "streakwise.demo_league", "streakwise.ingest"]


@pytest.mark.parametrize("name", PACKAGES)
def test_all_is_sorted_and_importable(name):
    module = importlib.import_module(name)
    exported = module.__all__
    assert list(exported) == sorted(exported)
    assert len(set(exported)) == len(exported)
    for item in exported:
        assert hasattr(module, item), item


@pytest.mark.parametrize("name", PACKAGES)
def test_public_modules_have_sorted_all(name):
    import pkgutil

    package = importlib.import_module(name)
    for info in pkgutil.iter_modules(package.__path__):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{name}.{info.name}")
        exported = getattr(module, "__all__", None)
        if exported is not None:
            assert list(exported) == sorted(exported), f"{module.__name__}.__all__ is not sorted"
