# Two commands do all set-up on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed-$(shell cat requirements.txt requirements-dev.txt | sha256sum | cut -c1-12)
HOST ?= 127.0.0.1
PORT ?= 8000

.PHONY: demo test test-js fuzz bench lint format check-system venv clean

$(STAMP): requirements.txt requirements-dev.txt
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info[:2] >= (3, 11) else 1)' || \
		{ echo "Python 3.11 or newer is needed (found: $$($(PYTHON) --version 2>&1))."; exit 1; }
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV) || \
		{ echo "Could not create a virtual environment: install python3-venv."; exit 1; }
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -r requirements-dev.txt
	@rm -f $(VENV)/.installed-*
	@touch $@

venv: $(STAMP) check-system

# WeasyPrint needs Pango from the system; say so plainly instead of failing deep in a test.
check-system: $(STAMP)
	@$(BIN)/python -c 'import weasyprint' 2>/dev/null || { \
		echo "WeasyPrint cannot load Pango. On Debian/Ubuntu install the system packages:"; \
		echo "  apt-get install libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz0b fonts-dejavu-core"; \
		exit 1; }

demo: venv
	$(BIN)/python manage.py migrate --noinput
	$(BIN)/python manage.py demo_data
	@echo ""
	@echo "  Heatmark demo on http://$(HOST):$(PORT)/  (sign in as demo / demo-thermal-2026)"
	@echo ""
	$(BIN)/python manage.py runserver $(HOST):$(PORT)

# Test-only tools from npm (axe-core, the Nu HTML checker): reinstalled when the lock changes.
NODE_STAMP := node_modules/.installed-$(shell sha256sum package-lock.json | cut -c1-12)

$(NODE_STAMP): package.json package-lock.json
	@command -v npm >/dev/null || { \
		echo "npm is needed for the accessibility and HTML checks: install Node.js 20 (apt-get install npm)."; \
		exit 1; }
	npm ci --no-audit --no-fund --ignore-scripts
	@rm -f node_modules/.installed-*
	@touch $@

.PHONY: node-tools
node-tools: $(NODE_STAMP)

PYTEST := $(BIN)/python -m pytest -c tests/pytest.ini --rootdir=. -p no:cacheprovider

# The deterministic "ci" Hypothesis profile runs here; `make fuzz` runs the heavy one.
test: venv node-tools test-js
	$(PYTEST) tests survey/thermal --doctest-modules --durations=25 $(PYTEST_ARGS)

# The workspace's pure JavaScript (coordinates, readouts, hit tests) with node's own runner.
test-js:
	@command -v node >/dev/null || { echo "node is needed for the JavaScript tests"; exit 1; }
	node --test tests/js/

fuzz: venv
	HYPOTHESIS_PROFILE=fuzz $(PYTEST) tests -m hypothesis $(PYTEST_ARGS)

bench: venv
	$(BIN)/python -m tests.bench.run

lint: venv
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

format: venv
	$(BIN)/ruff format .
	$(BIN)/ruff check --fix .

clean:
	rm -rf $(VENV) media staticfiles db.sqlite3 bench-results.json
