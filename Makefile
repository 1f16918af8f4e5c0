# motorshelf: the two commands a new machine needs are `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed
TSTAMP := $(VENV)/.installed-test
DEMO_DB ?= demo/motorshelf-demo.duckdb

.PHONY: demo test bench docs clean

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(PY)
	$(PY) -m pip install --quiet -e .
	touch $@

$(TSTAMP): pyproject.toml | $(PY)
	$(PY) -m pip install --quiet -e '.[test]'
	touch $@ $(STAMP)

demo: $(STAMP)
	$(PY) -m catalog.demo --db $(DEMO_DB) --fresh

test: $(TSTAMP)
	$(PY) -m pytest

bench: $(TSTAMP)
	$(PY) -m benchmarks

# Regenerate every generated document of docs/ (the list: catalog/docs.py:GENERATED) and the
# README's example outputs (catalog/readme.py: a run of its commands on a fresh demo catalogue).
docs: $(STAMP)
	$(PY) -m catalog.docs

clean:
	rm -rf $(VENV) demo build *.egg-info
