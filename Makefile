# Two entry points for a fresh machine with Python 3.11+: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test venv clean bench fuzz browser-deps postgres-deps

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

# The demo scenario (invented): five candidate downlights for a library renovation, a tender
# criteria file, one supplier's datasheet claims, and a 200-module production lot. Verdicts that
# fail by design exit 1; the `|| test $$? -eq 1` lets the demo go on (exit 2 would still stop it).
DEMO_OUT := spectra_demo/out
LUMEVAL := $(VENV)/bin/lumeval

demo: $(STAMP)
	$(PY) spectra_demo/generate.py
	$(PY) spectra_demo/generate_lot.py
	mkdir -p $(DEMO_OUT)
	@echo; echo "== 1. Every figure for the five candidate downlights =="
	$(LUMEVAL) inspect spectra_demo/downlights/*.csv
	@echo; echo "== 2. The candidates against the tender criteria (HTML report: $(DEMO_OUT)/tender_report.html) =="
	$(LUMEVAL) check spectra_demo/downlights/*.csv --criteria spectra_demo/tender_criteria.toml \
		--html $(DEMO_OUT)/tender_report.html || test $$? -eq 1
	@echo; echo "== 3. One supplier's datasheet claims against its own spectrum =="
	$(LUMEVAL) claims spectra_demo/downlights/candidate_C_claritas_3000K.csv \
		--claims spectra_demo/supplier_claims.toml || test $$? -eq 1
	@echo; echo "== 4. A production lot of 200 modules (HTML report: $(DEMO_OUT)/lot_report.html) =="
	$(LUMEVAL) lot spectra_demo/lot_2026w48 --criteria spectra_demo/lot_criteria.toml --quiet \
		--html $(DEMO_OUT)/lot_report.html --samples-csv $(DEMO_OUT)/lot_samples.csv || test $$? -eq 1
	@echo; echo "Reports written to $(DEMO_OUT)/ (open the .html files in a browser)."

test: $(STAMP)
	$(PY) -m pytest

# Benchmarks (not tests): start-up times; engine vs a per-spectrum colour-science loop on 2,000
# spectra, and 100,000 spectra through `lumeval lot` with peak memory (docs/lots.md).
bench: $(STAMP)
	$(PY) bench/startup.py
	$(PY) bench/benchmark.py

# On-demand reader fuzzing: 3 properties x 3500 hypothesis cases (> 10,000), prints the count.
fuzz: $(STAMP)
	LUMEVAL_FUZZ_EXAMPLES=3500 $(PY) -m pytest -s -p no:cacheprovider tests/test_spectra_fuzz.py

# Headless Chromium for the browser test (Debian package; needs root, as on CI). The test
# installs it itself when missing; this target lets CI do it up front.
browser-deps:
	command -v chromium >/dev/null 2>&1 || (apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y chromium)

# Debian's PostgreSQL server binaries for the history-store tests (they start a throwaway server
# with initdb/pg_ctl in a temporary folder, unix socket only). Needs root, as on CI.
postgres-deps:
	ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || command -v initdb >/dev/null 2>&1 || \
		(apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y postgresql)

clean:
	rm -rf $(VENV) build *.egg-info
