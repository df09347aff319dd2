# Two entry points for a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
HOST ?= 127.0.0.1:8000
# The suite runs on every core; pass PYTEST_ARGS= to run it in one process.
PYTEST_ARGS ?= -n auto

.PHONY: demo test typecheck install install-test bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet -e '.[test]'
	touch $@ $(VENV)/.installed

install: $(VENV)/.installed

install-test: $(VENV)/.installed-test

demo: install
	$(BIN)/python manage.py migrate --no-input
	$(BIN)/python manage.py seed_campus
	$(BIN)/python manage.py runserver $(HOST)

test: install-test
	$(BIN)/python -m pytest $(PYTEST_ARGS)

typecheck: install-test
	$(BIN)/python -m mypy hazards

bench: install-test
	$(BIN)/python bench/limits.py
	$(BIN)/python bench/assess.py
	$(BIN)/python bench/api.py

clean:
	rm -rf $(VENV) db.sqlite3
