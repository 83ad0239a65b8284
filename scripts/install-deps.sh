#!/usr/bin/env bash
# Installs the Debian 12 packages ellipsa needs, only those that are missing.
# Idempotent; uses sudo when not root. No downloads other than Debian packages.
set -euo pipefail

packages=(
  build-essential cmake pkg-config
  libeigen3-dev libopenblas-dev liblapacke-dev libboost-math-dev
  libgtest-dev libgmock-dev libbenchmark-dev
  doxygen nlohmann-json3-dev libcli11-dev
  r-mathlib                      # reference distribution functions for the tests
  python3 python3-numpy          # Python binding and its smoke test
  r-base-core                    # R binding and its smoke test
  mono-mcs mono-runtime          # C# binding and its smoke test
  gfortran                       # Fortran binding and its smoke test
  clang libclang-rt-14-dev       # fuzz targets (libFuzzer)
  valgrind                       # memcheck over the C-interface tests (scripts/run-valgrind.sh)
  chromium                       # renders the HTML report in its end-to-end test
  abi-compliance-checker universal-ctags  # ABI check (scripts/check-abi.sh)
  gnumeric gnumeric-plugins-extra         # spreadsheet host and its Python plugin loader (sheet test)
  libreoffice-calc-nogui python3-uno      # second spreadsheet host, its Python UNO bridge (sheet test)
  libreoffice-dev                         # unoidl-write: the Calc add-in type library at build time
  libopenmpi-dev openmpi-bin              # ellipsa-mpi, the distributed driver, and its test (mpirun)
)

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ ${#missing[@]} -eq 0 ]; then
  echo "deps: all ${#packages[@]} packages present"
  exit 0
fi

sudo=""
if [ "$(id -u)" -ne 0 ]; then sudo="sudo"; fi
echo "deps: installing ${missing[*]}"
$sudo apt-get update -qq
DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends "${missing[@]}"
