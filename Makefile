# livefix developer tasks. Each target creates .venv and installs the project when needed.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench mutants fuzz recordings docs clean

# every C source and header of the cores (setup.py C_CORES lists them per module), so any edit rebuilds
C_SRC  := $(wildcard livefix/*.[ch] livefix/*/*.[ch])

$(STAMP): pyproject.toml setup.py $(C_SRC)  # C cores rebuilt in place when a source changes
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test]'
	# bytecode now, as an installed package has it (hosts with PYTHONDONTWRITEBYTECODE=1 never write it)
	$(PY) -m compileall -q livefix > /dev/null
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/livefix watch sim:rooftop

test: $(STAMP)
	$(PY) -m ruff check livefix tests bench
	# the whole suite on both paths: with the C core, then the pure-Python reference (LIVEFIX_PURE=1);
	# the twins' differentials (marker "twin") compare both paths themselves, so they run once, in the
	# first pass (tests/conftest.py); two workers each; the slowest tests of each pass are listed, to keep
	# both within the CI budget on 2 cores
	$(PY) -m pytest -n 2 --durations=25
	LIVEFIX_PURE=1 $(PY) -m pytest -n 2 -m "not twin" --durations=25

lint: $(STAMP)
	$(PY) -m ruff check livefix tests bench

bench: $(STAMP)
	$(PY) bench/run_all.py

mutants: $(STAMP)  # deliberate faults in analysis/ that the tests must catch; writes bench/mutants-result.md
	$(PY) bench/mutants.py

fuzz: $(STAMP)
	$(PY) bench/fuzz.py --inputs 1000000
	# the C core built with ASan+UBSan in a temporary folder, compared with the pure path
	if $(PY) -c "import livefix._native" 2>/dev/null; then $(PY) bench/fuzz.py --asan --inputs 1000000; \
	else echo "livefix: C core not built; native fuzz skipped"; fi

recordings: $(STAMP)
	$(PY) -m livefix.commands.make_recordings

docs: $(STAMP)  # the metric table, generated from livefix/analysis/catalogue.py
	$(PY) -m livefix.analysis.catalogue > docs/metrics.md

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .ruff_cache livefix/_native*.so livefix/_wirecore*.so livefix/*/_*core*.so
