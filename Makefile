# Two entry points for a fresh machine; each builds the virtualenv it needs.
VENV ?= .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench clean

# An editable install leaves the package uncompiled; compileall does once what a regular install
# does, so that commands do not recompile it (some environments forbid writing bytecode at import).
$(STAMP): pyproject.toml
	python3 -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	$(PY) -m compileall -q verify
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/truss-verify demo

test: $(STAMP)
	$(PY) -m pytest

# Style is checked, not only advised: the formatter's output, ruff's rules (line length 100
# included) and mypy must all pass; .ci/run runs this before the tests.
lint: $(STAMP)
	$(VENV)/bin/ruff format --check verify tests bench
	$(VENV)/bin/ruff check verify tests bench
	$(VENV)/bin/mypy verify

bench: $(STAMP)
	$(PY) bench/run.py

clean:
	rm -rf $(VENV)
