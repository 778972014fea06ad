#!/bin/sh
# Copies the tables the validation suite generated (<build>/validation/validation_tables.md, written by
# tests/validation/suite_test.cpp) into docs/validation.md between the GENERATED TABLES markers.
# Usage: validation/suite/update_docs.sh [build-dir]   (default: build)
set -eu
root=$(cd "$(dirname "$0")/../.." && pwd)
build=${1:-build}
case $build in /*) ;; *) build=$root/$build ;; esac
tables=$build/validation/validation_tables.md
doc=$root/docs/validation.md
begin='<!-- BEGIN GENERATED TABLES (validation/suite/update_docs.sh) -->'
end='<!-- END GENERATED TABLES -->'
[ -f "$tables" ] || { echo "update_docs.sh: $tables not found; run: ctest --test-dir $build -L validation" >&2; exit 2; }
grep -qF "$begin" "$doc" && grep -qF "$end" "$doc" || { echo "update_docs.sh: markers missing in $doc" >&2; exit 2; }
tmp=$(mktemp "$doc.XXXXXX")
awk -v begin="$begin" -v end="$end" -v tables="$tables" '
  $0 == begin { print; while ((getline line < tables) > 0) print line; skip = 1; next }
  $0 == end   { skip = 0 }
  !skip       { print }
' "$doc" > "$tmp"
mv "$tmp" "$doc"
chmod 644 "$doc"
echo "update_docs.sh: $doc updated from $tables"
