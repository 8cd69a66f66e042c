# Two set-up commands on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP_RUN  := $(VENV)/.installed-run
STAMP_TEST := $(VENV)/.installed-test
DEMO   := examples/ravenmoor_r7_openhole.toml

.PHONY: demo demo-logs test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

# after installing, compile the kernels once with a progress message (not inside the first run)
$(STAMP_RUN): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	$(BIN)/risk warm-up
	touch $@

$(STAMP_TEST): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test,bench]"
	$(BIN)/risk warm-up
	touch $@ $(STAMP_RUN)

demo: $(STAMP_RUN)
	$(BIN)/risk run $(DEMO) --out reports/demo --force

demo-logs: $(STAMP_RUN)
	$(BIN)/risk run examples/logs/ravenmoor_r9_logs.toml --out reports/demo-logs --force

test: $(STAMP_TEST)
	$(BIN)/ruff check risk tests benchmarks examples
	$(BIN)/mypy risk
	$(BIN)/python -m pytest

lint: $(STAMP_TEST)
	$(BIN)/ruff check risk tests benchmarks examples
	$(BIN)/mypy risk

bench: $(STAMP_TEST)
	$(BIN)/python benchmarks/run.py

clean:
	rm -rf $(VENV) reports/demo .pytest_cache .mypy_cache .ruff_cache
