#!/usr/bin/python3
"""Outside check of hindcasts.nc (docs/output-format.md) with xarray (Debian python3-xarray on python3-netcdf4),
against results.h5 read with h5py (Debian python3-h5py).

Usage: check_hindcasts_nc.py OUTPUT_DIR

Checks, on the outputs of the tiny job (tests/apps/data/tiny_catchments.toml):
  * xarray.open_dataset decodes `time` (CF units "seconds since 1970-01-01 00:00:00", calendar standard) to
    numpy datetime64, and these times equal the union of the sites' /hindcasts/<site>/issue_time of results.h5
    (seconds since 1970-01-01T00:00:00Z) exactly;
  * `lead` is 24 h per daily lead step (decoded by xarray to timedelta64 or kept as float hours);
  * global attributes: featureType == "timeSeries" and Conventions contains "CF-1.8" (CF conventions 1.8,
    section 9 "Discrete sampling geometries" and appendix H.2 for timeSeries); ACDD-1.3 `title`, `summary` and
    `history` present and non-empty (ACDD 1.3, "Highly recommended" attributes); the caution text equals the
    caution attribute of results.h5;
  * station_id has cf_role == "timeseries_id" (CF 1.8 section 9.5) and lists the results.h5 site ids in order;
    lat/lon carry standard_name latitude/longitude and equal results.h5's site table;
  * for every station and method: <method>_mean and `observed` (station, time, lead) equal results.h5's arrays
    at the matching times (float32 both sides: exact, NaN where results.h5 has NaN since the writer's fill value
    is masked to NaN by xarray); <method>_quantiles has the quantile dimension of the results.h5 levels.
Pass rule: every check holds; exit 1 with a message naming the variable on the first failure.
"""
import sys

try:
    import numpy as np
    import xarray as xr
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian packages python3-xarray and python3-netcdf4")
try:
    import netCDF4  # noqa: F401  (the engine xarray needs for NetCDF-4 files)
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian package python3-netcdf4")
try:
    import h5py
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian package python3-h5py")


def fail(message):
    sys.exit("FAIL: " + message)


def expect(condition, message):
    if not condition:
        fail(message)


def text(value):
    return value.decode("utf-8") if isinstance(value, bytes) else str(value)


def main():
    if len(sys.argv) != 2:
        fail("usage: check_hindcasts_nc.py OUTPUT_DIR")
    out_dir = sys.argv[1]
    nc_path, h5_path = f"{out_dir}/hindcasts.nc", f"{out_dir}/results.h5"
    ds = xr.open_dataset(nc_path)
    h5 = h5py.File(h5_path, "r")

    expect(np.issubdtype(ds["time"].dtype, np.datetime64), f"{nc_path}: time decoded to {ds['time'].dtype}, not datetime64")
    ids = [text(v) for v in h5["sites/id"][()]]
    groups = [text(v) for v in h5["sites/group"][()]]
    union = sorted({int(t) for g in groups for t in h5[f"hindcasts/{g}/issue_time"][()]})
    want_times = np.array(union, dtype="int64").astype("datetime64[s]").astype("datetime64[ns]")
    got_times = ds["time"].values.astype("datetime64[ns]")
    expect(len(got_times) == len(want_times) and (got_times == want_times).all(),
           f"{nc_path}: time {got_times[:3]}... ({len(got_times)}) differs from results.h5 issue times "
           f"{want_times[:3]}... ({len(want_times)})")
    print(f"ok time: {len(got_times)} datetime64 values equal to results.h5 issue times "
          f"({str(got_times[0])[:10]} .. {str(got_times[-1])[:10]})")

    lead = ds["lead"].values
    hours = lead / np.timedelta64(1, "h") if np.issubdtype(lead.dtype, np.timedelta64) else lead.astype(float)
    want_hours = [24.0 * int(k) for k in h5["leads"][()]]
    expect(list(hours) == want_hours, f"{nc_path}: lead {hours} hours, expected {want_hours}")
    print(f"ok lead: {list(hours)} hours")

    a = ds.attrs
    expect(a.get("featureType") == "timeSeries", f"{nc_path}: featureType {a.get('featureType')!r}")
    expect("CF-1.8" in a.get("Conventions", ""), f"{nc_path}: Conventions {a.get('Conventions')!r}")
    for name in ("title", "summary", "history"):
        expect(str(a.get(name, "")).strip() != "", f"{nc_path}: ACDD attribute {name} missing or empty")
    expect(a.get("caution") == text(h5.attrs["caution"]), f"{nc_path}: caution differs from results.h5")
    print(f"ok global attributes: featureType timeSeries, Conventions {a['Conventions']!r}, title {a['title']!r}, "
          f"summary, history {a['history'][:20]!r}..., caution equal to results.h5")

    expect(ds["station_id"].attrs.get("cf_role") == "timeseries_id",
           f"{nc_path}: station_id cf_role {ds['station_id'].attrs.get('cf_role')!r}")
    nc_ids = [str(v) for v in ds["station_id"].values]
    expect(nc_ids == ids, f"{nc_path}: station_id {nc_ids}, results.h5 {ids}")
    expect(ds["lat"].attrs.get("standard_name") == "latitude" and ds["lon"].attrs.get("standard_name") == "longitude",
           f"{nc_path}: lat/lon standard_name")
    expect(np.array_equal(ds["lat"].values, h5["sites/latitude"][()]) and
           np.array_equal(ds["lon"].values, h5["sites/longitude"][()]), f"{nc_path}: lat/lon differ from results.h5")
    print(f"ok stations: {nc_ids}, station_id cf_role timeseries_id, lat/lon equal to results.h5")

    time_index = {int(t): i for i, t in enumerate(union)}
    compared = 0
    for s, g in enumerate(groups):
        hg = h5[f"hindcasts/{g}"]
        rows = [time_index[int(t)] for t in hg["issue_time"][()]]
        pairs = [("observed", hg["observed"][()])]
        for method in [text(m) for m in hg["methods"][()]]:
            pairs.append((f"{method}_mean", hg[f"{method}/mean"][()]))
            qname = f"{method}_quantiles"
            expect(qname in ds, f"{nc_path}: variable {qname} missing")
            levels = h5[f"hindcasts/{g}/{method}/quantile_levels"][()]
            qdim = ds[qname].dims[-1]
            expect(np.allclose(ds[qdim].values, levels, rtol=0, atol=1e-12),
                   f"{nc_path}: {qdim} {ds[qdim].values} differs from results.h5 levels {levels}")
            pairs.append((qname, hg[f"{method}/quantiles"][()]))
        for name, want in pairs:
            expect(name in ds, f"{nc_path}: variable {name} missing")
            got = ds[name].values[s, rows]
            same = (got == want) | (np.isnan(got) & np.isnan(want))
            expect(got.shape == want.shape and same.all(),
                   f"{nc_path}: {name} at station {ids[s]} differs from results.h5 ({(~same).sum()} values)")
            compared += want.size
    print(f"ok values: {compared} values of observed, *_mean and *_quantiles equal to results.h5")
    print("PASS hindcasts.nc")


if __name__ == "__main__":
    main()
