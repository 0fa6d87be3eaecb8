# Everything a new machine needs is installed by these targets themselves:
# OS packages (Meep and the scientific stack), the virtual environment and the
# package. Run as root on Debian/Ubuntu, or as a user with sudo.
SHELL := /bin/bash
VENV := .venv
PY := $(VENV)/bin/python
OS_PYTHON := /usr/bin/python3
OS_PACKAGES := python3-meep python3-numpy python3-scipy python3-h5py python3-matplotlib python3-venv python3-pip
export MPLBACKEND := Agg

.PHONY: setup os-packages slurm mpi-meep browser demo test bench clean

os-packages:
	@if ! $(OS_PYTHON) -c "import meep, numpy, scipy, h5py, matplotlib, venv, ensurepip" >/dev/null 2>&1; then \
	  echo "== installing OS packages: $(OS_PACKAGES)"; \
	  SUDO=""; [ "$$(id -u)" = 0 ] || SUDO=sudo; \
	  $$SUDO env DEBIAN_FRONTEND=noninteractive apt-get update -qq && \
	  $$SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(OS_PACKAGES) >/dev/null; \
	fi
	@$(OS_PYTHON) -c "import meep" >/dev/null 2>&1 || { echo "Meep could not be installed from the OS packages (python3-meep)"; exit 1; }

# The venv sees the OS Meep, numpy, scipy, h5py and matplotlib; the constraints
# file pins those to the OS versions so pip never replaces them (Meep's
# compiled module breaks under another numpy).
$(VENV)/.installed: pyproject.toml | os-packages
	@echo "== making $(VENV) (with the OS site packages) and installing the package"
	@[ -x $(PY) ] || $(OS_PYTHON) -m venv --system-site-packages $(VENV)
	@$(OS_PYTHON) -c "import numpy, scipy, h5py, matplotlib as m; \
	  print(f'numpy=={numpy.__version__}\nscipy=={scipy.__version__}\nh5py=={h5py.__version__}\nmatplotlib=={m.__version__}')" > $(VENV)/constraints.txt
	@$(PY) -m pip install -q --disable-pip-version-check -c $(VENV)/constraints.txt -e ".[test]"
	@$(PY) -c "import numpy, meep; assert numpy.__file__.startswith('/usr/lib/python3/'), numpy.__file__"
	@touch $@

setup: os-packages $(VENV)/.installed

demo: setup
	@$(PY) configs/demo.py

# The services some tests need. On a user's machine a service that cannot be set up only makes
# its tests skip (they say why); under CI=true it fails the run, so CI cannot go green without them.
define service
	@bash scripts/$(1) || { if [ "$$CI" = true ]; then echo "error: $(2) (CI=true: a service the tests need)"; exit 1; \
	  else echo "warning: $(2); those tests will skip"; fi; }
endef

# A one-node SLURM cluster on localhost (munge, slurmctld, slurmd) for the sweep tests; installed
# from the OS packages when missing.
slurm:
	$(call service,slurm_local.sh,SLURM could not be started here)

# The MPI build of Meep beside the serial one (unpacked into /opt/meep-mpi) for the MPI sweep test.
mpi-meep:
	$(call service,meep_mpi_local.sh,MPI Meep could not be provided)

# Headless Chromium from the OS packages, for the test that looks at the HTML report.
browser:
	$(call service,chromium_local.sh,Chromium could not be installed)

test: setup slurm mpi-meep browser
	@$(PY) -m pytest -q -p no:cacheprovider --durations=15

bench: setup
	@$(PY) bench/bench_planar.py
	@$(PY) bench/bench_rays.py
	@$(PY) bench/bench_sweep.py
	@$(PY) bench/bench_runner.py
	@$(PY) bench/validate_multipass.py speed

clean:
	rm -rf $(VENV) demo_output
