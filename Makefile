# Two commands on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
OUT ?= demo_out

.PHONY: demo test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install -q --upgrade pip

$(VENV)/.run-installed: pyproject.toml setup.py | $(BIN)/python
	$(BIN)/python -m pip install -q -e .
	touch $@

$(VENV)/.test-installed: pyproject.toml setup.py | $(BIN)/python
	$(BIN)/python -m pip install -q -e '.[test]'
	touch $@ $(VENV)/.run-installed

demo: $(VENV)/.run-installed
	$(BIN)/auroraplan demo --out $(OUT)

lint: $(VENV)/.test-installed
	$(BIN)/ruff check .

test: $(VENV)/.test-installed
	$(BIN)/ruff check .
	$(BIN)/python -m pytest

bench: $(VENV)/.test-installed
	$(BIN)/python benchmarks/run_all.py

clean:
	rm -rf $(VENV) $(OUT) .pytest_cache build dist *.egg-info
