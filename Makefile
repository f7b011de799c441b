# fleetfuel: two commands on a fresh machine with Python 3.12+ and make.
#   make demo   builds the venv, migrates SQLite, seeds the demo fleet and serves it
#   make test   builds the venv with test extras and runs the suite

PYTHON ?= $(shell command -v python3.12 2>/dev/null || (command -v pyenv >/dev/null 2>&1 && pyenv which python3.12 2>/dev/null) || echo python3)
VENV := .venv
BIN := $(VENV)/bin
PY := $(BIN)/python
STAMP := $(VENV)/.installed
HOST ?= 127.0.0.1
PORT ?= 8000
# Links in the demo's emails point at the address it serves (override: make demo SITE_URL=...).
SITE_URL ?= http://$(HOST):$(PORT)
DEMO_ENV := DEBUG=true SITE_URL=$(SITE_URL)

.PHONY: demo test lint format migrations-check check-deploy benchmark load clean venv lock

# The venv installs the lock (requirements/test.txt, every file checked against its hash),
# then fleetfuel itself without dependencies; it is redone when the lock or pyproject changes.
$(STAMP): requirements/test.txt pyproject.toml
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 12) else "fleetfuel needs Python 3.12 or newer (found " + sys.version.split()[0] + ")")'
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --require-hashes -r requirements/test.txt
	$(BIN)/pip install --quiet --no-deps -e .
	@touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(DEMO_ENV) $(PY) manage.py migrate --no-input
	$(DEMO_ENV) $(PY) manage.py seed_demo
	$(DEMO_ENV) $(PY) manage.py project_due --quiet
	@echo ""
	@echo "  fleetfuel demo: http://$(HOST):$(PORT)/"
	@echo "    fleet manager  manager  / fleetfuel-demo"
	@echo "    mechanic       mechanic / fleetfuel-demo"
	@echo "    auditor        auditor  / fleetfuel-demo"
	@echo ""
	$(DEMO_ENV) $(PY) manage.py runserver $(HOST):$(PORT)

test: $(STAMP)
	FLEETFUEL_TESTING=true $(BIN)/pytest $(PYTEST_ARGS)

lint: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .
	$(BIN)/mypy

format: $(STAMP)
	$(BIN)/ruff check --fix .
	$(BIN)/ruff format .

migrations-check: $(STAMP)
	FLEETFUEL_TESTING=true $(PY) manage.py makemigrations --check --dry-run

check-deploy: $(STAMP)
	SECRET_KEY=$$(openssl rand -hex 32 2>/dev/null || echo x-not-secret-but-long-enough-for-the-deploy-check-0123456789) \
	LEDGER_SIGNING_KEY=$$(openssl rand -hex 32 2>/dev/null || echo y-not-secret-but-long-enough-for-the-deploy-check-0123456789) \
	ALLOWED_HOSTS=fleetfuel.example.com EMAIL_HOST=smtp.example.com $(PY) manage.py check --deploy --fail-level WARNING

# Scale (README, "Scale"): on PostgreSQL (DATABASE_URL, else the local fleetfuel database),
# production-like settings, throwaway keys unless given. BENCH_ARGS / LOAD_ARGS add options
# (e.g. BENCH_ARGS="--units 1000 --runs 5"); the JSON lands in var/. `make load` drives the
# fleet `make benchmark` left behind; `manage.py synth_fleet --drop` removes it.
SCALE_ENV := DATABASE_URL=$${DATABASE_URL:-postgres://postgres@127.0.0.1:5432/fleetfuel} \
	SECRET_KEY=$${SECRET_KEY:-$$(openssl rand -hex 32)} \
	LEDGER_SIGNING_KEY=$${LEDGER_SIGNING_KEY:-$$(openssl rand -hex 32)}

benchmark: $(STAMP)
	$(SCALE_ENV) $(PY) manage.py migrate --no-input -v0
	$(SCALE_ENV) $(PY) manage.py collectstatic --no-input -v0
	$(SCALE_ENV) $(PY) manage.py benchmark --json var/benchmark.json $(BENCH_ARGS)

load: $(STAMP)
	$(SCALE_ENV) $(PY) manage.py collectstatic --no-input -v0
	$(SCALE_ENV) $(PY) manage.py load_run --json var/load.json $(LOAD_ARGS)

# Regenerate requirements/*.txt from pyproject.toml with uv (LOCK_ARGS=--upgrade for newer releases).
lock: | $(STAMP)
	LOCK_ARGS="$(LOCK_ARGS)" sh requirements/lock.sh

clean:
	rm -rf $(VENV) var/*.sqlite3*
