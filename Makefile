# cupcal: every set-up step lives here, so a fresh machine needs only `make run` or `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test test-browser browser bench demo clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

# the notebook: migrations, the demo lab if the database is empty, http://127.0.0.1:$(PORT)
PORT ?= 5000
run: $(STAMP)
	$(BIN)/cupcal serve --port $(PORT)

test: $(STAMP)
	$(BIN)/python -m pytest -n 2 -q

# Debian's headless Chromium and its driver, for the browser tests (run as root; .ci/run does this too)
browser:
	@if [ -x /usr/bin/chromium ] && [ -x /usr/bin/chromedriver ]; then echo "chromium and chromedriver are installed"; \
	else apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y chromium chromium-driver; fi

# only the real-browser tests, failing (not skipping) when the browser is missing
test-browser: $(STAMP)
	CUPCAL_REQUIRE_BROWSER=1 $(BIN)/python -m pytest -q -p no:xdist tests/webapp/test_browser.py

bench: $(STAMP)
	$(BIN)/python -m pytest -q -s tests/benchmarks -p no:cacheprovider -o addopts=""

clean:
	rm -rf $(VENV) build *.egg-info
