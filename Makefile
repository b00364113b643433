# Every set-up step lives here, so a fresh clone needs nothing done by hand.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
DEMO_OUT ?= demo-run

.PHONY: test demo bench bench-large soak system-deps wheel clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

# one BLAS thread: the tests are many small products, which threads only slow on shared cores
test: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(BIN)/python -m pytest

demo: $(STAMP)
	$(BIN)/scorewright demo --out $(DEMO_OUT) --force

# every figure side by side in one run: the 1M-row comparisons, streamed builds of 1M to 30M rows,
# and the same build through each engine (in process, DuckDB, Spark) on 1M and 10M rows
bench: $(STAMP)
	$(BIN)/python -m benchmarks --streaming --engines

# only the streamed builds of 1M and 100M rows, written to benchmarks/RESULTS-large.md (its Parquet ledger,
# about 3.5 GB, is generated once in bounded memory); make bench's RESULTS.md takes the 100M targets from it
bench-large: $(STAMP)
	$(BIN)/python -m benchmarks --large

# Long property runs, kept out of `make test`: the exports' round trip on 1,000,000 generated
# applications (make test runs 100,000), and the hardening tests at full size (every tampered value of
# every model-file field, 150 generated ledgers instead of 5, 60 killed builds instead of 6)
soak: $(STAMP)
	SCOREWRIGHT_ROUND_TRIP_ROWS=1000000 $(BIN)/python -m pytest -q tests/test_exports_engines.py -k round_trip
	SCOREWRIGHT_SOAK=1 $(BIN)/python -m pytest -q -s tests/test_hardening.py

# The programs the workbook and report checks drive (LibreOffice, Chromium), Java 17 for the PMML
# evaluator the export checks run and for the Spark engine (pyspark runs on it), and GNU time for
# the benchmarks. CI installs them (and .ci/run says plainly when Java is missing).
SUDO := $(shell if [ "$$(id -u)" != 0 ] && command -v sudo >/dev/null; then echo sudo; fi)
system-deps:
	$(SUDO) apt-get update -qq
	DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq --no-install-recommends \
	    libreoffice-calc chromium fonts-dejavu-core time openjdk-17-jre-headless

wheel: $(STAMP)
	$(BIN)/python -m build --wheel --outdir dist .

clean:
	rm -rf $(VENV) dist build *.egg-info $(DEMO_OUT)
