# Two entry points: `make run` (set up, build the sample project, open the workbench) and
# `make test` (set up with test extras, run every test). Both work on a fresh Linux machine.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin

.PHONY: run test sample bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@ $(VENV)/.installed

sample_project/clipscribe-project.json: | $(VENV)/.installed
	$(BIN)/clipscribe sample sample_project

sample: sample_project/clipscribe-project.json

run: $(VENV)/.installed sample_project/clipscribe-project.json
	$(BIN)/clipscribe open sample_project

test: $(VENV)/.installed-test
	QT_QPA_PLATFORM=offscreen $(BIN)/python -m pytest -q

bench: $(VENV)/.installed-test
	@for b in benchmarks/bench_*.py; do echo "== $$b"; $(BIN)/python $$b; done

clean:
	rm -rf $(VENV) sample_project .pytest_cache
