# Two commands from a fresh clone: `make demo` and `make test`.
# Both create .venv and install the project (with its test tools) on first use.

PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test test-fast lint bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/sdmnet demo

test: $(STAMP)
	$(BIN)/ruff check sdmnet tests bench
	$(BIN)/python -m pytest -q

test-fast: $(STAMP)
	$(BIN)/python -m pytest -q -m "not slow"

lint: $(STAMP)
	$(BIN)/ruff check sdmnet tests bench

bench: $(STAMP)
	@for b in bench/bench_*.py; do echo "== $$b"; $(BIN)/python $$b || exit 1; done

clean:
	rm -rf $(VENV) build *.egg-info
