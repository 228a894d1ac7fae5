# Two commands on a fresh machine: `make demo` (the main job on the demo site) and `make test`.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed-stamp
OUT    := out
DEMO_SITE := sample_sites/kestrel-moor-wildlife-park
DEMO_SPECTRA := $(wildcard $(DEMO_SITE)/spectra/*.csv)

.PHONY: setup demo spectra test test-fast lint bench wheel clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	@# for `jupyter lab workbooks/...` (the batch and `light-audit what-if` need no registration)
	$(PY) -m ipykernel install --sys-prefix --name audit-lib --display-name "Python (audit-lib)"
	touch $(STAMP)

setup: $(STAMP)

## The main job on the demo site: every enclosure audited, reports and index (last line: its path).
demo: setup
	$(VENV)/bin/light-audit run $(DEMO_SITE) --out $(OUT)/$(notdir $(DEMO_SITE))

## One spectrum report per demo spectrum file (self-contained HTML, our template).
spectra: setup
	@mkdir -p $(OUT)/spectra
	@for f in $(DEMO_SPECTRA); do \
	  name=$$(basename $$f .csv); \
	  $(VENV)/bin/papermill --log-level ERROR -k audit-lib workbooks/spectrum_report.ipynb \
	    $(OUT)/spectra/$$name.ipynb -p spectrum_path "$$(realpath $$f)" || exit 1; \
	  $(VENV)/bin/jupyter nbconvert --log-level ERROR --to html --no-input --template audit \
	    --TemplateExporter.extra_template_basedirs=templates \
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

## The wheel in dist/ (workbooks and report template inside): `pip install dist/audit_lib-*.whl`.
wheel: setup
	rm -rf build dist
	$(PY) -m pip wheel --quiet --no-deps --wheel-dir dist .
	@ls dist/*.whl

clean:
	rm -rf $(OUT) .pytest_cache build dist
