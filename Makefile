# lean_video: set-up and the two everyday commands.
#   make demo   - create .venv, install, analyse the bundled demo sessions
#   make test   - create .venv, install (plus system packages), run every test
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
APT_PACKAGES := ffmpeg libosmesa6 chromium

.PHONY: venv demo test system-deps bench clean-venv

$(STAMP): pyproject.toml constraints.txt
	@$(PYTHON) -c "import venv, ensurepip" 2>/dev/null || { echo "$(PYTHON) lacks the venv module: install it (Debian/Ubuntu: sudo apt-get install python3-venv)"; exit 1; }
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -c constraints.txt -e '.[test,synth]'
	$(BIN)/python -m pip install --quiet --disable-pip-version-check --no-deps pyrender==0.1.45
	touch $(STAMP)

venv: $(STAMP)

# Test-only system packages: ffmpeg writes test clips, OSMesa renders the
# synthetic walker, Chromium opens reports headless. Installed when missing and
# run as root (as on CI); otherwise the command to run is printed.
system-deps:
	@missing=""; for p in $(APT_PACKAGES); do dpkg -s $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then \
	  if [ "$$(id -u)" = 0 ]; then apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing >/dev/null; \
	  else echo "Please install:$$missing  (sudo apt-get install$$missing)"; exit 1; fi; fi

demo: venv
	$(BIN)/python -m tools.demo

test: system-deps venv
	$(BIN)/python -m pytest

bench: venv
	$(BIN)/python benchmarks/run.py

clean-venv:
	rm -rf $(VENV)
