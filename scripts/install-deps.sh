#!/usr/bin/env bash
# Installs the Debian 12 packages ellipsa needs, only those that are missing.
# Idempotent; uses sudo when not root. No downloads other than Debian packages.
#
#   scripts/install-deps.sh            everything `make test` needs (= make deps)
#   scripts/install-deps.sh library    only what the library and the batch tool
#                                      need to build, configured with
#                                      -DBUILD_TESTING=OFF -DELLIPSA_CALIBRATION=OFF
#   scripts/install-deps.sh --list [library]   print the package names only
#
# On a system that is not Debian 12, or without root or sudo, it installs
# nothing: it says why and lists the packages, so they can be installed by
# hand (or their equivalents found on another system).
set -euo pipefail

# What the library (core + C interface) and the batch tool compile against.
library=(
  build-essential cmake pkg-config
  libeigen3-dev libopenblas-dev liblapacke-dev libboost-math-dev
  nlohmann-json3-dev libcli11-dev
)
# The bindings, hosts and drivers, each built only when its tools are present,
# and what the test suite itself uses.
rest=(
  libgtest-dev                   # the unit tests (GoogleTest)
  doxygen                        # reference documentation from the header (make docs, CI)
  clang-format                   # the layout check (scripts/check-format.sh, CI)
  libbenchmark-dev               # make bench (Google Benchmark)
  r-mathlib                      # reference distribution functions for the tests
  python3 python3-numpy          # Python binding and its smoke test
  python3-pip python3-setuptools python3-wheel  # pip install of the Python binding (its install test)
  r-base-core                    # R binding and its smoke test
  mono-mcs mono-runtime          # C# binding and its smoke test
  mono-xbuild                    # builds the C# binding's project file (Ellipsa.csproj; its install test)
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

list_only=0
if [ "${1:-}" = "--list" ]; then list_only=1; shift; fi
case "${1:-all}" in
  all) packages=("${library[@]}" "${rest[@]}") ;;
  library) packages=("${library[@]}") ;;
  *) echo "usage: $0 [--list] [all|library]" >&2; exit 2 ;;
esac
if [ $list_only -eq 1 ]; then
  printf '%s\n' "${packages[@]}"
  exit 0
fi

os_id="" os_version=""
if [ -r /etc/os-release ]; then
  # shellcheck disable=SC1091
  os_id=$(. /etc/os-release && echo "${ID:-}")
  os_version=$(. /etc/os-release && echo "${VERSION_ID:-}")
fi
if [ "$os_id" != "debian" ] || [ "$os_version" != "12" ] || ! command -v dpkg-query >/dev/null; then
  echo "deps: this script installs Debian 12 packages; this system is '${os_id:-unknown} ${os_version:-?}'," >&2
  echo "deps: so it installs nothing. Install these (or their equivalents) by hand:" >&2
  echo "  ${packages[*]}" >&2
  exit 1
fi

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

as_root=()
if [ "$(id -u)" -ne 0 ]; then
  if ! command -v sudo >/dev/null; then
    echo "deps: installing needs root, and there is no sudo here." >&2
    echo "deps: as root, run: apt-get install --no-install-recommends ${missing[*]}" >&2
    exit 1
  fi
  if ! sudo -n true 2>/dev/null && ! [ -t 0 ]; then
    echo "deps: installing needs root; sudo asks for a password and there is no terminal to type it." >&2
    echo "deps: as root, run: apt-get install --no-install-recommends ${missing[*]}" >&2
    exit 1
  fi
  as_root=(sudo)
fi
echo "deps: installing ${missing[*]}"
# env passes the setting through sudo, which would otherwise drop it.
"${as_root[@]}" env DEBIAN_FRONTEND=noninteractive apt-get update -qq
"${as_root[@]}" env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${missing[@]}"
