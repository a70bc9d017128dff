# Two commands from a fresh clone: `make demo` and `make test`.
# Both create .venv and install the project (with its test tools) on first use.

PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test test-fast lint bench bytecode clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -e '.[test]'
	touch $(STAMP)

# sdmnet's own modules compiled once, as a non-editable install does: where
# PYTHONDONTWRITEBYTECODE is set, every command would otherwise compile them again (about 0.1 s).
# Only changed sources are compiled again, so this costs next to nothing when they are current.
bytecode: $(STAMP)
	@$(BIN)/python -m compileall -q sdmnet

demo: bytecode
	$(BIN)/sdmnet demo

test: bytecode
	$(BIN)/ruff check sdmnet tests bench
	$(BIN)/python -m pytest -q

test-fast: $(STAMP)
	$(BIN)/python -m pytest -q -m "not slow"

lint: $(STAMP)
	$(BIN)/ruff check sdmnet tests bench

bench: bytecode
	@for b in bench/bench_*.py; do echo "== $$b"; $(BIN)/python $$b || exit 1; done

clean:
	rm -rf $(VENV) build *.egg-info
