# One command each on a fresh machine with only Python: the venv is created when missing.
# `make demo` installs the runtime dependencies only; `make test` (and bench, lint) add the
# test and development extras (`.[dev]`) to the same venv.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
RUNTIME := $(VENV)/.installed-runtime
DEV := $(VENV)/.installed-dev

.PHONY: demo test bench lint clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(RUNTIME): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e .
	touch $(RUNTIME)

$(DEV): $(RUNTIME)
	$(BIN)/python -m pip install --quiet -e '.[dev]'
	touch $(DEV)

demo: $(RUNTIME)
	@PATH="$(CURDIR)/$(BIN):$$PATH" bash demo/run.sh

test: $(DEV)
	$(BIN)/python -m pytest -q

bench: $(DEV)
	$(BIN)/python bench/bench.py

lint: $(DEV)
	$(BIN)/ruff check . && $(BIN)/ruff format --check . && $(BIN)/mypy

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis
