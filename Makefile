# One target per task; CI (.ci/run) calls `make test`, then `make lint`.
# The tested Pythons are 3.11 and 3.13. .venv (every target) is built with Python 3.11
# where .ci/find-python finds one, else with python3; `make test` also runs the suite in
# .venv313 when a Python 3.13 is found. Override with PYTHON=... and PYTHON313=...
# (looked up once, when first used: the $(eval) caches the answer)
PYTHON    ?= $(eval PYTHON := $(shell .ci/find-python 3.11 || echo python3))$(PYTHON)
PYTHON313 ?= $(eval PYTHON313 := $(shell .ci/find-python 3.13))$(PYTHON313)
VENV      := .venv
BIN       := $(VENV)/bin
VENV313   := .venv313
DEMO      := examples/ring-classifier.json

.PHONY: run demo test test-main test-313 browser lint openapi bench clean install install-test fuzz load faults

$(BIN)/python:
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else "haarline needs Python 3.11 or newer")'
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.core: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	@touch $@

$(VENV)/.test: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	@touch $@ $(VENV)/.core

$(VENV)/.lint: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test,lint]'
	@touch $@ $(VENV)/.test $(VENV)/.core

# the optional Dask extra (make bench runs one analysis on a local Dask cluster)
$(VENV)/.dask: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[dask]'
	@touch $@ $(VENV)/.core

# the bench extra: the compiled simulator of the compiled figure (bench/compiled_peer.py), and Dask
$(VENV)/.bench: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[bench,dask]'
	@touch $@ $(VENV)/.dask $(VENV)/.core

install: $(VENV)/.core
install-test: $(VENV)/.test

# the same test environment on Python 3.13 (only built when PYTHON313 is known)
$(VENV313)/bin/python:
	@[ -n "$(PYTHON313)" ] || { echo "no Python 3.13 found (.ci/find-python 3.13); set PYTHON313=..." >&2; exit 1; }
	$(PYTHON313) -m venv $(VENV313)
	$(VENV313)/bin/python -m pip install --quiet --upgrade pip

$(VENV313)/.test: pyproject.toml | $(VENV313)/bin/python
	$(VENV313)/bin/python -m pip install --quiet -e '.[test]'
	@touch $@

## run: start the REST service on 127.0.0.1:8000 (development mode: loopback, no keys)
run: $(VENV)/.core
	$(BIN)/haarline serve --dev --data-dir data

## demo: analyze the bundled demo circuit on the command line and print its summary
demo: $(VENV)/.core
	$(BIN)/haarline analyze $(DEMO) --metrics expressibility,entanglement,trainability,capacity

## test: the whole suite on Python 3.11 (.venv), then on 3.13 (.venv313) if one is found
## (what CI runs); installs Chromium for the browser test where it can
test: test-main test-313

test-main: $(VENV)/.test browser
	@$(BIN)/python -c 'import sys; print("suite on Python", sys.version.split()[0], "(.venv)")'
	$(BIN)/python -m pytest -q

# the whole suite again, slow tests included (they take seconds)
test-313: browser
	@[ -n "$(PYTHON313)" ] || echo "no Python 3.13 found (.ci/find-python 3.13): the suite ran in $(VENV) only"
	@[ -z "$(PYTHON313)" ] || $(MAKE) --no-print-directory $(VENV313)/.test
	@[ -z "$(PYTHON313)" ] || $(VENV313)/bin/python -c \
	  'import sys; print("suite on Python", sys.version.split()[0], "($(VENV313))")'
	[ -z "$(PYTHON313)" ] || $(VENV313)/bin/python -m pytest -q

browser:
	@command -v chromium >/dev/null 2>&1 || { [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1 \
	  && { DEBIAN_FRONTEND=noninteractive apt-get install -y -q chromium >/dev/null 2>&1 \
	       || { apt-get update -q >/dev/null 2>&1 && DEBIAN_FRONTEND=noninteractive apt-get install -y -q chromium >/dev/null 2>&1; }; } \
	  && echo "installed Debian chromium for the browser test"; } \
	  || echo "Chromium is not available: the browser test will be skipped"

## fuzz: schemathesis on every operation of the OpenAPI document, large budget (~10 min)
fuzz: $(VENV)/.test
	HAARLINE_FUZZ_EXAMPLES=$${FUZZ_EXAMPLES:-100} HAARLINE_FUZZ_COVERAGE=1 \
	HAARLINE_FUZZ_STATS=$${TMPDIR:-/tmp}/haarline-fuzz.json $(BIN)/python -m pytest -q tests/test_fuzz.py
	@cat $${TMPDIR:-/tmp}/haarline-fuzz.json

## load: 20 concurrent clients submit 400 small jobs to a loopback server (a few minutes)
load: $(VENV)/.test
	$(BIN)/python tests/load.py --clients 20 --jobs 400

## faults: SIGKILL the server 10 times mid-job and restart; zero lost, identical results
faults: $(VENV)/.test
	$(BIN)/python tests/faults.py --cycles 10

## lint: style, docstrings, types and the Dockerfile (CI runs it after the tests)
lint: $(VENV)/.lint typecheck-tree
	$(BIN)/ruff check analysis service tests bench
	$(BIN)/ruff format --check analysis service tests bench
	MYPYPATH=$(TYPECHECK) $(BIN)/mypy -p haarline
	MYPYPATH=$(TYPECHECK) $(BIN)/mypy bench
	$(BIN)/hadolint Dockerfile

# mypy finds modules by folder name, and the folders analysis/ and service/ install as
# haarline and haarline.service: a tree of links under build/ gives it that layout
TYPECHECK := build/typecheck
.PHONY: typecheck-tree
typecheck-tree:
	@rm -rf $(TYPECHECK) && mkdir -p $(TYPECHECK)/haarline
	@for entry in analysis/*; do ln -s ../../../$$entry $(TYPECHECK)/haarline/; done
	@ln -s ../../../service $(TYPECHECK)/haarline/service

## openapi: re-export openapi-notes/openapi.json from the app
openapi: $(VENV)/.core
	$(BIN)/python -m haarline.service.api.openapi_export

clean:
	rm -rf $(VENV) $(VENV313) .pytest_cache .hypothesis *.egg-info build dist

## bench: the benchmark suite (5-8 minutes); prints a table and writes bench/results.json
## (installs the bench extra: the compiled simulator of the compiled figure, and Dask)
bench: $(VENV)/.bench
	$(BIN)/python bench/run.py --out bench/results.json

.PHONY: bench-smoke
## bench-smoke: the same script at tiny sizes (seconds; the test suite runs it too; the
## compiled figure runs only where the bench extra is installed, and says so otherwise)
bench-smoke: $(VENV)/.dask
	$(BIN)/python bench/run.py --smoke --out bench/smoke.json
