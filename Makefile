# The two set-up commands of README.md: `make demo` and `make test`.
# `make check` is the quick loop while working: lint and the fast tests, no re-install.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
SOURCES := pyproject.toml $(shell find cardgen templates sample_routes -type f -not -name '*.pyc' 2>/dev/null)
CODE   := cardgen tests bench scripts sample_routes

.PHONY: demo test check system lint bench docs clean

system:
	@scripts/system-packages.sh

# A regular (not editable) install: `make test` checks the installed package.
$(VENV)/installed: $(SOURCES)
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	rm -rf build
	$(BIN)/python -m pip install --quiet ".[test]"
	touch $@

demo: system $(VENV)/installed
	$(BIN)/cardgen build

# Against the source tree, no re-install (worktrees may share one .venv).
lint:
	test -x $(BIN)/python || $(MAKE) $(VENV)/installed
	$(BIN)/ruff check $(CODE) templates
	$(BIN)/ruff format --check $(CODE)
	$(BIN)/lint-imports
	$(BIN)/mypy cardgen

# Everything, as CI runs it, with the coverage figure of the installed package: two
# pytest-xdist workers, each test module on one worker (its module fixtures made once);
# the workers share one demo build (tests/conftest.py).
test: system $(VENV)/installed
	$(MAKE) lint
	$(BIN)/pytest -q -n 2 --dist loadscope --cov --cov-report=term

# Lint and the tests not marked slow, against the source tree (no re-install).
check: lint
	PYTHONPATH=$(CURDIR) $(BIN)/python -m pytest -q -m "not slow" -p no:cacheprovider

bench: $(VENV)/installed
	$(BIN)/python bench/bench_solver.py
	$(BIN)/python bench/bench_route.py
	$(BIN)/python bench/bench_plan.py
	$(BIN)/python bench/bench_ride.py
	$(BIN)/python bench/bench_build.py
	$(BIN)/python bench/bench_event.py
	$(BIN)/python bench/bench_publish.py
	$(BIN)/python bench/bench_profile.py

# The pictures in docs/, drawn from the demo by scripts/make_docs.py.
docs: system $(VENV)/installed
	$(BIN)/python scripts/make_docs.py

clean:
	rm -rf $(VENV) build *.egg-info site
