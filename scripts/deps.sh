#!/bin/sh
# deps.sh MODE: make sure what kweave needs is installed.
#   MODE=build: compiler libraries (FFTW, libpng, cJSON, cairo, HDF5, pkg-config)
#   MODE=python: build + python3-dev and python3-numpy (the Python package)
#   MODE=test:  build + python + Criterion + a C++ compiler (the header test) + Python
#               reference libraries (numpy, scipy, scikit-image, PyWavelets,
#               pytest; h5py and nibabel for the file-format checks) for
#               /usr/bin/python3; Chromium (Debian's chromium) for the check that
#               opens report.html in a headless browser (tests/ref/test_report_html.py);
#               Open MPI (the sweep's MPI build and its check under mpirun)
# Missing Debian packages are installed with apt-get when run as root;
# otherwise the script names them and fails.
mode=${1:-build}
pkgs=""
need() { pkgs="$pkgs $1"; }

command -v pkg-config >/dev/null 2>&1 || need pkg-config
for pc in fftw3f:libfftw3-dev libpng:libpng-dev libcjson:libcjson-dev cairo:libcairo2-dev; do
    mod=${pc%%:*}; deb=${pc#*:}
    if ! command -v pkg-config >/dev/null 2>&1 || ! pkg-config --exists "$mod" 2>/dev/null; then
        need "$deb"
    fi
done
# HDF5 (the CLI's HDF5 input, cli/h5.c): Debian's serial build
if ! { command -v pkg-config >/dev/null 2>&1 && { pkg-config --exists hdf5-serial 2>/dev/null ||
       pkg-config --exists hdf5 2>/dev/null; }; } && [ ! -f /usr/include/hdf5/serial/hdf5.h ]; then
    need libhdf5-dev
fi
if [ "$mode" = test ] || [ "$mode" = python ]; then
    [ -x /usr/bin/python3 ] || need python3
    /usr/bin/python3 -c "import sysconfig, os, sys; sys.exit(not os.path.exists(os.path.join(sysconfig.get_paths()['include'], 'Python.h')))" \
        >/dev/null 2>&1 || need python3-dev
    /usr/bin/python3 -c "import numpy" >/dev/null 2>&1 || need python3-numpy
fi
if [ "$mode" = test ]; then
    if ! command -v pkg-config >/dev/null 2>&1 || ! pkg-config --exists criterion 2>/dev/null; then
        need libcriterion-dev
    fi
    # the C++ include test of the public headers (tests/api/cxx_include.cpp)
    command -v "${CXX:-c++}" >/dev/null 2>&1 || need g++
    [ -x /usr/bin/python3 ] || need python3
    for m in numpy:python3-numpy scipy:python3-scipy skimage:python3-skimage \
             pywt:python3-pywt pytest:python3-pytest h5py:python3-h5py nibabel:python3-nibabel; do
        mod=${m%%:*}; deb=${m#*:}
        /usr/bin/python3 -c "import $mod" >/dev/null 2>&1 || need "$deb"
    done
    command -v chromium >/dev/null 2>&1 || need chromium
    # Open MPI: `kweave sweep` under mpirun (tests/ref/test_sweep_mpi.py)
    command -v mpicc >/dev/null 2>&1 || need libopenmpi-dev
    command -v mpirun >/dev/null 2>&1 || need openmpi-bin
fi
[ -z "$pkgs" ] && exit 0
if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "kweave: installing missing packages:$pkgs" >&2
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >/dev/null && apt-get install -y -qq --no-install-recommends $pkgs >/dev/null \
        || { echo "kweave: apt-get install failed for:$pkgs" >&2; exit 1; }
    exit 0
fi
echo "kweave: missing packages:$pkgs" >&2
echo "kweave: install them with: sudo apt-get install$pkgs" >&2
exit 1
