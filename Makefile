# Two commands on a fresh machine: `make run` (the workbench on the invented assay calibration, where lack of
# fit, stated uncertainties, detection limits and read-back all show; DATA=... opens another file)
# and `make test`. Both create or refresh .venv from pyproject.toml first.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed
DATA   ?= sample_sets/assay_calibration.csv

.PHONY: run test bench sample-sets clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --disable-pip-version-check -e ".[test]"
	touch $(STAMP)

run: $(STAMP)
	$(VENV)/bin/curvewright open $(DATA)

test: $(STAMP)
	$(PY) -m pytest -q

bench: $(STAMP)
	$(PY) bench/bench_sweep.py
	$(PY) bench/bench_invert.py

sample-sets: $(STAMP)
	$(PY) sample_sets/generate.py

clean:
	rm -rf $(VENV) .pytest_cache test-artifacts
