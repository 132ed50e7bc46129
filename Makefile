# Haulcast: `make run` starts the dashboard with the sample data, `make test` runs every test.
SHELL := /bin/bash
PYTHON ?= $(shell command -v python3.11 || command -v python3)
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
HOST ?= 127.0.0.1
PORT ?= 8050
DATA_DIR ?= $(HOME)/.haulcast

.PHONY: run test lint check-samples samples bench bench-batch chromium venv clean

$(BIN)/python:
	@if ! $(PYTHON) -m venv --help >/dev/null 2>&1 || ! $(PYTHON) -c 'import ensurepip' >/dev/null 2>&1; then \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null; then \
	    apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y python3-venv; \
	  else echo "Python's venv module is missing: install python3-venv (sudo apt-get install python3-venv)"; exit 1; fi; \
	fi
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test,cluster]'
	touch $(STAMP)

venv: $(STAMP)

chromium:
	@if ! command -v chromium >/dev/null; then \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null; then \
	    apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y chromium chromium-driver; \
	  else echo "Browser tests need Debian's chromium: sudo apt-get install -y chromium chromium-driver"; exit 1; fi; \
	fi

run: $(STAMP)
	$(BIN)/python -m app --host $(HOST) --port $(PORT) --data-dir $(DATA_DIR)

test: $(STAMP) chromium
	$(BIN)/python -m ruff check forecasting_core app tests benchmarks sample_data
	$(BIN)/python -m pytest

lint: $(STAMP)
	$(BIN)/python -m ruff check forecasting_core app tests benchmarks sample_data

check-samples: $(STAMP)
	@for f in sample_data/*.csv; do echo "== $$f"; $(BIN)/python -m forecasting_core check $$f; done

samples: $(STAMP)
	$(BIN)/python sample_data/make_samples.py

bench: $(STAMP)
	$(BIN)/python benchmarks/compare_speed.py

bench-batch: $(STAMP)
	$(BIN)/python benchmarks/batch_speed.py

clean:
	rm -rf $(VENV) .pytest_cache .ruff_cache .hypothesis test-artifacts
