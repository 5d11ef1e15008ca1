# Set-up and everyday commands. Each target creates .venv/ on first use.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
PORT ?= 5006
SCENARIO ?= scenarios/demo-hexagon-helium.toml
STAMP := $(VENV)/.installed

.PHONY: serve test benchmark chromium clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

serve: $(STAMP)
	$(BIN)/porefill serve --scenario $(SCENARIO) --address 127.0.0.1 --port $(PORT)

# Debian's Chromium for the browser tests; installed only when missing and we are root.
chromium:
	@if [ ! -x /usr/bin/chromium ]; then \
	  if [ "$$(id -u)" = "0" ]; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else \
	    echo "Debian's chromium is missing: run 'sudo apt-get install chromium' (needed by the browser tests)"; exit 1; \
	  fi; \
	fi

# the test files spread over up to four processes (pytest-xdist); a file's tests stay together, in order
test: $(STAMP) chromium
	$(BIN)/python -m pytest -n auto --maxprocesses=4 --dist loadfile

benchmark: $(STAMP) chromium
	$(BIN)/python -m pip install --quiet -e '.[test,bench]'
	for f in benchmarks/bench_*.py; do $(BIN)/python $$f || exit 1; done

clean:
	rm -rf $(VENV) build *.egg-info
