# librate: `make demo` runs the main job, `make test` runs the tests, `make bench` the benchmarks.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test bench venv clean system-deps

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install -qq --upgrade pip
	@echo "installing librate and its dependencies into $(VENV)/ (first time only)..."
	$(BIN)/pip install -qq -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(BIN)/librate run examples/farlight.toml --out out

# Headless Chromium renders the HTML report in a test (Debian package 'chromium').
system-deps:
	@command -v chromium >/dev/null 2>&1 || command -v chromium-browser >/dev/null 2>&1 || { \
	  if command -v apt-get >/dev/null 2>&1; then \
	    echo "installing Debian's chromium for the report rendering test"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else echo "warning: no chromium and no apt-get; the report rendering test will fail"; fi; }

test: $(STAMP) system-deps
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python -m benchmarks

clean:
	rm -rf $(VENV) out .pytest_cache
