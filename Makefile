# Two entry points for a fresh machine: `make demo` and `make test`; `make serve` runs the
# register under gunicorn (see the README, "Running in production").
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
HOST ?= 127.0.0.1:8000
# make serve: gunicorn's address, its worker count (from the environment, as platforms set it)
# and how long a request may take (a whole site's audit report: about 4 s for 500 lasers when the
# machine is quiet, several times that when it is busy, more for a larger site).
BIND ?= 127.0.0.1:8000
WEB_CONCURRENCY ?= 2
GUNICORN_TIMEOUT ?= 120
# The suite runs on every core; pass PYTEST_ARGS= to run it in one process.
PYTEST_ARGS ?= -n auto

.PHONY: demo serve test typecheck install install-test system-packages bench clean

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

# Against the configured database (DATABASE_URL) and cache, in the mode BEAMKEEPER_ENV says:
# migrations, the cache table (a no-op with CACHE_URL set) and the static files first.
serve: install
	$(BIN)/python manage.py migrate --no-input
	$(BIN)/python manage.py createcachetable
	$(BIN)/python manage.py collectstatic --no-input --verbosity 0
	$(BIN)/gunicorn registry.wsgi --bind $(BIND) --workers $(WEB_CONCURRENCY) --timeout $(GUNICORN_TIMEOUT)

# Chromium, HarfBuzz's subsetter and poppler: installed when run as root with apt,
# otherwise named and the run stops at once (scripts/system-packages).
system-packages:
	scripts/system-packages

test: system-packages install-test
	$(BIN)/python -m pytest $(PYTEST_ARGS)

typecheck: install-test
	$(BIN)/python -m mypy hazards

bench: install-test
	$(BIN)/python bench/limits.py
	$(BIN)/python bench/assess.py
	$(BIN)/python bench/api.py

clean:
	rm -rf $(VENV) db.sqlite3
