#!/usr/bin/python3
"""Writes the reference inputs of the runnel HDF5, CSV and format-detection tests with outside libraries.

Run with Debian's interpreter (it has h5py, netCDF4 and numpy): /usr/bin/python3 make_reference.py
Every output is small and committed; the C++ tests read them, so CI needs no Python.
"""
import datetime
import pathlib

import h5py  # Debian python3-h5py: an HDF5 writer independent of runnel
import netCDF4  # Debian python3-netcdf4: NetCDF-4 / classic / CDF-5 files for format detection
import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
EPOCH = datetime.datetime(1970, 1, 1, tzinfo=datetime.timezone.utc)


def write_h5py_panel():
    rng = np.random.default_rng(20240611)
    ids = ["G-01", "G-02", "G-03"]
    names = ["Rh\u00f4ne at Pont", "Upper Brook", ""]
    start = datetime.datetime(2001, 1, 1, tzinfo=datetime.timezone.utc)
    times = np.array([int((start + datetime.timedelta(days=i) - EPOCH).total_seconds()) for i in range(8)],
                     dtype=np.int64)
    discharge = rng.gamma(2.0, 3.0, size=(3, 8))  # float64 on disk
    discharge[0, 2] = -9999.0  # _FillValue -> missing
    discharge[1, 5] = np.nan  # NaN -> missing
    precipitation = rng.exponential(4.0, size=(3, 8)).astype(np.float32)
    precipitation[2, 0] = np.nan
    text = h5py.string_dtype(encoding="utf-8")
    with h5py.File(HERE / "panel_h5py.h5", "w") as f:
        f.attrs["runnel_layout"] = "panel"  # h5py stores a Python str as a variable-length UTF-8 string
        f.attrs["runnel_layout_version"] = np.int32(1)
        t = f.create_dataset("time", data=times)
        t.attrs["units"] = "seconds since 1970-01-01T00:00:00Z"
        f.create_dataset("sites/id", data=np.array(ids, dtype=object), dtype=text)
        f.create_dataset("sites/name", data=np.array(names, dtype=object), dtype=text)
        f.create_dataset("sites/latitude", data=np.array([45.75, 51.5, -33.9]))
        f.create_dataset("sites/longitude", data=np.array([4.85, -0.12, 151.2]))
        f.create_dataset("sites/elevation", data=np.array([162.0, np.nan, 58.0]))
        f.create_dataset("sites/attributes/area_km2", data=np.array([95500.0, 12.5, 310.0]))
        q = f.create_dataset("variables/discharge", data=discharge)
        q.attrs["units"] = "m3 s-1"
        q.attrs["standard_name"] = "water_volume_transport_in_river_channel"
        q.attrs["long_name"] = "river discharge"
        q.attrs["_FillValue"] = -9999.0
        p = f.create_dataset("variables/precipitation", data=precipitation)
        p.attrs["units"] = "mm day-1"
        # A fixed-length string attribute, as many tools write them.
        p.attrs.create("standard_name", np.bytes_("lwe_thickness_of_precipitation_amount"))
    # Expected values: what a reader must return, as float32 (the panel's storage type), NaN for missing.
    expected_discharge = discharge.astype(np.float32)
    expected_discharge[0, 2] = np.nan
    with open(HERE / "panel_h5py_expected.txt", "w") as out:
        out.write("# site time_iso variable value (float32 as printed by numpy repr; nan = missing)\n")
        for s in range(3):
            for i in range(8):
                iso = (EPOCH + datetime.timedelta(seconds=int(times[i]))).strftime("%Y-%m-%dT%H:%M:%SZ")
                out.write(f"{ids[s]} {iso} discharge {float(expected_discharge[s, i])!r}\n")
                out.write(f"{ids[s]} {iso} precipitation {float(precipitation[s, i])!r}\n")


def write_offsets_csv():
    # Hourly instants written with mixed UTC offsets; datetime.fromisoformat gives the UTC instants.
    lines = [
        "2005-06-01T00:00:00Z",
        "2005-06-01T02:00:00+01:00",
        "2005-06-01T02:00+00:00",
        "2005-05-31T22:00:00-05:00",
        "2005-06-01T09:30:00+05:30",
        "2005-06-01 05:00:00Z",
    ]
    with open(HERE / "offsets.csv", "w") as out:
        out.write("# site_id: OFFSET-1\n# units level: m\ntime,level\n")
        for i, text in enumerate(lines):
            out.write(f"{text},{1.25 * i}\n")
    with open(HERE / "offsets_expected.txt", "w") as out:
        out.write("# seconds since 1970-01-01T00:00:00Z of each row, from Python datetime.fromisoformat\n")
        for text in lines:
            instant = datetime.datetime.fromisoformat(text.replace("Z", "+00:00"))
            out.write(f"{int((instant - EPOCH).total_seconds())}\n")


def write_netcdf_signatures():
    for name, fmt in [("netcdf4.nc", "NETCDF4"), ("classic.nc", "NETCDF3_CLASSIC"),
                      ("offset64.nc", "NETCDF3_64BIT_OFFSET"), ("cdf5.nc", "NETCDF3_64BIT_DATA")]:
        with netCDF4.Dataset(HERE / name, "w", format=fmt) as ds:
            ds.createDimension("time", 2)
            t = ds.createVariable("time", "f8", ("time",))
            t.units = "days since 2000-01-01"
            t[:] = [0.0, 1.0]


def write_cf_timeseries():
    # A minimal CF 1.8 discrete sampling geometry file (featureType timeSeries, orthogonal multidimensional form,
    # CF Conventions 1.8 Appendix H.2.1), for the read_panel dispatch test.
    with netCDF4.Dataset(HERE / "cf_timeseries.nc", "w", format="NETCDF4") as ds:
        ds.Conventions = "CF-1.8"
        ds.featureType = "timeSeries"
        ds.createDimension("station", 2)
        ds.createDimension("time", 3)
        sid = ds.createVariable("station_id", str, ("station",))
        sid.cf_role = "timeseries_id"
        sid[0] = "N-1"
        sid[1] = "N-2"
        t = ds.createVariable("time", "f8", ("time",))
        t.units = "days since 2000-01-01 00:00:00"
        t.calendar = "standard"
        t.standard_name = "time"
        t[:] = [0.0, 1.0, 2.0]
        q = ds.createVariable("discharge", "f4", ("station", "time"))
        q.units = "m3 s-1"
        q.standard_name = "water_volume_transport_in_river_channel"
        q[:] = np.array([[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]], dtype=np.float32)


if __name__ == "__main__":
    write_h5py_panel()
    write_offsets_csv()
    write_netcdf_signatures()
    write_cf_timeseries()
