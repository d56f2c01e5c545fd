# The two set-up commands of the README: `make demo` and `make test`.
# Both create .venv with the machine's Python 3.11+ and install the package with its test extras.
# The fast extra (numba) is installed too, so the tests check the compiled kernel, not only its
# plain-Python form.

PYTHON ?= $(shell command -v python3.11 2>/dev/null || command -v python3)
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
DEMO_OUT := demo-out

.PHONY: demo test lint typecheck unit benchmark sample-data clean

$(STAMP): pyproject.toml constraints.txt
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -c constraints.txt -e '.[test,fast]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/reconcile match sample_data/fills.csv --financing sample_data/financing.csv \
		--out $(DEMO_OUT)/match
	for s in brightwater:brightwater-fills.csv quayside:quayside-futures.xlsx kestrel:kestrel-dropcopy.fix; do $(BIN)/reconcile match sample_data/profiles/$${s#*:} --profile sample_data/profiles/$${s%%:*}.toml --rejects $(DEMO_OUT)/$${s%%:*}/rejects.csv --out $(DEMO_OUT)/$${s%%:*} || exit 1; done
	# The demo statement holds one planted break, so the tie-out exits 1; only 2 fails the demo.
	$(BIN)/reconcile tie-out sample_data/fills.csv --financing sample_data/financing.csv \
		--statement sample_data/statement.csv --period 2026-11 \
		--timezone America/New_York --cutoff 17:00 --out $(DEMO_OUT)/tieout || [ $$? -eq 1 ]
	# The fee audit exits 1 when it finds leakage: the sample holds one late borrow fee, the
	# planted copy one overcharge of each kind (sample_data/fees-planted/planted.csv).
	$(BIN)/reconcile fees sample_data/fills.csv --schedule sample_data/larkmoor-schedule.toml \
		--financing sample_data/financing.csv --marks sample_data/marks.csv \
		--format html --out $(DEMO_OUT)/fees || test $$? -eq 1
	$(BIN)/reconcile fees sample_data/fees-planted/fills.csv \
		--schedule sample_data/larkmoor-schedule.toml \
		--financing sample_data/fees-planted/financing.csv --marks sample_data/marks.csv \
		--format html --out $(DEMO_OUT)/fees-planted || test $$? -eq 1
	# The month-end pack: statistics, the tie-out and the fee audit on one page; --period bounds
	# both to November (exit 1: the planted break is found; the late borrow fee is October's).
	$(BIN)/reconcile report sample_data/fills.csv --financing sample_data/financing.csv \
		--timezone America/New_York --title "Larkmoor Capital: October and November 2026" \
		--statement sample_data/statement.csv --period 2026-11 --cutoff 17:00 \
		--schedule sample_data/larkmoor-schedule.toml --marks sample_data/marks.csv \
		--out $(DEMO_OUT)/report || [ $$? -eq 1 ]
	@echo "Demo results are in $(DEMO_OUT)/: match, tieout, fees, fees-planted, report (open report/report.html)"

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
	$(BIN)/python sample_data/generate_sources.py
	$(BIN)/python sample_data/fees_scenario.py
	$(BIN)/python sample_data/make_statement.py

clean:
	rm -rf $(VENV) $(DEMO_OUT) .mypy_cache .pytest_cache .ruff_cache .hypothesis
