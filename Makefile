# One command per job: `make serve` installs and starts the service, `make test` installs and
# runs everything CI runs. Both create or update the virtual environment in .venv first.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
HOST   ?= 127.0.0.1
PORT   ?= 8000
STAMP  := $(VENV)/.stamp-install

.PHONY: install serve test lint spec spec-check clean load bench

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

install: $(STAMP)

serve: $(STAMP)
	SAMPLEWRIGHT_HOST=$(HOST) SAMPLEWRIGHT_PORT=$(PORT) $(BIN)/gunicorn --config deploy/gunicorn.conf.py samplewright.wsgi:app

lint: $(STAMP)
	$(BIN)/ruff check service tests examples

spec: $(STAMP)
	$(BIN)/samplewright spec --write

spec-check: $(STAMP)
	$(BIN)/samplewright spec --check

test: $(STAMP) lint spec-check
	$(BIN)/python -m pytest

# Load and fault runs against a gunicorn on 127.0.0.1 started from deploy/gunicorn.conf.py
# (tests/load/run.py; bounded, loopback only; not part of `make test`). About 2 minutes with
# the defaults; `make load LOAD_DURATION=10` for a quick look.
LOAD_DURATION    ?= 60
LOAD_CONNECTIONS ?= 32
load: $(STAMP)
	$(BIN)/python tests/load/run.py --duration $(LOAD_DURATION) --connections $(LOAD_CONNECTIONS) --json $(VENV)/load-report.json

# Side-by-side ratios (not part of make test): prints a table, writes bench-results/bench.json.
bench: $(STAMP)
	$(BIN)/python tests/benchmarks/run.py

clean:
	rm -rf $(VENV) build dist service/*.egg-info .pytest_cache .hypothesis .ruff_cache
