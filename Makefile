# The two set-up commands of the README: `make demo` and `make test`.
# Each creates .venv when it is missing and installs the project into it.

PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
EXTRAS ?= postgres,parquet,test
DEMO_DB ?= sqlite:///.lockkeeper/demo.db

.PHONY: test demo bench lint install clean

$(VENV)/.installed: pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[$(EXTRAS)]'
	touch $@

install: $(VENV)/.installed

# The suite runs on every core (pytest-xdist); each test has its own catalogue, so they do not
# meet. Benchmarks (tests/bench) are run one at a time by `make bench`.
test: $(VENV)/.installed
	$(PY) -m pytest -n auto $(PYTEST_ARGS)

# Builds the demo catalogue, then serves it on http://127.0.0.1:8765/ (Ctrl-C to stop);
# `make demo SERVE=no` only builds it.
SERVE ?= yes
demo: $(VENV)/.installed
	$(VENV)/bin/lockkeeper --db $(DEMO_DB) demo
	@if [ "$(SERVE)" = yes ]; then $(VENV)/bin/lockkeeper --db $(DEMO_DB) serve; fi

# The house's rules: ruff (style, bugs, complexity), mypy (types) and the import contracts of
# pyproject.toml. Each fails on any finding.
$(VENV)/.lint-installed: $(VENV)/.installed
	$(PY) -m pip install --quiet -e '.[$(EXTRAS),lint]'
	touch $@

lint: $(VENV)/.lint-installed
	$(VENV)/bin/ruff check
	$(VENV)/bin/mypy
	$(VENV)/bin/lint-imports

bench: $(VENV)/.installed
	$(PY) -m pip install --quiet -e '.[$(EXTRAS),bench]'
	$(PY) -m pytest tests/bench -s -p no:cacheprovider $(PYTEST_ARGS)

clean:
	rm -rf $(VENV) .lockkeeper .pytest_cache .hypothesis .mypy_cache .ruff_cache
