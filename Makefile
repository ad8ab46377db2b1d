# tradeopt: quick start is `make demo` and `make test` on a fresh machine.
PYTHON ?= python3.11
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
LINT_STAMP := $(VENV)/.lint-installed

.PHONY: install demo test test-fast lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

$(LINT_STAMP): $(STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test,lint]'
	touch $(LINT_STAMP)

install: $(STAMP)

demo: $(STAMP)
	$(BIN)/tradeopt optimize

# The full suite on every core (pytest-xdist); each module's tests stay on one worker, so a module's
# shared fixture (e.g. a whole trade) runs once.
test: $(STAMP)
	$(BIN)/python -m pytest -n auto --dist loadscope

test-fast: $(STAMP)
	$(BIN)/python -m pytest -m "not slow" -n auto --dist loadscope

# ruff (style, imports, complexity), mypy (strict for physics and mission), import-linter (the layers)
lint: $(LINT_STAMP)
	$(BIN)/ruff check .
	$(BIN)/mypy
	$(BIN)/lint-imports

bench: $(STAMP)
	$(BIN)/python benchmarks/run_all.py

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis .mypy_cache .ruff_cache .import_linter_cache
