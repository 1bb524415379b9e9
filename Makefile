# Two entry points for a fresh machine: `make run` and `make test`.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test bench clean

$(BIN)/python:
	$(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): $(BIN)/python requirements.txt requirements-dev.txt pyproject.toml
	$(BIN)/python -m pip install --quiet -r requirements-dev.txt
	$(BIN)/python -m pip install --quiet --no-deps -e .
	touch $(STAMP)

run: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(BIN)/python -m streamlit run app.py --server.headless true --browser.gatherUsageStats false

test: $(STAMP)
	$(BIN)/python -m pytest $(PYTEST_ARGS)

bench: $(STAMP)
	$(BIN)/python -m benchmarks

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
