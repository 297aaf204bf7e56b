# Two entry points: `make demo` and `make test`. Both need only python3 and make.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed
RUNTIME := $(VENV)/.installed-runtime

.PHONY: demo test bench samples notebook clean

$(VENV)/bin/python:
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

# The demo needs only the runtime dependencies; the test extras (pytest, hypothesis, notebook kernel,
# import-linter, PostgreSQL driver) are installed by `make test` alone.
$(RUNTIME): pyproject.toml | $(VENV)/bin/python
	$(PY) -m pip install --quiet -e .
	touch $(RUNTIME)

$(STAMP): pyproject.toml | $(VENV)/bin/python
	$(PY) -m pip install --quiet -e '.[test,postgres]'
	touch $(STAMP) $(RUNTIME)

demo: $(RUNTIME)
	$(VENV)/bin/deembed demo --out out/demo

test: $(STAMP)
	$(PY) -m pytest

# Each benchmark exits 1 when a target is missed; the leading '-' lets the others run all the same.
bench: $(STAMP)
	-$(PY) benchmarks/run.py
	-$(PY) benchmarks/along.py
	-$(PY) benchmarks/site_workers.py
	-$(PY) benchmarks/uncertainty.py

notebook: $(STAMP)
	$(PY) notebooks/execute.py

samples: $(RUNTIME)
	$(PY) sample_sweeps/generate.py

clean:
	rm -rf $(VENV) out build *.egg-info
