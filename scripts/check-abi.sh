#!/usr/bin/env bash
# Checks that the built shared library keeps the public ABI recorded in abi/
# for the last release of the same major version; see docs/versioning.md.
#
#   scripts/check-abi.sh [--header-dir DIR] [--record-only] [--update [--force]] [LIBRARY]
#
# LIBRARY defaults to build/lib/libellipsa.so. Two independent checks, both
# must pass:
#  1. abi/abi_record.py: every function prototype (as the compiler parses the
#     header), every typedef, the size/alignment/offsets of every public struct
#     (measured by a compiled C program), every macro value and every exported
#     symbol, compared line by line with abi/ellipsa-X.Y.Z.record.txt.
#     Changes and removals fail; additions are reported.
#  2. abi-compliance-checker: its own ABI dump of the public header (compiled by
#     GCC) and of the library's exported symbols, compared with
#     abi/ellipsa-X.Y.Z.acc.dump.gz for binary and for source compatibility.
#     (abi-dumper, which reads the library's DWARF instead, needs minutes and
#     most of a gigabyte here: the debug information of the statically linked
#     numerical core is ~70 MB. So the dump comes from the header.)
# --update records the header's version X.Y.Z (for a deliberate release); it
# refuses to overwrite an existing record unless --force is given.
# --header-dir checks a different copy of the header (used to prove that the
# check fails on an incompatible change without touching the tree);
# --record-only runs check 1 only (the fast one; it is the one that sees macro
# values, which abi-compliance-checker reports as warnings only).
# Offline; a few seconds.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
header_dir=$root/capi/include
update=0
force=0
record_only=0
lib=""
while [ $# -gt 0 ]; do
  case $1 in
    --header-dir) header_dir=$(cd "$2" && pwd); shift 2 ;;
    --update) update=1; shift ;;
    --force) force=1; shift ;;
    --record-only) record_only=1; shift ;;
    -h|--help) sed -n '2,26p' "$0"; exit 0 ;;
    *) lib=$(cd "$(dirname "$1")" && pwd)/$(basename "$1"); shift ;;
  esac
done
lib=${lib:-$root/build/lib/libellipsa.so}
cc=${CC:-cc}
[ -f "$lib" ] || { echo "check-abi: no library at $lib (build the 'ellipsa' target first)" >&2; exit 2; }
tools="python3 nm gzip"
[ $record_only = 1 ] || tools="$tools abi-compliance-checker"
for tool in $tools; do
  command -v "$tool" >/dev/null || { echo "check-abi: $tool is missing (scripts/install-deps.sh installs it)" >&2; exit 2; }
done
if [ $record_only = 1 ] && [ $update = 1 ]; then
  echo "check-abi: --update records both forms; drop --record-only" >&2
  exit 2
fi

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

macro() { sed -n "s/^#define $1 \([0-9][0-9]*\).*/\1/p" "$header_dir/ellipsa.h"; }
version="$(macro ELLIPSA_VERSION_MAJOR).$(macro ELLIPSA_VERSION_MINOR).$(macro ELLIPSA_VERSION_PATCH)"
major=${version%%.*}

python3 "$root/abi/abi_record.py" record "$header_dir" "$lib" "$cc" > "$work/current.record.txt"

# abi-compliance-checker's dump of the header and library (it writes logs into
# the current directory, hence the subshell in the scratch directory).
acc_dump() {
  cat > "$work/descriptor.xml" <<EOF
<version>$version</version>
<headers>$header_dir/ellipsa.h</headers>
<libs>$lib</libs>
<gcc_options>-std=c99</gcc_options>
EOF
  (cd "$work" && abi-compliance-checker -l ellipsa -lang C -dump descriptor.xml \
    -dump-path "$work/current.acc.dump" >"$work/acc-dump.log" 2>&1) || { cat "$work/acc-dump.log"; exit 2; }
}

if [ $update = 1 ]; then
  record=$root/abi/ellipsa-$version.record.txt
  if [ -e "$record" ] && [ $force = 0 ]; then
    echo "check-abi: $record exists; a released ABI is not rewritten (--force only to repair it)" >&2
    exit 2
  fi
  acc_dump
  cp "$work/current.record.txt" "$record"
  gzip -9n < "$work/current.acc.dump" > "$root/abi/ellipsa-$version.acc.dump.gz"
  echo "check-abi: recorded the ABI of $version in abi/ellipsa-$version.record.txt and .acc.dump.gz"
  exit 0
fi

# The reference: the newest recorded release with the same major version.
reference=$(ls "$root"/abi/ellipsa-"$major".*.record.txt 2>/dev/null | sort -V | tail -n 1 || true)
if [ -z "$reference" ]; then
  echo "check-abi: no recorded ABI for major version $major; record it with scripts/check-abi.sh --update" >&2
  exit 1
fi
ref_version=$(basename "$reference" .record.txt)
ref_version=${ref_version#ellipsa-}
echo "check-abi: $lib (header $version) against the recorded ABI of $ref_version"

status=0
echo "-- 1. prototypes, layouts, macros, symbols (abi/abi_record.py)"
python3 "$root/abi/abi_record.py" compare "$reference" "$work/current.record.txt" || status=1

if [ $record_only = 1 ]; then
  [ $status = 0 ] && echo "check-abi: compatible with $ref_version (check 2 skipped)"
  exit $status
fi

echo "-- 2. abi-compliance-checker (binary and source)"
acc_dump
gzip -dc "$root/abi/ellipsa-$ref_version.acc.dump.gz" > "$work/reference.acc.dump"
for kind in binary source; do
  if (cd "$work" && abi-compliance-checker -l ellipsa -old reference.acc.dump -new current.acc.dump \
      -"$kind" -report-format xml -report-path "$work/$kind.xml" >"$work/$kind.log" 2>&1); then
    grep -E "^(Binary|Source) compatibility:" "$work/$kind.log" || tail -n 3 "$work/$kind.log"
  else
    grep -E "^(Binary|Source) compatibility:|^Total|ERROR" "$work/$kind.log" || cat "$work/$kind.log"
    python3 "$root/abi/abi_record.py" acc-summary "$work/$kind.xml" || true
    status=1
  fi
done

if [ $status = 0 ]; then
  echo "check-abi: compatible with $ref_version"
else
  echo "check-abi: INCOMPATIBLE with $ref_version (see docs/versioning.md)" >&2
fi
exit $status
