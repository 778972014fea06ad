#!/usr/bin/env bash
# The main job on the bundled demo data (called by `scripts/setup.sh --demo` after the build): a look at the
# invented demo files, then the full batch job on the catchments (daily discharge) and on the feeders (hourly load).
set -euo pipefail
build_dir="${1:-build}"
top="$(cd "$(dirname "$0")/.." && pwd)"
cd "$top"
runnel="$build_dir/apps/runnel"
"$runnel" inspect data-samples/catchments.nc data-samples/feeders.nc
for job in examples/hydrology.toml examples/load.toml; do
  echo
  echo "== runnel run $job"
  "$runnel" run "$job"
done
echo
echo "Outputs (HDF5 results, CF NetCDF hindcasts, GeoJSON stations, HTML report):"
ls -1 runnel-output/*/*
