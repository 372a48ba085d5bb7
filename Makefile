# Two set-up commands for a fresh machine: `make demo` and `make test`.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test test-all bench lint clean screenshots

$(BIN)/python:
	$(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e ".[test,lint,netcdf]"
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/eftsieve demo -o demo_output

# the suite in parallel, one worker per core up to four (pytest-xdist; about 6 min on 2 cores)
test: $(STAMP)
	$(BIN)/python -m pytest -n auto --maxprocesses=4

test-all: $(STAMP)
	$(BIN)/python -m pytest -n auto --maxprocesses=4 -m "slow or not slow"

# report.html of three invented verdict cases, screenshotted in headless Chromium
screenshots: $(STAMP)
	EFTSIEVE_SCREENSHOT_DIR=$(CURDIR)/docs/screenshots $(BIN)/python -m pytest -q tests/report/test_screenshots.py

bench: $(STAMP)
	$(BIN)/python benchmarks/run_all.py

lint: $(STAMP)
	$(BIN)/ruff check src tests benchmarks
	$(BIN)/mypy

clean:
	rm -rf $(VENV) demo_output
