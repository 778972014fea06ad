#!/usr/bin/python3
"""Looks at the demo samples from the outside, with the Debian packages python3-xarray, python3-netcdf4,
python3-h5py (and python3-matplotlib for the optional plot), and prints what it finds.

    /usr/bin/python3 data-samples/generator/check_samples.py data-samples [--plot hydrograph.png]

It decodes the CF files with xarray (CF time decoding, int16 unpacking, _FillValue masking), reads the HDF5 panel
with h5py and the CSV with the standard library, then prints per-site summaries and monthly means and checks that
the three copies agree: the NetCDF and HDF5 catchment values must match (exactly, or within 1e-4 for the discharge
that xarray unpacks in float32 while the generator stores the double-precision decode), the CSV must match feeders.nc to its printed precision. Exit status 1 when a check
fails. It is a developer check of the committed samples, not part of the test suite (CI runs no Python).
"""
import argparse
import csv
import sys
from pathlib import Path

import h5py
import numpy as np
import xarray as xr

failures = []


def check(condition, message):
    print(("ok    " if condition else "FAIL  ") + message)
    if not condition:
        failures.append(message)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("directory", type=Path)
    parser.add_argument("--plot", type=Path, help="write a hydrograph PNG of one catchment here")
    args = parser.parse_args()
    d = args.directory

    cat = xr.open_dataset(d / "catchments.nc")
    print(cat)
    check(cat.attrs["featureType"] == "timeSeries" and cat.attrs["Conventions"] == "CF-1.8", "catchments.nc: CF DSG")
    check(str(cat.time.values[0])[:10] == "2008-01-01", f"catchments.nc: decoded first time {cat.time.values[0]}")
    check(np.all(np.diff(cat.time.values).astype("timedelta64[h]").astype(int) == 24), "catchments.nc: daily step")
    check(cat.discharge.dtype.kind == "f", f"discharge unpacked to {cat.discharge.dtype}")
    for v in ("precipitation", "air_temperature", "discharge"):
        x = cat[v].values
        print(f"  {v:16s} min {np.nanmin(x):8.2f} max {np.nanmax(x):8.2f} mean {np.nanmean(x):8.2f} "
              f"missing {np.isnan(x).sum():5d} ({cat[v].attrs.get('units')})")
    check(float(cat.precipitation.min()) >= 0.0, "precipitation non-negative")
    check(float(cat.discharge.min()) > 0.0, "discharge positive")

    # Monthly climatology of each catchment: precipitation, temperature, discharge.
    monthly = cat.groupby("time.month").mean()
    for s in range(cat.sizes["station"]):
        print(f"  monthly means {str(cat.station_id.values[s])} ({str(cat.station_name.values[s])}):")
        for v in ("precipitation", "air_temperature", "discharge"):
            print(f"    {v:16s} " + " ".join(f"{x:7.2f}" for x in monthly[v].values[:, s]))

    with h5py.File(d / "catchments.h5", "r") as h5:
        check(h5.attrs["runnel_layout"] == "panel" and int(h5.attrs["runnel_layout_version"]) == 1,
              "catchments.h5: layout attributes")
        seconds = h5["time"][...]
        expected = (cat.time.values.astype("datetime64[s]").astype(np.int64))
        check(np.array_equal(seconds, expected), "catchments.h5: /time equals decoded NetCDF times")
        ids = [s.decode() if isinstance(s, bytes) else s for s in h5["sites/id"][...]]
        check(ids == [str(s) for s in cat.station_id.values], f"catchments.h5: site ids {ids}")
        for name in ("area_km2", "mean_elevation_m", "forest_fraction"):
            check(np.array_equal(h5["sites/attributes/" + name][...], cat[name].values), f"catchments.h5: {name}")
        for v in ("precipitation", "air_temperature", "discharge"):
            a = h5["variables/" + v][...]
            b = cat[v].values.astype(np.float32)
            same = np.array_equal(np.isnan(a), np.isnan(b)) and np.array_equal(a[~np.isnan(a)], b[~np.isnan(b)])
            worst = np.nanmax(np.abs(a - b))
            # The generator stores the double-precision decode rounded to float32; xarray 2023.01 unpacks this int16
            # variable in float32, which may differ by one float32 ulp (3e-5 at ~300 m3/s).
            check(same or worst < 1e-4, f"catchments.h5: {v} equals NetCDF (max abs diff {worst:.2e})")
            check(h5["variables/" + v].attrs["units"] == cat[v].attrs["units"], f"catchments.h5: {v} units")

    fed = xr.open_dataset(d / "feeders.nc")
    check(str(fed.time.values[0])[:19] == "2022-01-01T00:00:00", f"feeders.nc: first time {fed.time.values[0]}")
    check(np.all(np.diff(fed.time.values).astype("timedelta64[m]").astype(int) == 60), "feeders.nc: hourly step")
    for s in range(fed.sizes["station"]):
        load = fed["load"].isel(station=s)
        temp = fed.air_temperature.isel(station=s)
        by_hour = load.groupby("time.hour").mean().values
        by_dow = load.groupby("time.dayofweek").mean().values
        print(f"  {str(fed.station_id.values[s])}: load mean {float(load.mean()):.2f} max {float(load.max()):.2f} "
              f"MW, T {float(temp.min()):.1f}..{float(temp.max()):.1f} degC, missing {int(load.isnull().sum())}")
        print("    load by hour (UTC): " + " ".join(f"{x:.1f}" for x in by_hour))
        print("    load by weekday Mon..Sun: " + " ".join(f"{x:.2f}" for x in by_dow))
        hot = temp > 27
        print(f"    load when T > 27 degC: {float(load.where(hot).mean()):.2f} MW; when 15..20 degC: "
              f"{float(load.where((temp > 15) & (temp < 20)).mean()):.2f} MW")

    with open(d / "feeder_north.csv", newline="") as f:
        lines = f.read().splitlines()
    comments = [line for line in lines if line.startswith("#")]
    rows = list(csv.reader([line for line in lines if not line.startswith("#")]))
    print("  CSV header comments: " + " | ".join(comments))
    check(rows[0] == ["time", "load", "air_temperature"], f"feeder_north.csv: header {rows[0]}")
    body = rows[1:]
    check(len(body) == fed.sizes["time"], f"feeder_north.csv: {len(body)} rows")
    csv_load = np.array([float(r[1]) if r[1] else np.nan for r in body])
    nc_load = fed["load"].isel(station=0).values
    check(np.array_equal(np.isnan(csv_load), np.isnan(nc_load)) and np.nanmax(np.abs(csv_load - nc_load)) < 6e-4,
          "feeder_north.csv: load equals feeders.nc station 0 to 3 decimals")
    check(body[0][0] == "2022-01-01T00:00:00Z", f"feeder_north.csv: first time {body[0][0]}")

    if args.plot:
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
        fig, axes = plt.subplots(4, 1, figsize=(12, 11), sharex=False)
        site = 0
        window = slice("2012-01-01", "2013-12-31")
        q = cat.discharge.isel(station=site).sel(time=window)
        p = cat.precipitation.isel(station=site).sel(time=window)
        t = cat.air_temperature.isel(station=site).sel(time=window)
        axes[0].bar(p.time.values, p.values, width=1.0, color="tab:blue")
        axes[0].invert_yaxis()
        axes[0].set_ylabel("P (mm/day)")
        axes[0].set_title(f"{str(cat.station_name.values[site])} (invented), 2012-2013")
        axes[1].plot(q.time.values, q.values, color="k", lw=0.8)
        axes[1].set_ylabel("Q (m3/s)")
        axes[2].plot(t.time.values, t.values, color="tab:red", lw=0.6)
        axes[2].axhline(0, color="grey", lw=0.5)
        axes[2].set_ylabel("T (degC)")
        for s in range(cat.sizes["station"]):
            axes[3].plot(range(1, 13), monthly.discharge.values[:, s] / float(cat.discharge.isel(station=s).mean()),
                         label=str(cat.station_id.values[s]))
        axes[3].set_ylabel("monthly mean Q / mean Q")
        axes[3].set_xlabel("month")
        axes[3].legend()
        fig.tight_layout()
        fig.savefig(args.plot, dpi=80)
        print(f"wrote {args.plot}")

    print(f"{len(failures)} check(s) failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
