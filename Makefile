# Every target bootstraps its own environment: only Python (>= 3.10) and make are needed.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
# What `make demo` needs is regvet alone (the static check imports no numpy, pandas or statsmodels);
# `make demo-run` adds the statistics stack that runs the demo's fits.
DEMO_STAMP := $(VENV)/.installed-demo
RUN_STAMP  := $(VENV)/.installed-run

.PHONY: demo demo-run test test-fast check bench fuzz clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[stats,dev]'
	touch $(STAMP)

$(DEMO_STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet -e .
	touch $(DEMO_STAMP)

$(RUN_STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet -e '.[stats]'
	touch $(RUN_STAMP)

# Scan the bundled demo analysis. regvet exits 1 when it reports findings, which is the point here.
demo: $(DEMO_STAMP)
	$(BIN)/regvet check fixtures/demo; status=$$?; test $$status -le 1

# The runtime demo: EXECUTES the demo's scripts and notebook and attaches the real statistics.
demo-run: $(RUN_STAMP)
	$(BIN)/regvet run fixtures/demo; status=$$?; test $$status -le 1

test: $(STAMP)
	$(BIN)/python -m pytest -q

# Everything but the slow groups (see SLOW_GROUPS in tests/conftest.py): under 30 s on two cores.
test-fast: $(STAMP)
	$(BIN)/python -m pytest -q -m "not (runtime or server or editors or scan or precommit or browser)"

# The linter and the type checker, configured in pyproject.toml ([tool.ruff], [tool.mypy]).
check: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .
	$(BIN)/mypy

# The long fuzzing campaign (tests/test_fuzz.py with REGVET_FUZZ=long): at least 10,000 generated and mutated inputs.
fuzz: $(STAMP)
	REGVET_FUZZ=long $(BIN)/python -m pytest -q -p no:cacheprovider tests/test_fuzz.py

bench: $(STAMP)
	$(BIN)/python bench/run.py

clean:
	rm -rf $(VENV) build src/*.egg-info .pytest_cache
