# Set-up is part of every target: a fresh machine needs only Python and pip.
VENV      := .venv
PY        := $(VENV)/bin/python
STAMP     := $(VENV)/.installed-stamp
DEV_STAMP := $(VENV)/.dev-installed-stamp

# What `make lint` checks. ruff: the package, the tests, the benchmarks and the demo generator;
# mypy: the package (configured in pyproject.toml).
LINT_PATHS := ringshift tests benchmarks demo_spectra
# Whether findings fail `make lint` (and so `make test`), per linter. Both are clean and blocking;
# `make lint MYPY_BLOCKING=0` prints mypy's findings without failing (for work in progress). A linter
# that cannot run (exit 2: bad configuration, syntax error, crash) always fails.
RUFF_BLOCKING ?= 1
MYPY_BLOCKING ?= 1

.PHONY: demo test lint bench browser clean

# The package alone: enough for `make demo` and `make bench`.
$(STAMP): pyproject.toml
	test -x $(PY) || python3 -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e .
	touch $(STAMP)

# The package with the test and lint tools (extra `dev` = `test` + ruff + mypy).
$(DEV_STAMP): $(STAMP) pyproject.toml
	$(PY) -m pip install --quiet -e '.[dev]'
	touch $(DEV_STAMP)

demo: $(STAMP)
	$(VENV)/bin/ringshift demo --force

lint: $(DEV_STAMP)
	@echo "== ruff check $(LINT_PATHS)"; \
	$(PY) -m ruff check --output-format concise $(LINT_PATHS); r=$$?; \
	echo "== mypy ringshift/"; \
	$(PY) -m mypy ringshift/; m=$$?; \
	if [ $$r -gt 1 ] || [ $$m -gt 1 ]; then \
		echo "make lint: a linter did not run (ruff exit $$r, mypy exit $$m)" >&2; exit 2; fi; \
	if [ $$r -eq 0 ] && [ $$m -eq 0 ]; then echo "make lint: ruff and mypy clean"; exit 0; fi; \
	fail=0; \
	for t in "ruff $$r RUFF_BLOCKING=$(RUFF_BLOCKING)" "mypy $$m MYPY_BLOCKING=$(MYPY_BLOCKING)"; do \
		set -- $$t; [ "$$2" -eq 0 ] && continue; \
		if [ "$$3" = "$${3%=*}=1" ]; then echo "make lint: $$1 FAILED ($$3)" >&2; fail=1; \
		else echo "make lint: $$1 NOT CLEAN - reported above, not blocking ($$3)" >&2; fi; \
	done; \
	exit $$fail

# `make test` runs `make lint` first, then pytest.
# pytest exits 5 when it collected no tests; that is a broken suite, reported as such.
test: lint
	@$(PY) -m pytest -q; rc=$$?; \
	if [ $$rc -eq 5 ]; then echo "make test: pytest collected no tests - treating this as a failure" >&2; exit 1; fi; \
	exit $$rc

# Debian's chromium, used by the test that opens the HTML report headless (needs root and apt).
browser:
	@command -v chromium >/dev/null 2>&1 || { apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; }
	@chromium --version

bench: $(STAMP)
	$(PY) benchmarks/bench_fields.py

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .mypy_cache .ruff_cache
