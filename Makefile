# librate: `make demo` runs the main job, `make test` runs the tests, `make bench` the benchmarks,
# `make docs` builds the documentation site (docs/_build/html; offline, warnings are errors).
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test bench docs venv kernels clean system-deps leap-seconds

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install -qq --upgrade pip
	@echo "installing librate and its dependencies into $(VENV)/ (first time only)..."
	$(BIN)/pip install -qq -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

# The documentation site's builder and extensions (the [docs] extra): make docs and make test.
DOCS_STAMP := $(VENV)/.docs-installed
$(DOCS_STAMP): $(STAMP) pyproject.toml
	$(BIN)/pip install -qq -e '.[test,docs]'
	touch $(DOCS_STAMP)

# The integrator built ahead of time (cr3bp/integrate/prebuilt.py): single requests then start
# without numba. Rebuilt only when its source changed; without it everything still runs
# (numba's just-in-time kernels), only slower to start, hence the leading '-'.
kernels: $(STAMP)
	-@$(BIN)/python -m cr3bp.integrate build --if-stale

# Copy the IERS leap-second file of the installed astropy-iers-data (a test extra) into
# data/leap_seconds.txt with its source and expiry; run after upgrading that package.
leap-seconds: $(STAMP)
	$(BIN)/python -m cr3bp.data.refresh_leap_seconds

demo: kernels
	$(BIN)/librate run examples/farlight.toml --out out

# Headless Chromium renders the HTML report in a test (Debian package 'chromium').
system-deps:
	@command -v chromium >/dev/null 2>&1 || command -v chromium-browser >/dev/null 2>&1 || { \
	  if command -v apt-get >/dev/null 2>&1; then \
	    echo "installing Debian's chromium for the report rendering test"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else echo "warning: no chromium and no apt-get; the report rendering test will fail"; fi; }

test: kernels system-deps $(DOCS_STAMP)
	$(BIN)/python -m pytest -q

bench: kernels
	$(BIN)/python -m benchmarks

docs: kernels $(DOCS_STAMP)
	$(BIN)/python -m sphinx -W --keep-going -q -b html docs docs/_build/html
	@echo "wrote docs/_build/html/index.html"

clean:
	rm -rf $(VENV) out .pytest_cache cr3bp/integrate/_prebuilt docs/_build docs/generated docs/gallery
