#!/usr/bin/python3
"""Checks of the tiny job's outputs that fail today because of two writer bugs; CTest registers this script as
the DISABLED test outputs_known_writer_bugs (tests/apps/run_tests.cmake). Enable it with the fixes.

Usage: check_known_bugs.py OUTPUT_DIR

  1. results.h5 /training/record_NNNNN attribute `seed` is the member's seed as an unsigned 64-bit integer, equal to
     the matching entry of /provenance/seeds (uint64). Today libseq/src/io/results_hdf5.cpp writes it with
     attr_int(static_cast<std::int64_t>(record.seed)), so h5py (python3-h5py) reads seeds >= 2^63 as negative
     numbers. Checked with h5py: the set of record seeds equals the set of provenance seeds.
  2. hindcasts.nc variable `alt` (station elevation above sea level, units m, positive up) carries the CF standard
     name `altitude` ("height above the geoid"), not `height` ("height above the surface"): CF Standard Name
     Table, entries altitude and height (from memory of the table's wording). The input catchments.nc uses
     `altitude`; today libseq/src/io/results_netcdf.cpp writes `height`. Checked with xarray (python3-xarray).
Pass rule: both hold.
"""
import sys

try:
    import h5py
    import xarray as xr
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian packages python3-h5py, python3-xarray and python3-netcdf4")


def main():
    if len(sys.argv) != 2:
        sys.exit("FAIL: usage: check_known_bugs.py OUTPUT_DIR")
    out_dir = sys.argv[1]
    problems = []
    with h5py.File(f"{out_dir}/results.h5", "r") as f:
        record_seeds = sorted(int(f["training"][r].attrs["seed"]) for r in f["training"])
        provenance_seeds = sorted(int(s) for s in f["provenance/seeds"][()])
    if record_seeds != provenance_seeds:
        problems.append(f"results.h5: /training/*/seed {record_seeds} differ from /provenance/seeds {provenance_seeds}")
    ds = xr.open_dataset(f"{out_dir}/hindcasts.nc")
    alt_name = ds["alt"].attrs.get("standard_name")
    if alt_name != "altitude":
        problems.append(f"hindcasts.nc: alt has standard_name {alt_name!r}, expected 'altitude'")
    if problems:
        sys.exit("FAIL: " + "\n  ".join(problems))
    print("PASS known writer bugs are fixed")


if __name__ == "__main__":
    main()
