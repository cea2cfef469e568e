# Two entry points for a fresh machine: `make demo` and `make test`.
# Both create .venv, install the CPU build of torch first (so nothing pulls a GPU build),
# then the package with its test extras.
PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed
export HF_HUB_OFFLINE := 1
export TRANSFORMERS_OFFLINE := 1

.PHONY: demo test install system-deps bench

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q torch==2.13.0
	$(PY) -m pip install -q -e '.[test]'
	touch $(STAMP)

install: $(STAMP)

# Optional system packages: Chromium (browser test of the HTML report) and WordNet
# (paraphrase query style). Installed when we are root on a Debian-like system;
# otherwise the dependent tests skip and say why.
system-deps:
	@if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null; then \
	  (dpkg -s chromium wordnet-base >/dev/null 2>&1) || \
	  (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium wordnet-base >/dev/null) || \
	  echo "note: could not install chromium/wordnet-base; browser and WordNet tests will skip"; \
	else echo "note: not root or no apt-get; install chromium and wordnet-base yourself for the full suite"; fi

demo: $(STAMP) system-deps
	$(VENV)/bin/trawl demo -o demo-out

test: $(STAMP) system-deps
	$(PY) -m pytest -q --durations=15

bench: $(STAMP)
	for f in bench/*.py; do $(PY) $$f || exit 1; done
