# Two entry points for a fresh machine with python3 and make: `make demo` and `make test`.
VENV    ?= .venv
PYTHON  ?= python3
PY      := $(VENV)/bin/python
STAMP   := $(VENV)/.installed-stamp
DEMO_IN := sheettool/demo/demo-measurements.xlsx
DEMO_OUT:= out/demo-evaluated.xlsx

.PHONY: demo test lint clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	mkdir -p out
	$(VENV)/bin/sheettool evaluate $(DEMO_IN) -o $(DEMO_OUT)
	@echo "Evaluated workbook written to $(DEMO_OUT)"

lint: $(STAMP)
	$(PY) -m ruff check .

test: lint
	OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 $(PY) -m pytest -n 2 --dist loadscope

clean:
	rm -rf $(VENV) out build *.egg-info
