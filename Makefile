# snrkit developer commands.  `make demo` and `make test` are the two
# commands a newcomer needs; both build .venv on first use.

PYTHON ?= python3
VENV   := .venv
VPY    := $(VENV)/bin/python
STAMP  := $(VENV)/.installed-test
DSTAMP := $(VENV)/.installed

.PHONY: demo test bench clean venv

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

bench: $(DSTAMP)
	$(VPY) benchmarks/bench_derived.py
	$(VPY) benchmarks/bench_spectrum.py
	$(VPY) benchmarks/bench_stacker.py
	$(VPY) benchmarks/bench_rank.py
	$(VPY) benchmarks/bench_framework.py
	$(VPY) benchmarks/bench_startup.py

clean:
	rm -rf $(VENV) build dist .pytest_cache snrkit_demo_output
