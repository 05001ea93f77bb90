PYTHON ?= python3
PIP ?= $(PYTHON) -m pip
DEMO_DIR ?= demo-run

.PHONY: install install-test demo test bench clean

install:
	$(PIP) install -q -e .

install-test:
	$(PIP) install -q -e '.[test,mpi]'

demo: install
	rarefy demo -o $(DEMO_DIR)

test: install-test
	$(PYTHON) -m pytest -q tests

bench: install
	$(PYTHON) tools/bench.py

clean:
	rm -rf $(DEMO_DIR) build *.egg-info .pytest_cache
