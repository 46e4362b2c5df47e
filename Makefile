# librate: `make demo` runs the main job, `make test` runs the tests, `make bench` the benchmarks.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test bench venv clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(BIN)/python examples/demo.py --out out

test: $(STAMP)
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python -m benchmarks

clean:
	rm -rf $(VENV) out .pytest_cache
