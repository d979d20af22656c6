# ohmtally: every target builds its own virtual environment first (.venv).
PY ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed-stamp

.PHONY: setup demo test lint typecheck bench clean

$(STAMP): pyproject.toml
	$(PY) -m venv $(VENV)
	$(BIN)/python -m pip install -q --upgrade pip
	$(BIN)/python -m pip install -q -e '.[dev]'
	touch $(STAMP)

setup: $(STAMP)

## The main job on the embedded default (SQLite): the demo site, verified.
demo: $(STAMP)
	$(BIN)/ohmtally demo

## Lint, type-check (strict), run the tests.
test: $(STAMP)
	$(BIN)/ruff check engine adapters api tests
	$(BIN)/mypy
	$(BIN)/pytest -q

lint: $(STAMP)
	$(BIN)/ruff check engine adapters api tests

typecheck: $(STAMP)
	$(BIN)/mypy

## The API benchmark drives load with wrk (Debian's package) when it can install it; else Python.
bench: $(STAMP)
	@command -v wrk >/dev/null || { command -v apt-get >/dev/null && [ "$$(id -u)" = 0 ] && \
	  { apt-get install -y -q wrk || { apt-get update -q && apt-get install -y -q wrk; }; } >/dev/null 2>&1; } || \
	  echo "bench: wrk not installed; the Python load generator is used"
	$(BIN)/python -m tests.bench

clean:
	rm -rf $(VENV) .pytest_cache .ruff_cache .mypy_cache .hypothesis instance
