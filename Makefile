# The two set-up commands of the README: `make demo` and `make test`.
# Both create .venv with the machine's Python 3.11+ and install the package with its test extras.

PYTHON ?= $(shell command -v python3.11 2>/dev/null || command -v python3)
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
DEMO_OUT := demo-out

.PHONY: demo test lint typecheck unit benchmark sample-data clean

$(STAMP): pyproject.toml constraints.txt
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -c constraints.txt -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/reconcile match sample_data/fills.csv --financing sample_data/financing.csv \
		--out $(DEMO_OUT)/match
	# The demo statement holds one planted break, so the tie-out exits 1; only 2 fails the demo.
	$(BIN)/reconcile tie-out sample_data/fills.csv --financing sample_data/financing.csv \
		--statement sample_data/statement.csv --period 2026-11 \
		--timezone America/New_York --cutoff 17:00 --out $(DEMO_OUT)/tieout || [ $$? -eq 1 ]
	@echo "Demo results are in $(DEMO_OUT)/"

test: lint typecheck unit

lint: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

typecheck: $(STAMP)
	$(BIN)/mypy

unit: $(STAMP)
	$(BIN)/pytest

benchmark: $(STAMP)
	$(BIN)/python benchmarks/run.py

sample-data: $(STAMP)
	$(BIN)/python sample_data/generate.py
	$(BIN)/python sample_data/make_statement.py

clean:
	rm -rf $(VENV) $(DEMO_OUT) .mypy_cache .pytest_cache .ruff_cache .hypothesis
