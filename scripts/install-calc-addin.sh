#!/usr/bin/env bash
# Installs ellipsa's sheet functions into LibreOffice Calc and checks that
# Calc computes one of them.
#
#   scripts/install-calc-addin.sh [BUILD_DIR]     (default: build; `make calc-addin`)
#
# A normal user gets the extension in their own profile (unopkg add). unopkg
# refuses to install into root's own profile, so root installs it for every
# user of the machine (unopkg add --shared). Uninstall: unopkg remove
# [--shared] org.ellipsa.calc
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-build}
case "$build" in /*) ;; *) build="$root/$build" ;; esac
oxt="$build/calc/ellipsa-calc.oxt"
command -v soffice >/dev/null && command -v unopkg >/dev/null ||
  { echo "install-calc-addin: LibreOffice Calc is not installed (make deps)" >&2; exit 1; }
[ -f "$oxt" ] || { echo "install-calc-addin: $oxt missing: run make build first" >&2; exit 1; }

shared=()
[ "$(id -u)" -eq 0 ] && shared=(--shared)
unopkg remove "${shared[@]}" org.ellipsa.calc >/dev/null 2>&1 || true
unopkg add "${shared[@]}" "$oxt"
echo "installed: $oxt${shared:+ (for every user: run as root)}"

# The check: Calc computes one catalog function in a one-cell workbook.
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
cat > "$tmp/check.fods" <<'XML'
<?xml version="1.0" encoding="UTF-8"?>
<office:document xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0"
 xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0"
 xmlns:of="urn:oasis:names:tc:opendocument:xmlns:of:1.2" office:version="1.2"
 office:mimetype="application/vnd.oasis.opendocument.spreadsheet">
 <office:body><office:spreadsheet><table:table table:name="S"><table:table-row>
  <table:table-cell table:formula="of:=ORG.ELLIPSA.SHEETFUNCTIONS.CHI2INV(0.95;3)"/>
 </table:table-row></table:table></office:spreadsheet></office:body>
</office:document>
XML
(cd "$tmp" && soffice --headless --norestore --convert-to csv check.fods >/dev/null 2>&1) || true
value=$(head -n1 "$tmp/check.csv" 2>/dev/null || true)
# 7.815: chi-square 0.05 upper critical value, 3 df (NIST/SEMATECH e-Handbook 1.3.6.7.4).
if awk -v v="$value" 'BEGIN { exit !(v + 0 > 7.814 && v + 0 < 7.816) }'; then
  echo "check: Calc computes =ELL.CHI2INV(0.95;3) = $value"
else
  echo "install-calc-addin: Calc did not compute the check cell (got '$value')" >&2
  exit 1
fi
