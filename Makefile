# cageprint: two commands do everything (see README.md).
#   make lab    set up .venv and open JupyterLab on the notebooks with the demo data
#   make test   set up .venv and run the whole test suite (CI runs this)
PYTHON ?= python3
VENV   ?= .venv
BIN     = $(VENV)/bin
STAMP   = $(VENV)/.cageprint-installed

.PHONY: lab test venv browser bench clean

venv: $(STAMP)

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[notebook,test,dev]"
	touch $(STAMP)

# in a container one is often root: JupyterLab then needs --allow-root; the settings
# override (also Binder's) keeps news and update pop-ups off the notebook
lab: $(STAMP)
	$(BIN)/python -m cageprint demo --ensure
	mkdir -p $(VENV)/share/jupyter/lab/settings
	cp binder/overrides.json $(VENV)/share/jupyter/lab/settings/overrides.json
	$(BIN)/jupyter lab $(if $(filter 0,$(shell id -u)),--allow-root) notebooks/00-start-here.ipynb

# The browser test needs a Chromium; on Debian as root it is installed here
# (apt-get install chromium); elsewhere the browser test is skipped with a reason.
browser:
	@command -v chromium >/dev/null 2>&1 || command -v chromium-browser >/dev/null 2>&1 || \
	  { if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	      (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null) \
	      || echo "could not install chromium: the browser test will be skipped"; \
	    else echo "chromium not found: the browser test will be skipped"; fi; }

test: $(STAMP) browser
	$(BIN)/python -m pytest

bench: $(STAMP)
	for f in tests/benchmarks/bench_*.py; do echo "== $$f"; $(BIN)/python $$f || exit 1; done

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info kit/*.egg-info
