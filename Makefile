# activolt — set-up, demo, tests and benchmarks.  `make demo` and `make test` each work on a
# fresh clone: they create .venv when it is missing and install the package into it.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test test-slow bench lint clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/activolt demo --out demo_output

test: $(STAMP)
	$(BIN)/ruff check .
	MPLBACKEND=Agg $(BIN)/python -m pytest -q

test-slow: $(STAMP)
	MPLBACKEND=Agg $(BIN)/python -m pytest -q -m slow

bench: $(STAMP)
	MPLBACKEND=Agg $(BIN)/python -m pytest -q -m bench -s bench

lint: $(STAMP)
	$(BIN)/ruff check .

clean:
	rm -rf $(VENV) demo_output .pytest_cache build src/*.egg-info
