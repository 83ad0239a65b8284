#!/usr/bin/env bash
# Compiles a translation unit that includes only the public header, as C99 and
# as C++ (two standards), with every warning an error.
set -euo pipefail
header=$1
cc=$2
cxx=$3
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
inc=$(dirname "$header")
printf '#include "ellipsa.h"\nint ellipsa_header_probe(void) { return ELLIPSA_VERSION_NUMBER + ELLIPSA_OK; }\n' > "$dir/probe.c"
cp "$dir/probe.c" "$dir/probe.cpp"
flags="-Wall -Wextra -pedantic -Werror -fsyntax-only -I$inc"
"$cc" -std=c99 $flags "$dir/probe.c"
echo "C99: ok"
"$cxx" -std=c++11 $flags "$dir/probe.cpp"
echo "C++11: ok"
"$cxx" -std=c++20 $flags "$dir/probe.cpp"
echo "C++20: ok"
