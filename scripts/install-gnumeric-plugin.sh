#!/usr/bin/env bash
# Installs ellipsa's sheet functions into Gnumeric for the current user (root
# or not) and checks that Gnumeric sees them.
#
#   scripts/install-gnumeric-plugin.sh [BUILD_DIR]     (default: build; `make gnumeric-plugin`)
#
# Copies the plugin folder made at build time (BUILD_DIR/gnumeric/ellipsa) and
# the shared library into ~/.gnumeric/<version>/plugins/ellipsa, then has
# Gnumeric recalculate a one-cell workbook headless and compares the value.
# Uninstall: remove that folder.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-build}
case "$build" in /*) ;; *) build="$root/$build" ;; esac
plugin="$build/gnumeric/ellipsa"
library=$(readlink -f "$build/lib/libellipsa.so")

command -v ssconvert >/dev/null || { echo "install-gnumeric-plugin: Gnumeric is not installed (make deps)" >&2; exit 1; }
[ -f "$plugin/plugin.xml" ] || { echo "install-gnumeric-plugin: $plugin missing: run make build first" >&2; exit 1; }
version=$(ssconvert --version 2>&1 | sed -n "s/.*version '\([0-9.]*\)'.*/\1/p" | head -n1)
[ -n "$version" ] || { echo "install-gnumeric-plugin: cannot read Gnumeric's version" >&2; exit 1; }

dest="$HOME/.gnumeric/$version/plugins/ellipsa"
mkdir -p "$dest"
for f in plugin.xml catalog.json ellipsa_gnumeric.py ellipsa_sheet.py; do
  install -m 644 "$plugin/$f" "$dest/$f"
done
install -m 755 "$library" "$dest/libellipsa.so"
# The copy's path, and the version the plugin was made for (checked at load).
sed 's|"library": "[^"]*"|"library": "'"$dest/libellipsa.so"'"|' "$plugin/paths.json" > "$dest/paths.json"
echo "installed: $dest ($(grep -c '<function ' "$dest/plugin.xml") functions)"

# The check: Gnumeric itself computes one catalog function.
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
cat > "$tmp/check.gnumeric" <<'XML'
<?xml version="1.0" encoding="UTF-8"?>
<gnm:Workbook xmlns:gnm="http://www.gnumeric.org/v10.dtd">
 <gnm:SheetNameIndex><gnm:SheetName>S</gnm:SheetName></gnm:SheetNameIndex>
 <gnm:Sheets><gnm:Sheet><gnm:Name>S</gnm:Name><gnm:MaxCol>1</gnm:MaxCol><gnm:MaxRow>1</gnm:MaxRow>
  <gnm:Cells><gnm:Cell Row="0" Col="0">=ELL.CHI2INV(0.95,3)</gnm:Cell></gnm:Cells>
 </gnm:Sheet></gnm:Sheets>
</gnm:Workbook>
XML
env -u DISPLAY ssconvert --recalc "$tmp/check.gnumeric" "$tmp/check.csv" >/dev/null 2>&1 || true
value=$(head -n1 "$tmp/check.csv" 2>/dev/null || true)
# 7.815: chi-square 0.05 upper critical value, 3 df (NIST/SEMATECH e-Handbook 1.3.6.7.4).
if awk -v v="$value" 'BEGIN { exit !(v + 0 > 7.8147 && v + 0 < 7.8148) }'; then
  echo "check: Gnumeric computes =ELL.CHI2INV(0.95,3) = $value"
else
  echo "install-gnumeric-plugin: Gnumeric did not compute the check cell (got '$value')" >&2
  exit 1
fi
