# cupcal: every set-up step lives here, so a fresh machine needs only `make run` or `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test bench demo clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

# the notebook: migrations, the demo lab if the database is empty, http://127.0.0.1:5000
run: $(STAMP)
	$(BIN)/cupcal serve

test: $(STAMP)
	$(BIN)/python -m pytest -n 2 -q

bench: $(STAMP)
	$(BIN)/python -m pytest -q -s tests/benchmarks -p no:cacheprovider -o addopts=""

clean:
	rm -rf $(VENV) build *.egg-info
