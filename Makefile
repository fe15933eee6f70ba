# corepace: two commands for a newcomer, `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench sample clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e ".[test,sweep]"
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/corepace plan configs/demo.yaml --out reports/demo
	$(VENV)/bin/corepace calibrate configs/demo.yaml configs/logs/trial-chicken-roast-180.csv \
	  --product chicken-fillet --oven rack-oven-1 --setting roast-180 --fit-offset \
	  --out reports/demo/calibration
	$(VENV)/bin/corepace verify reports/demo/calibration/demo-calibrated.yaml \
	  configs/logs/run-chicken-roast-180.csv \
	  --product chicken-fillet --stage cook --oven rack-oven-1 --setting roast-180 \
	  --out reports/demo/record

# The committed sample report: regenerated from the demo so it cannot go stale
# silently (SOURCE_DATE_EPOCH pins the report's timestamp).
sample: $(STAMP)
	SOURCE_DATE_EPOCH=1767225600 $(VENV)/bin/corepace plan configs/demo.yaml --out reports/sample --quiet

test: $(STAMP)
	.ci/chromium
	$(PY) -m pytest -q

# ruff, then the layer contract of pyproject.toml [tool.importlinter] (also in the suite)
lint: $(STAMP)
	$(VENV)/bin/ruff check thermal optimizer tests
	$(VENV)/bin/ruff format --check thermal optimizer tests
	$(VENV)/bin/lint-imports

bench: $(STAMP)
	for f in tests/bench/bench_*.py; do $(PY) $$f || exit 1; done

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info
