# activolt — set-up, demo, tests and benchmarks.  `make demo` and `make test` each work on a
# fresh clone: they create .venv when it is missing and install the package into it.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test test-slow bench lint docs notebooks clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test,docs]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/activolt demo --out demo_output

test: $(STAMP)
	$(BIN)/ruff check .
	MPLBACKEND=Agg $(BIN)/python -m pytest -q

test-slow: $(STAMP)
	MPLBACKEND=Agg $(BIN)/python -m pytest -q -m slow

# The timed commands start from compiled modules, as an installed package does (pip compiles
# them on install; an editable install under PYTHONDONTWRITEBYTECODE would not).
bench: $(STAMP)
	$(BIN)/python -m compileall -q src >/dev/null
	OPENBLAS_NUM_THREADS=$${OPENBLAS_NUM_THREADS:-1} MPLBACKEND=Agg $(BIN)/python -m pytest -q -m bench -s bench

lint: $(STAMP)
	$(BIN)/ruff check .

# The documentation (Sphinx: numpydoc, autodoc, the notebooks executed by myst-nb) into
# docs/_build/html; a warning is an error.
docs: $(STAMP)
	$(BIN)/python -c "import sphinx, numpydoc, myst_nb" 2>/dev/null || \
		$(BIN)/python -m pip install --quiet -e '.[docs]'
	MPLBACKEND=Agg $(BIN)/python -m sphinx -b html -W --keep-going -j auto docs docs/_build/html
	@echo "open docs/_build/html/index.html"

# The worked examples in JupyterLab, from the project's venv.
notebooks: $(STAMP)
	$(BIN)/python -c "import jupyterlab" 2>/dev/null || \
		$(BIN)/python -m pip install --quiet -e '.[notebooks]'
	$(BIN)/jupyter lab notebooks/

clean:
	rm -rf $(VENV) demo_output .pytest_cache build src/*.egg-info docs/_build docs/api
