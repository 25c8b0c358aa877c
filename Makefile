# Two entry points for a fresh machine with Python 3.11+: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test venv clean bench fuzz browser-deps

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(PY) spectra_demo/generate.py
	$(VENV)/bin/lumeval inspect spectra_demo/downlights/*.csv

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

clean:
	rm -rf $(VENV) build *.egg-info
