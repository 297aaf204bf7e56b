# Two entry points: `make demo` and `make test`. Both need only python3 and make.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: demo test bench samples clean

$(VENV)/bin/python:
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(VENV)/bin/python
	$(PY) -m pip install --quiet -e '.[test,postgres]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/deembed demo --out out/demo

test: $(STAMP)
	$(PY) -m pytest

bench: $(STAMP)
	$(PY) benchmarks/run.py
	$(PY) benchmarks/along.py
	$(PY) benchmarks/uncertainty.py

samples: $(STAMP)
	$(PY) sample_sweeps/generate.py

clean:
	rm -rf $(VENV) out build *.egg-info
