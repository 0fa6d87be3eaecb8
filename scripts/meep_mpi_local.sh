#!/usr/bin/env bash
# Make the MPI build of Meep usable on this machine next to the serial one (for the MPI sweep test).
#
# Debian's python3-meep-mpi-default conflicts with python3-meep (which the project uses), so it is
# not installed: its two packages are unpacked into /opt/meep-mpi, and the MPI runtime and mpi4py
# come from the OS packages. Use it with, in that command only (never globally: the serial import
# breaks with the MPI library on the path, and the MPI module silently loads the serial library
# without it):
#   PYTHONPATH=/opt/meep-mpi/usr/lib/python3/dist-packages \
#   LD_LIBRARY_PATH=/opt/meep-mpi/usr/lib/x86_64-linux-gnu mpirun -np 2 python3 script.py
# Idempotent; exit 0 when two ranks see each other, else one line on stderr and exit 1.
set -u
PREFIX=/opt/meep-mpi
PYPATH=$PREFIX/usr/lib/python3/dist-packages
LIBPATH=$PREFIX/usr/lib/x86_64-linux-gnu
die() { echo "meep_mpi_local: cannot provide MPI Meep: $*" >&2; exit 1; }
SUDO=""; [ "$(id -u)" = 0 ] || SUDO="sudo -n"
export DEBIAN_FRONTEND=noninteractive

check() {
  PYTHONPATH=$PYPATH LD_LIBRARY_PATH=$LIBPATH timeout 120 mpirun --allow-run-as-root --oversubscribe -np 2 \
    /usr/bin/python3 -c "import sys, meep as mp; assert mp.count_processors() == 2; sys.stderr.write('ok\n')" \
    2>&1 | grep -c '^ok$'
}

if [ -d "$PYPATH/meep" ] && command -v mpirun >/dev/null && [ "$(check)" = 2 ]; then
  exit 0
fi
if ! command -v mpirun >/dev/null || ! /usr/bin/python3 -c "import mpi4py" 2>/dev/null \
   || ! ls /usr/lib/x86_64-linux-gnu/libhdf5_openmpi.so.* >/dev/null 2>&1; then
  $SUDO apt-get update -qq >/dev/null 2>&1
  timeout 600 $SUDO apt-get install -y -qq --no-install-recommends openmpi-bin libopenmpi3 libhdf5-openmpi-103-1 \
    python3-mpi4py >/dev/null 2>&1 || die "apt-get could not install openmpi-bin, libhdf5-openmpi-103-1, python3-mpi4py"
fi
if [ ! -d "$PYPATH/meep" ]; then
  work=$(mktemp -d)
  (cd "$work" && timeout 300 apt-get download python3-meep-mpi-default libmeep-mpi-default30 >/dev/null 2>&1) \
    || { $SUDO apt-get update -qq >/dev/null 2>&1;
         (cd "$work" && timeout 300 apt-get download python3-meep-mpi-default libmeep-mpi-default30 >/dev/null 2>&1); } \
    || die "apt-get download python3-meep-mpi-default libmeep-mpi-default30 failed"
  $SUDO mkdir -p "$PREFIX"
  for deb in "$work"/*.deb; do $SUDO dpkg -x "$deb" "$PREFIX" || die "dpkg -x $deb failed"; done
  rm -rf "$work"
fi
[ "$(check)" = 2 ] || die "two MPI ranks of Meep did not see each other"
echo "meep_mpi_local: MPI Meep ready in $PREFIX"
