# Two entry points for a fresh clone: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/qcthermo demo --out demo_results --force

lint: $(STAMP)
	$(VENV)/bin/ruff check qcthermo tests benchmarks

test: $(STAMP) lint
	$(PY) -m pytest -n 2 -q

bench: $(STAMP)
	for b in benchmarks/bench_*.py; do $(PY) $$b || exit 1; done

clean:
	rm -rf $(VENV) demo_results .pytest_cache
