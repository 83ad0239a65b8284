#!/usr/bin/env bash
# Fails when the shared library exports any defined dynamic symbol without the
# ellipsa_ prefix, or exports nothing at all.
set -euo pipefail
lib=$1
symbols=$(nm -D --defined-only "$lib" | awk 'NF >= 3 {print $3}')
count=$(printf '%s\n' "$symbols" | grep -c . || true)
if [ "$count" -eq 0 ]; then
  echo "no exported symbols found in $lib" >&2
  exit 1
fi
bad=$(printf '%s\n' "$symbols" | grep -v '^ellipsa_' || true)
if [ -n "$bad" ]; then
  echo "symbols exported without the ellipsa_ prefix:" >&2
  printf '%s\n' "$bad" >&2
  exit 1
fi
echo "$count exported symbols, all prefixed ellipsa_"
