# Two entry points for a fresh machine: `make demo` and `make test`.
# Both create .venv, install the CPU build of torch first (so nothing pulls a GPU build),
# then the package with its test extras and Ray (so the ray engine's tests run).
PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed
export HF_HUB_OFFLINE := 1
export TRANSFORMERS_OFFLINE := 1

.PHONY: demo test install wordnet browser bench

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q torch==2.13.0
	$(PY) -m pip install -q -e '.[test,ray]'
	touch $(STAMP)

install: $(STAMP)

# Optional system packages, installed only when we are root on a Debian-like system
# (otherwise the dependent parts skip and say why):
#   wordnet-base  WordNet for the paraphrase query style (`make demo` and `make test`)
#   chromium      the browser test of the HTML report (`make test` only)
define apt_install
	@if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null; then \
	  (dpkg -s $(1) >/dev/null 2>&1) || \
	  (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(1) >/dev/null) || \
	  echo "note: could not install $(1); $(2)"; \
	else echo "note: not root or no apt-get; install $(1) yourself ($(2))"; fi
endef

wordnet:
	$(call apt_install,wordnet-base,the paraphrase query style and its tests need it)

browser: wordnet
	$(call apt_install,chromium,the browser test of the HTML report skips without it)

demo: $(STAMP) wordnet
	$(VENV)/bin/trawl demo -o demo-out

test: $(STAMP) wordnet browser
	$(PY) -m pytest -q --durations=15

bench: $(STAMP)
	for f in bench/*.py; do $(PY) $$f || exit 1; done
