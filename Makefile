# One command each on a fresh machine with only Python: the venv is created when missing.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test bench lint clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[dev]'
	touch $(STAMP)

demo: $(STAMP)
	@PATH="$(CURDIR)/$(BIN):$$PATH" bash demo/run.sh

test: $(STAMP)
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python bench/bench.py

lint: $(STAMP)
	$(BIN)/ruff check . && $(BIN)/ruff format --check . && $(BIN)/mypy

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis
