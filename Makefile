# tonebank -- the two commands on a fresh machine are `make demo` and `make test`.
# Both create .venv with the package and its compiled kernel, and are quick the
# second time (stamps in .venv record what is installed and from which sources).

PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
PIP    := $(BIN)/python -m pip --disable-pip-version-check

# Everything the installed package is built from: a change reinstalls it.
SOURCES := $(shell find src csrc -type f \( -name '*.py' -o -name '*.c' -o -name '*.h' \) \
             -not -path 'csrc/build/*' 2>/dev/null) pyproject.toml setup.py MANIFEST.in

# The kernel's compiler flags are part of what is installed: record them so
# that `TONEBANK_CFLAGS=... make bench` rebuilds when they change.
CFLAGS_STAMP := $(VENV)/.tonebank-cflags
$(shell mkdir -p $(VENV) && (printf '%s\n' "$$TONEBANK_CFLAGS" | cmp -s - $(CFLAGS_STAMP) \
          || printf '%s\n' "$$TONEBANK_CFLAGS" > $(CFLAGS_STAMP)))

SPHINX := $(BIN)/python -m sphinx -q -W --keep-going -n

.PHONY: demo test ctest pytest docs doctest bench clean distclean

# One BLAS thread, as for bench: the link multiplies many small matrices, and on a
# busy machine spinning BLAS threads make each one thousands of times slower.
demo: export OPENBLAS_NUM_THREADS = 1
demo: $(VENV)/.installed-demo
	$(BIN)/python -m tonebank demo --out demo-output

# make test: standalone C tests under sanitizers, the Python suite on both
# backends, and the strict docs build with doctests.  TONEBANK_REQUIRE_C=1
# makes a failed kernel build (or a missing kernel at run time) an error.
test: export TONEBANK_REQUIRE_C = 1
test: ctest pytest docs

ctest:
	$(MAKE) -C csrc -j2 test
	$(MAKE) -C csrc -j2 test-clang

pytest: $(VENV)/.installed-test
	$(BIN)/python -m pytest -q

docs: $(VENV)/.installed-test
	$(SPHINX) -b html docs docs/_build/html
	$(SPHINX) -b doctest docs docs/_build/doctest

# One BLAS thread: the C kernel is single-threaded, and on a shared machine
# spinning BLAS threads distort the estimation figures several times over.
bench: export OPENBLAS_NUM_THREADS = 1
bench: $(VENV)/.installed-bench
	$(BIN)/python -m pytest benchmarks -q --benchmark-only \
	    --benchmark-json=benchmarks/.results.json -p no:randomly \
	    --benchmark-max-time=0.5 --benchmark-min-rounds=5 \
	    --benchmark-disable-gc --benchmark-quiet
	$(BIN)/python benchmarks/report.py benchmarks/.results.json

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(PIP) install -q --upgrade pip setuptools wheel "cffi>=1.15"

# One stamp per set of extras; each depends on the package sources.
$(VENV)/.installed-demo: $(BIN)/python $(SOURCES) $(CFLAGS_STAMP)
	$(PIP) install -q --no-build-isolation ".[plot,config]"
	touch $@

$(VENV)/.installed-test: $(BIN)/python $(SOURCES) $(CFLAGS_STAMP)
	$(PIP) install -q --no-build-isolation ".[test,docs,plot,dist,config]"
	touch $@

$(VENV)/.installed-bench: $(BIN)/python $(SOURCES) $(CFLAGS_STAMP)
	$(PIP) install -q --no-build-isolation ".[test,bench,plot,dist,config]"
	touch $@

clean:
	rm -rf build docs/_build docs/api/generated src/*.egg-info benchmarks/.results.json .pytest_cache .hypothesis demo-output
	$(MAKE) -C csrc clean

distclean: clean
	rm -rf $(VENV)
