# Quick start: `make demo` builds the demo brief into out/demo/, `make test` runs lint and tests.
# Both work on a fresh Debian machine with Python 3.11+: they install what they need.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
TEST_STAMP := $(VENV)/.installed-test

.PHONY: demo test test-spark test-slow lint bench example system-deps clean

# WeasyPrint needs Pango, HarfBuzz's subsetter (repeatable font subsets) and a font; install them with apt when missing (CI and fresh machines run as root).
# Chromium measures the HTML's width at phone and desktop sizes in tests/test_layout.py.
# Java 17 runs the local Spark session of the pyspark engine's tests (PySpark 4.0 needs 17 or later).
# PostgreSQL's server: tests/pg_server.py starts a throwaway cluster on 127.0.0.1 for the database tests.
system-deps:
	@if ! ldconfig -p | grep -q libpango-1.0 || ! ldconfig -p | grep -q libharfbuzz-subset \
		|| ! fc-list 2>/dev/null | grep -qi dejavu || ! command -v chromium >/dev/null \
		|| ! ls /usr/lib/postgresql/*/bin/pg_ctl >/dev/null 2>&1; then \
		echo "installing Pango, DejaVu fonts, Chromium and PostgreSQL with apt-get"; \
		apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq \
			libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0 fonts-dejavu-core fontconfig chromium \
			postgresql >/dev/null; \
	fi
	@if ! command -v java >/dev/null; then \
		echo "installing Java 17 with apt-get (the Spark engine's tests run a local Spark)"; \
		mkdir -p /usr/share/man/man1; \
		apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq \
			openjdk-17-jre-headless >/dev/null; \
	fi

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install -q --upgrade pip

$(STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/pip install -q -e .
	touch $@

$(TEST_STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/pip install -q -e '.[test]'
	touch $@ $(STAMP)

demo: system-deps $(STAMP)
	$(BIN)/briefgen demo --out out/demo

lint: $(TEST_STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

test: system-deps $(TEST_STAMP) lint
	$(BIN)/pytest -q

# The whole statistics suite again on a local Spark session (the fixture's pyspark
# backend); CI runs it after `make test` (about 3 minutes on 2 cores).
test-spark: system-deps $(TEST_STAMP)
	$(BIN)/pytest -q -m slow -k pyspark

# The other slow runs, left out of `make test` and CI: twenty builds killed at chosen
# moments, 200 briefs on pure noise, a hundred million extreme values summed exactly
# (about 7 minutes on 2 cores).
test-slow: system-deps $(TEST_STAMP)
	$(BIN)/pytest -q -m slow -k "not pyspark"

# Rebuild the committed example brief with a fixed date, so unchanged output gives unchanged bytes.
# Copied out of the published run so example_output/ stays three plain files, not run folders.
example: system-deps $(STAMP)
	rm -rf out/example
	SOURCE_DATE_EPOCH=1796169600 $(BIN)/briefgen demo --out out/example
	cp -L out/example/brief.html out/example/brief.pdf out/example/stats.json example_output/

bench: $(TEST_STAMP)
	$(BIN)/python benchmarks/run.py

clean:
	rm -rf out build *.egg-info .pytest_cache .ruff_cache
