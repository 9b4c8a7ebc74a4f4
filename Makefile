# The two commands of the README's quick start are `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test lint typecheck pytest bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test]'
	touch $(STAMP)

## Set up, migrate var/planner.sqlite3, load the demo scenario (once) and serve on :8000.
run: $(STAMP)
	$(BIN)/python -m server migrate
	$(BIN)/python -m server demo --if-empty
	$(BIN)/python -m server serve --host 127.0.0.1 --port 8000

## Set up and run everything CI runs: ruff, mypy, the whole pytest suite (browser tests included).
test: $(STAMP)
	scripts/ensure-browser
	$(BIN)/ruff check server tests migrations bench
	$(BIN)/ruff format --check server tests migrations bench
	$(BIN)/mypy
	scripts/run-tests

lint: $(STAMP)
	$(BIN)/ruff check server tests migrations bench

typecheck: $(STAMP)
	$(BIN)/mypy

bench: $(STAMP)
	$(BIN)/python -m bench

clean:
	rm -rf $(VENV) .pytest_cache .mypy_cache .ruff_cache
