# snrkit developer commands.  `make demo` and `make test` are the two
# commands a newcomer needs; both build .venv on first use.

PYTHON ?= python3
VENV   := .venv
VPY    := $(VENV)/bin/python
STAMP  := $(VENV)/.installed-test
DSTAMP := $(VENV)/.installed

.PHONY: demo test test-oldest bench clean venv notebooks

$(VPY):
	$(PYTHON) -m venv $(VENV)
	$(VPY) -m pip install --quiet --upgrade pip

$(DSTAMP): pyproject.toml | $(VPY)
	$(VPY) -m pip install --quiet -e .
	touch $(DSTAMP)

$(STAMP): pyproject.toml | $(VPY)
	$(VPY) -m pip install --quiet -e ".[test]"
	touch $(STAMP) $(DSTAMP)

venv: $(STAMP)

demo: $(DSTAMP)
	$(VENV)/bin/snrkit demo

test: $(STAMP)
	$(VENV)/bin/ruff check snrkit tests benchmarks data_tables/scripts
	$(VPY) -m pytest

# The suite at the dependency floors of pyproject.toml, in its own venv
# (.venv-oldest): each floor pinned to its oldest release series.
OLDEST := numpy==2.1.* scipy==1.13.* astropy==7.0.* xarray==2024.6.* matplotlib==3.10.* jinja2==3.1.* "dask[distributed]==2024.8.*" pyarrow==16.* pandas==2.2.2
test-oldest:
	$(PYTHON) -m venv .venv-oldest
	.venv-oldest/bin/python -m pip install --quiet --upgrade pip
	.venv-oldest/bin/python -m pip install --quiet $(OLDEST) "pytest>=7.4" "hypothesis>=6.80" "hatchling>=1.27" "ruff>=0.5" \
		"nbmake>=1.5" "ipykernel>=6.29" "playwright>=1.45"
	.venv-oldest/bin/python -m pip install --quiet --no-deps -e .
	.venv-oldest/bin/python -m pytest

# Re-run the notebooks and store their outputs (committed, so they read on a code
# host); the cells' run-time stamps are dropped to keep the diffs to the content.
notebooks: $(STAMP)
	$(VPY) -m pytest -q -p no:cacheprovider --nbmake --overwrite notebooks/
	$(VPY) -c "import nbformat, sys; nbs = {p: nbformat.read(p, 4) for p in sys.argv[1:]}; \
	[c.metadata.pop('execution', None) for nb in nbs.values() for c in nb.cells]; \
	[nbformat.write(nb, p) for p, nb in nbs.items()]" notebooks/*.ipynb

bench: $(DSTAMP)
	$(VPY) benchmarks/bench_derived.py
	$(VPY) benchmarks/bench_spectrum.py
	$(VPY) benchmarks/bench_stacker.py
	$(VPY) benchmarks/bench_rank.py
	$(VPY) benchmarks/bench_framework.py
	$(VPY) benchmarks/bench_startup.py
	$(VPY) benchmarks/bench_population.py

clean:
	rm -rf $(VENV) .venv-oldest build dist .pytest_cache snrkit_demo_output
