# streakwise: the two commands a new machine needs are `make run` and `make test`.
PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
STORE_DIR ?= demo

.PHONY: install run test bench clean

$(VENV)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e ".[test]"
	touch $@

install: $(VENV)/.installed

# The main job: build the invented demo league into $(STORE_DIR)/ and open the
# dashboard on it (the address is printed; Ctrl+C stops the server).
run: install
	$(VENV)/bin/streakwise demo --out $(STORE_DIR)
	$(VENV)/bin/streakwise serve --store $(STORE_DIR)/streakwise.duckdb

# The whole test suite (STREAKWISE_REQUIRE_ALL_TESTS=1 makes a skipped test fail the run).
test: install
	$(PY) -m pytest -q $(PYTEST_ARGS)

bench: install
	$(PY) benchmarks/ingest_benchmark.py
	$(PY) benchmarks/odds_benchmark.py
	$(PY) benchmarks/stats_benchmark.py
	$(PY) benchmarks/plan_benchmark.py
	$(PY) benchmarks/hotstate_benchmark.py
	$(PY) benchmarks/dashboard_benchmark.py --quick
	$(PY) benchmarks/scale_benchmark.py

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache $(STORE_DIR)
