#!/usr/bin/env bash
# runnel set-up: installs the Debian packages that are missing (skips what is present; needs root or sudo),
# configures and builds (Release, -O3, portable), then optionally runs the demo job or the whole test suite.
#
#   bash scripts/setup.sh --demo      set up, build, run the main job on the bundled demo data
#   bash scripts/setup.sh --test      set up, build, run the whole test suite (what CI runs)
#   bash scripts/setup.sh             set up and build only
# Options: --native (-march=native), --sanitize (ASan + UBSan build in build-sanitize/), --build-dir DIR,
#          --reference (also install the packages that regenerate validation references: PyTorch, R, statsmodels).
set -euo pipefail

mode=build
native=OFF
sanitize=OFF
reference=0
build_dir=""
while [ $# -gt 0 ]; do
  case "$1" in
    --demo) mode=demo ;;
    --test) mode=test ;;
    --native) native=ON ;;
    --sanitize) sanitize=ON ;;
    --reference) reference=1 ;;
    --build-dir) build_dir="$2"; shift ;;
    -h|--help) sed -n '2,11p' "$0"; exit 0 ;;
    *) echo "setup.sh: unknown option '$1' (see --help)" >&2; exit 1 ;;
  esac
  shift
done

top="$(cd "$(dirname "$0")/.." && pwd)"
cd "$top"
if [ -z "$build_dir" ]; then
  if [ "$sanitize" = ON ]; then build_dir=build-sanitize; else build_dir=build; fi
fi

# --- Debian packages -------------------------------------------------------------------------------------------------
# Build: compiler, CMake and the libraries named in docs/dependencies.md.
packages=(g++ cmake make git pkg-config libeigen3-dev libboost-math-dev libhdf5-dev libnetcdf-dev libgtest-dev
          libgmock-dev libtomlplusplus-dev libcli11-dev libbenchmark-dev)
# Tests: command-line tools and Python readers that check our outputs from the outside.
if [ "$mode" = test ]; then
  packages+=(netcdf-bin hdf5-tools python3 python3-numpy python3-h5py python3-netcdf4 python3-xarray gdal-bin
             chromium fonts-liberation)
fi
# Regenerating the stored reference values in validation/ (not needed to run the tests).
if [ "$reference" = 1 ]; then
  packages+=(python3-torch python3-scipy python3-statsmodels python3-cftime r-base-core r-cran-tseries
             r-cran-forecast)
fi
missing=()
for package in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$package")
  fi
done
if [ ${#missing[@]} -gt 0 ]; then
  echo "setup.sh: installing missing Debian packages: ${missing[*]}"
  if [ "$(id -u)" = 0 ]; then
    sudo_cmd=()
  elif command -v sudo >/dev/null 2>&1; then
    sudo_cmd=(sudo)
  else
    echo "setup.sh: packages missing (${missing[*]}) and not root and no sudo; install them as root" >&2
    exit 1
  fi
  "${sudo_cmd[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
else
  echo "setup.sh: all Debian packages present"
fi

# --- Configure and build ---------------------------------------------------------------------------------------------
cmake -S . -B "$build_dir" -DCMAKE_BUILD_TYPE=Release -DLIBSEQ_WITH_NATIVE="$native" \
      -DLIBSEQ_WITH_SANITIZERS="$sanitize" -DLIBSEQ_BUILD_TESTS=ON -DLIBSEQ_BUILD_APPS=ON
cmake --build "$build_dir" -j "$(nproc)"

# --- Run ---------------------------------------------------------------------------------------------------------
case "$mode" in
  demo)
    exec bash scripts/demo.sh "$build_dir"
    ;;
  test)
    exec ctest --test-dir "$build_dir" --output-on-failure -j "$(nproc)"
    ;;
esac
