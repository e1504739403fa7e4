# Set-up is part of every target: a fresh machine needs only Python and pip.
VENV    := .venv
PY      := $(VENV)/bin/python
STAMP   := $(VENV)/.installed-stamp

.PHONY: demo test bench browser clean

$(STAMP): pyproject.toml
	test -x $(PY) || python3 -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/ringshift demo --force

# pytest exits 5 when it collected no tests; that is a broken suite, reported as such.
test: $(STAMP)
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
	rm -rf $(VENV) build *.egg-info .pytest_cache
