# gravplan: the two commands of the README, and a few helpers.
# `make demo` and `make test` create the virtual environment themselves.

PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test bench clean chromium

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test]'
	touch $(STAMP)

demo_terrain/dem.tif demo_terrain/network.geojson: demo_terrain/generate.py $(STAMP)
	$(BIN)/python demo_terrain/generate.py

demo: $(STAMP) demo_terrain/dem.tif demo_terrain/network.geojson
	$(BIN)/gravplan demo --out outputs/demo

# the browser tests need Debian's Chromium; as root it is installed when missing
chromium:
	@command -v chromium >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ]; then \
	    echo "installing Debian's chromium for the browser tests"; \
	    DEBIAN_FRONTEND=noninteractive apt-get update -qq && \
	    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else echo "the browser tests need chromium: sudo apt-get install chromium"; exit 1; fi; }

# lint and types first (seconds), then the suite on every core (a test file stays on
# one worker, so the session's shared demo plans are made once per worker at most)
test: $(STAMP) chromium
	$(BIN)/ruff check --quiet
	$(BIN)/mypy
	$(BIN)/python -m pytest -q -n auto --dist loadfile

bench: $(STAMP)
	$(BIN)/python benchmarks/bench_sampling.py
	$(BIN)/python benchmarks/bench_sizing.py
	$(BIN)/python benchmarks/bench_tree.py
	$(BIN)/python benchmarks/bench_outputs.py
	$(BIN)/python benchmarks/bench_live.py
	$(BIN)/python benchmarks/bench_uncertainty.py

clean:
	rm -rf $(VENV) outputs/demo demo_terrain/dem.tif
