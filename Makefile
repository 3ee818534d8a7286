# One file of entry points; each target installs what it needs first.
PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
HOST ?= 127.0.0.1
PORT ?= 8000

.PHONY: install run test bench bench-quick samples browser-deps clean

$(VENV)/.installed: pyproject.toml setup.py
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $@

install: $(VENV)/.installed

run: install
	$(PY) -m app.cli serve --host $(HOST) --port $(PORT)

# Headless Chromium for the browser tests comes from Debian's package, never a download.
browser-deps:
	@command -v chromium >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else echo "chromium not installed and not root: browser tests will be skipped"; fi; }

test: install browser-deps
	$(PY) -m pytest

bench: install
	$(PY) -m bench

bench-quick: install
	$(PY) -m bench --quick

samples: install
	$(PY) sample_series/generate.py

clean:
	rm -rf $(VENV) var .pytest_cache
