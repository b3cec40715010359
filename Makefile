# Two-command set-up: `make demo` and `make test` each create .venv and install from project files.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/python -m resolve.demo_run

test: $(STAMP)
	$(BIN)/python -m pytest -n 2

bench: $(STAMP)
	$(BIN)/python -m bench.run

clean:
	rm -rf $(VENV) build *.egg-info demo-project bench/cache
