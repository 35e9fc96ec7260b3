# Two set-up commands: `make demo` and `make test`. Both find a Python >= 3.12 that can
# build a virtualenv, create .venv, install qhat with its test extra, then run.
VENV := .venv
STAMP := $(VENV)/.installed
PY := $(VENV)/bin/python

.PHONY: demo test quick venv clean

demo: $(STAMP)
	$(VENV)/bin/qhat demo

test: $(STAMP)
	$(PY) -m pytest -q

quick: $(STAMP)
	$(PY) -m pytest -q -m "not slow"

venv: $(STAMP)

$(STAMP): pyproject.toml
	@PYBIN=$$(sh tools/find-python.sh) || exit 1; \
	echo "using $$PYBIN"; \
	"$$PYBIN" -m venv $(VENV) && \
	$(PY) -m pip install --quiet --upgrade pip && \
	$(PY) -m pip install --quiet -e ".[test]" && \
	touch $(STAMP)

clean:
	rm -rf $(VENV)
