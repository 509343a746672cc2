# livefix developer tasks. Each target creates .venv and installs the project when needed.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench fuzz recordings clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/livefix watch sim:rooftop

test: $(STAMP)
	$(PY) -m ruff check livefix tests bench
	$(PY) -m pytest

lint: $(STAMP)
	$(PY) -m ruff check livefix tests bench

bench: $(STAMP)
	$(PY) bench/run_all.py

fuzz: $(STAMP)
	$(PY) bench/fuzz.py --inputs 1000000

recordings: $(STAMP)
	$(PY) -m livefix.commands.make_recordings

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .ruff_cache
