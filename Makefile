# Two commands on a fresh machine: `make demo` (the main job on the demo site) and `make test`.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed-stamp
OUT    := out
DEMO_SPECTRA := $(wildcard sample_sites/*/spectra/*.csv)

.PHONY: setup demo spectra test test-fast lint bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	$(PY) -m ipykernel install --sys-prefix --name audit-lib --display-name "Python (audit-lib)"
	touch $(STAMP)

setup: $(STAMP)

## The main job on the demo site: spectrum reports for the demo spectra.
demo: setup spectra

spectra: setup
	@mkdir -p $(OUT)/spectra
	@for f in $(DEMO_SPECTRA); do \
	  name=$$(basename $$f .csv); \
	  $(VENV)/bin/papermill --log-level ERROR -k audit-lib workbooks/spectrum_report.ipynb \
	    $(OUT)/spectra/$$name.ipynb -p spectrum_path "$$(realpath $$f)" || exit 1; \
	  $(VENV)/bin/jupyter nbconvert --log-level ERROR --to html --no-input \
	    $(OUT)/spectra/$$name.ipynb --output-dir $(OUT)/spectra || exit 1; \
	  echo "spectrum report: $(OUT)/spectra/$$name.html"; \
	done

## The whole suite (installs first if needed).
test: setup
	$(PY) -m pytest

test-fast: setup
	$(PY) -m pytest -m "not slow and not browser"

lint: setup
	$(VENV)/bin/ruff check audit_lib tests benchmarks

bench: setup
	@for b in benchmarks/*.py; do echo "== $$b"; $(PY) $$b || exit 1; done

clean:
	rm -rf $(OUT) .pytest_cache
