# Two entry points for a fresh machine with Python 3.11+: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test test-numeric lint venv clean bench bench-lots bench-lots-quick bench-lot-stages bench-engine-baseline fuzz browser-deps postgres-deps

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

# The demo scenario (invented): five candidate downlights for a library renovation, a tender
# criteria file, one supplier's datasheet claims, a 200-module production lot, and eight weekly
# lots of the same module recorded into a history store (with a planted drift). Verdicts that
# fail by design exit 1; the `|| test $$? -eq 1` lets the demo go on (exit 2 would still stop it).
DEMO_OUT := spectra_demo/out
LUMEVAL := $(VENV)/bin/lumeval

demo: $(STAMP)
	$(PY) spectra_demo/generate.py
	$(PY) spectra_demo/generate_lot.py
	$(PY) spectra_demo/generate_weekly.py
	$(PY) spectra_demo/generate_tunable.py
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
	@echo; echo "== 5. Eight weekly lots recorded into a history store, with drift alarms (store: $(DEMO_OUT)/history.db) =="
	rm -f $(DEMO_OUT)/history.db $(DEMO_OUT)/history.db-wal $(DEMO_OUT)/history.db-shm
	for w in 40 41 42 43 44 45 46 47; do \
		$(LUMEVAL) lot spectra_demo/weekly/AD30-2026w$$w.csv --criteria spectra_demo/lot_criteria.toml --quiet \
			--store $(DEMO_OUT)/history.db --lot-id 2026-w$$w --trend-figures duv,cct_K >/dev/null || exit $$?; \
	done
	$(LUMEVAL) history list --store $(DEMO_OUT)/history.db
	@echo; echo "== 6. The Duv trend over the weeks: the planted phosphor drift (HTML: $(DEMO_OUT)/trend_duv.html) =="
	$(LUMEVAL) history trend --store $(DEMO_OUT)/history.db --figure duv --baseline-count 5 \
		--html $(DEMO_OUT)/trend_duv.html
	@echo; echo "== 7. A two-channel tunable downlight mixed over 2500-6500 K, judged over its range (HTML: $(DEMO_OUT)/tunable_mix.html) =="
	$(LUMEVAL) mix spectra_demo/tunable/tw2_channels.csv --cct 2500:6500:250 \
		--criteria spectra_demo/tunable_criteria.toml --html $(DEMO_OUT)/tunable_mix.html || test $$? -eq 1
	@echo; echo "== 8. The same downlight measured at five setpoints, settings from a manifest (HTML: $(DEMO_OUT)/tunable_setpoints.html) =="
	$(LUMEVAL) series spectra_demo/tunable/tw2_setpoint_*.csv --manifest spectra_demo/tunable/tw2_setpoints_manifest.toml \
		--reference locus --criteria spectra_demo/tunable_criteria.toml --html $(DEMO_OUT)/tunable_setpoints.html || test $$? -eq 1
	@echo; echo "== 9. Its dim-to-warm mode from 100 % down to 5 % (HTML: $(DEMO_OUT)/dim_to_warm.html) =="
	$(LUMEVAL) series spectra_demo/tunable/tw2_dim2warm_*.csv --criteria spectra_demo/dim_to_warm_criteria.toml \
		--html $(DEMO_OUT)/dim_to_warm.html || test $$? -eq 1
	@echo; echo "Reports written to $(DEMO_OUT)/ (open the .html files in a browser)."

test: $(STAMP)
	$(PY) -m pytest

# The tests whose assertions compare computed figures (metrics, engine, reference tables, lots,
# criteria and verdicts, uncertainty, tunable sources, the history store's recorded figures,
# Dask against a local run): CI runs them a second time with one BLAS thread.
NUMERIC_TESTS = $(sort $(wildcard tests/test_metrics*.py tests/test_engine*.py tests/test_tm30*.py \
	tests/test_hue*.py tests/test_uncertainty*.py tests/test_tunable*.py tests/test_grid*.py \
	tests/test_validity*.py tests/test_criteria*.py tests/test_lot_*.py tests/test_spectra_prepare.py \
	tests/test_dask*.py tests/test_store*.py))

test-numeric: $(STAMP)
	$(PY) -m pytest $(NUMERIC_TESTS)

# Gates (configured in pyproject.toml): ruff on the whole tree, then mypy on lumeval/ (strict on
# the computation core: metrics/, engine.py, figures.py, spectra/prepare.py).
lint: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/mypy

# Benchmarks (not tests): start-up times; engine vs a per-spectrum colour-science loop on 2,000
# spectra, and 100,000 spectra through `lumeval lot` with peak memory (docs/lots.md); the history
# store: a 10,000-sample lot and a 500-lot trend on SQLite and PostgreSQL (docs/history.md).
bench: $(STAMP)
	$(PY) bench/startup.py
	$(PY) bench/benchmark.py
	$(PY) bench/bench_store.py
	$(PY) bench/bench_mix.py
	OPENBLAS_NUM_THREADS=1 $(PY) bench/run_all.py

# The lot benchmark set (docs/lots.md, "Speed and memory"): engine spectra/s, `lumeval lot` end
# to end on a 20,000-spectrum wide CSV, 10,000 single files and a 1,000,000-spectrum Parquet
# archive (peak RSS), Dask 2 workers vs 1 process; a summary against the targets.
bench-lots: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(PY) bench/run_all.py

bench-lots-quick: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(PY) bench/run_all.py --quick

# The engine against the build before issue 14's engine work, alternated in one run (a ratio
# the machine's phase does not move).
bench-engine-baseline: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(PY) bench/bench_engine_baseline.py

# Where a one-process Parquet lot's CPU time goes, stage by stage (200,000 spectra by default).
bench-lot-stages: $(STAMP)
	OPENBLAS_NUM_THREADS=1 $(PY) bench/bench_lot_stages.py

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
