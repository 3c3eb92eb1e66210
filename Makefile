# The two set-up commands of README.md: `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
SOURCES := pyproject.toml $(shell find cardgen templates sample_routes -type f -not -name '*.pyc' 2>/dev/null)

.PHONY: demo test system lint bench clean

system:
	@scripts/system-packages.sh

# A regular (not editable) install: the tests check the installed package.
$(VENV)/installed: $(SOURCES)
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet ".[test]"
	touch $@

demo: system $(VENV)/installed
	$(BIN)/cardgen build

lint: $(VENV)/installed
	$(BIN)/ruff check cardgen tests bench scripts sample_routes templates

test: system $(VENV)/installed lint
	$(BIN)/pytest -q

bench: $(VENV)/installed
	$(BIN)/python bench/bench_solver.py
	$(BIN)/python bench/bench_route.py
	$(BIN)/python bench/bench_plan.py
	$(BIN)/python bench/bench_build.py

clean:
	rm -rf $(VENV) build *.egg-info site
