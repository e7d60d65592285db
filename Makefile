# Everything a fresh machine needs: `make demo` and `make test` create .venv and install.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
export MPLBACKEND := Agg
export MPLCONFIGDIR := $(CURDIR)/.cache/matplotlib

.PHONY: demo test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/noisebudget demo -o demo-output --force

test: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check .

bench: $(STAMP)
	for b in tests/benchmarks/bench_*.py; do $(BIN)/python $$b; done

clean:
	rm -rf $(VENV) .cache demo-output
