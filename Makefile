# Each target works on a fresh machine with only Python 3: it creates .venv if missing,
# installs fluxlab into it, then runs.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.fluxlab-installed

.PHONY: demo test test-slow test-all clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -e '.[test,fast]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/fluxlab evaluate geometries/demo_fan_drive.toml --out out/demo

test: $(STAMP)
	$(BIN)/python -m pytest -q

test-slow: $(STAMP)
	$(BIN)/python -m pytest -q -m slow

test-all: $(STAMP)
	$(BIN)/python -m pytest -q -m ''

clean:
	rm -rf out .pytest_cache
