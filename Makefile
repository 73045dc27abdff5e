# The two commands the README shows: `make demo` and `make test`.
# Both create .venv from python3 if it is absent and install what they need.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
TEST_STAMP := $(VENV)/.installed-test

.PHONY: demo test bench bench-tui mutation clean

$(BIN)/python:
	$(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e .
	$(BIN)/python -m screener.warmup
	touch $@

$(TEST_STAMP): $(STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

demo: $(STAMP)
	$(BIN)/python -m screener.demo

test: $(TEST_STAMP)
	$(BIN)/python -m pytest

bench: $(TEST_STAMP)
	$(BIN)/python -m screener.bench

bench-tui: $(TEST_STAMP)
	$(BIN)/python -m screener.bench_tui

# Mutation testing of the core modules (slow: about an hour on 2 cores; not part of `make test`).
# Results: .venv/bin/mutmut results; per-module figures in DEVELOPERS.md.
mutation: $(TEST_STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test,mutation]'
	$(BIN)/mutmut run --max-children 2
	$(BIN)/python .ci/mutation_report.py

clean:
	rm -rf $(VENV) .pytest_cache demo-out mutants
