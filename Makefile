# Two entry points for a fresh Debian machine with Python 3.11 (see README):
#   make demo   - set up and run the main job on the built-in demo design
#   make test   - set up and run the whole test suite (what CI runs)
# Both create .venv and, when run as root, install the Debian packages the tests need.

PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed-$(shell cat pyproject.toml | cksum | cut -d' ' -f1)
APT_PACKAGES := ngspice chromium

.PHONY: demo test bench sysdeps venv clean

$(STAMP): pyproject.toml
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	@rm -f $(VENV)/.installed-* && touch $(STAMP)

venv: $(STAMP)

sysdeps:
	@missing=""; for p in $(APT_PACKAGES); do command -v $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then \
	  if [ "$$(id -u)" = 0 ]; then \
	    echo "installing Debian packages:$$missing"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing >/dev/null; \
	  else echo "missing Debian packages:$$missing (run: sudo apt-get install$$missing)" >&2; exit 1; fi; \
	fi

demo: $(STAMP)
	$(BIN)/python -m explorer demo --evaluate

test: sysdeps $(STAMP)
	$(BIN)/python -m pytest tests notebooks --nbval --nbval-sanitize-with notebooks/sanitize.cfg

bench: $(STAMP)
	@for f in bench/bench_*.py; do echo "== $$f"; $(BIN)/python $$f || exit 1; done

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
