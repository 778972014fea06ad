#!/usr/bin/env bash
# The main job on the bundled demo data (called by `scripts/setup.sh --demo` after the build).
set -euo pipefail
build_dir="${1:-build}"
top="$(cd "$(dirname "$0")/.." && pwd)"
cd "$top"
"$build_dir/apps/runnel" inspect data-samples/*.nc data-samples/*.csv data-samples/*.h5
