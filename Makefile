# Rimewatch: `make run` serves the demo fleet on SQLite; `make test` runs every check.
SHELL := /bin/bash
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed
# The development server's port: `make run PORT=8001` when 8000 is taken.
PORT ?= 8000

.PHONY: run test install lint ensure-browser pytest-sqlite pytest-postgres bench clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[dev]'
	touch $(STAMP)

install: $(STAMP)

# Development settings (DEBUG on, a dev-only key); production uses config.settings.
run: export DJANGO_SETTINGS_MODULE = config.settings_dev
run: install
	mkdir -p var
	$(PY) manage.py migrate --no-input
	$(PY) manage.py demo_fleet
	$(PY) manage.py rescore
	@echo "Rimewatch on http://127.0.0.1:$(PORT)/ (admin at /admin/, API at /api/v1/, docs at /api/docs/)"
	bash scripts/with-worker.sh $(PY) manage.py runserver 127.0.0.1:$(PORT)

lint: install
	$(VENV)/bin/ruff check .
	$(VENV)/bin/ruff format --check .
	$(VENV)/bin/lint-imports
	$(VENV)/bin/mypy --strict diagnostics/core
	$(VENV)/bin/mypy
	DJANGO_SETTINGS_MODULE=config.settings_test $(PY) manage.py makemigrations --check --dry-run
	DJANGO_SETTINGS_MODULE=config.settings_test $(PY) manage.py spectacular --validate --fail-on-warn --file /dev/null
	# Django's deployment checklist on the production settings (a throwaway key, no database).
	env -u DATABASE_URL DJANGO_SETTINGS_MODULE=config.settings DEBUG=0 \
		SECRET_KEY="$$($(PY) -c 'import secrets; print(secrets.token_urlsafe(50))')" \
		ALLOWED_HOSTS=rimewatch.example.com EMAIL_HOST=smtp.example.com \
		RIMEWATCH_VAR_DIR="$$(mktemp -d)" $(PY) manage.py check --deploy --fail-level WARNING

# Debian's chromium for tests/browser (installed when missing and root; never a download).
ensure-browser:
	bash scripts/ensure-browser.sh

pytest-sqlite: install ensure-browser
	env -u DATABASE_URL $(PY) -m pytest -q

pytest-postgres: install ensure-browser
	bash scripts/with-postgres.sh bash scripts/with-redis.sh bash scripts/with-s3.sh $(PY) -m pytest -q

test: lint pytest-sqlite pytest-postgres

bench: install
	for b in bench/*.py; do echo "== $$b"; $(PY) $$b || exit 1; done

clean:
	rm -rf $(VENV) var/cache
