#!/usr/bin/python3
"""Small CF NetCDF files for runnel's reader, and what outside libraries decode from them.

Writers: netCDF4.Dataset (Debian python3-netcdf4) and ncgen (Debian netcdf-bin, from incomplete_ncgen.cdl).
Reference decodings: xarray.open_dataset(path, use_cftime=True) (Debian python3-xarray, which applies _FillValue,
missing_value, scale_factor/add_offset and the CF calendars), except for variables with valid_min/valid_max/
valid_range, which xarray does not apply: those are decoded by netCDF4.Dataset with auto mask-and-scale, which applies
them on the packed values as CF 2.5.1 requires. Each reference names its decoder.

Run:  /usr/bin/python3 validation/cf_netcdf_files/make_files.py
Writes files/<name>.nc and files/<name>.csv (one row per site, time and variable: site id, latitude, longitude,
ISO time, variable, decoded value with nan for missing).
"""
import math
import os
import subprocess

import netCDF4
import numpy as np
import pandas as pd
import xarray as xr

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "files")
rng = np.random.default_rng(20261202)


def is_missing_time(t):
    return t is None or (isinstance(t, np.datetime64) and np.isnat(t))


def iso(t):
    if isinstance(t, np.datetime64):
        t = pd.Timestamp(t)
    return "%04d-%02d-%02dT%02d:%02d:%02d" % (t.year, t.month, t.day, t.hour, t.minute, t.second)


def char_ids(ds, name, dim, strlen, ids):
    ds.createDimension(strlen, max(len(i) for i in ids))
    v = ds.createVariable(name, "S1", (dim, strlen))
    v[:] = netCDF4.stringtochar(np.array(ids, dtype="S%d" % len(ds.dimensions[strlen])))
    return v


def common_station_vars(ds, dim, lats, lons):
    lat = ds.createVariable("lat", "f4", (dim,))
    lat.standard_name = "latitude"
    lat.units = "degrees_north"
    lat[:] = lats
    lon = ds.createVariable("lon", "f4", (dim,))
    lon.standard_name = "longitude"
    lon.units = "degrees_east"
    lon[:] = lons


def clean(x):
    x = float(x)
    return None if math.isnan(x) else x


def label(value):
    if isinstance(value, bytes):
        return value.decode().strip("\x00 ")
    if isinstance(value, np.ndarray) and value.ndim == 0:
        return label(value.item())
    return str(value).strip("\x00 ")


# --- Writers -----------------------------------------------------------------------------------------------------

def write_packed(path):
    """(station, time) orthogonal, int16 packed with scale_factor/add_offset/_FillValue, deflate and chunking."""
    with netCDF4.Dataset(path, "w", format="NETCDF4") as ds:
        ds.featureType = "timeSeries"
        ds.Conventions = "CF-1.8"
        ds.createDimension("station", 3)
        ds.createDimension("time", 40)
        ids = char_ids(ds, "station_id", "station", "id_strlen", ["RIV-A", "RIV-B", "RIV-C"])
        ids.cf_role = "timeseries_id"
        names = char_ids(ds, "station_name", "station", "name_strlen", ["Upper ford", "Mill weir", "Estuary"])
        names.long_name = "station name"
        common_station_vars(ds, "station", [51.25, 51.5, 51.75], [-1.5, -1.25, -1.0])
        alt = ds.createVariable("alt", "f4", ("station",))
        alt.standard_name = "height"
        alt.units = "m"
        alt[:] = [120.0, 64.5, 2.0]
        area = ds.createVariable("catchment_area", "f4", ("station",))
        area.units = "km2"
        area[:] = [55.5, 310.0, 1210.25]
        time = ds.createVariable("time", "f8", ("time",))
        time.standard_name = "time"
        time.units = "days since 2000-01-01 00:00:00"
        time.calendar = "standard"
        time[:] = np.arange(40) + 45.0  # crosses 2000-02-29
        q = ds.createVariable("discharge", "i2", ("station", "time"), zlib=True, complevel=4, chunksizes=(1, 20),
                              fill_value=np.int16(-32767))
        q.standard_name = "water_volume_transport_in_river_channel"
        q.units = "m3 s-1"
        q.scale_factor = np.float32(0.01)
        q.add_offset = np.float32(5.0)
        q.coordinates = "time lat lon alt"
        q.set_auto_maskandscale(False)
        packed = rng.integers(-400, 20000, size=(3, 40)).astype(np.int16)
        packed[0, 3] = -32767
        packed[1, 10:13] = -32767
        q[:] = packed
        t = ds.createVariable("water_temperature", "f4", ("station", "time"), zlib=True, chunksizes=(1, 40),
                              fill_value=np.float32(1.0e20))
        t.units = "degC"
        t.long_name = "water temperature"
        values = (8.0 + 4.0 * rng.standard_normal((3, 40))).astype(np.float32)
        values[2, 0] = np.float32(1.0e20)
        values[2, 39] = np.nan  # NaN stays missing
        t.set_auto_maskandscale(False)
        t[:] = values


def write_noleap(path):
    """(time, station) order, noleap calendar across February 2004, NC_STRING ids, NaN in the data."""
    with netCDF4.Dataset(path, "w", format="NETCDF4") as ds:
        ds.featureType = "timeSeries"
        ds.createDimension("time", 10)
        ds.createDimension("station", 2)
        ids = ds.createVariable("site", str, ("station",))
        ids.cf_role = "timeseries_id"
        ids[0] = "GAUGE_07"
        ids[1] = "GAUGE_11"
        common_station_vars(ds, "station", [-33.9, -34.1], [18.4, 18.9])
        time = ds.createVariable("time", "f8", ("time",))
        time.standard_name = "time"
        time.units = "days since 2004-01-01"
        time.calendar = "noleap"
        time[:] = np.arange(55, 65)  # 2004-02-25 .. 2004-03-06 without a 29 February
        p = ds.createVariable("precip", "f4", ("time", "station"))
        p.units = "mm d-1"
        p.standard_name = "lwe_precipitation_rate"
        values = np.round(rng.gamma(0.8, 4.0, size=(10, 2)), 2).astype(np.float32)
        values[4, 1] = np.nan
        p[:] = values


def write_missing(path):
    """Classic 64-bit offset format; missing_value as a vector; int16 with valid_range on packed values."""
    with netCDF4.Dataset(path, "w", format="NETCDF3_64BIT_OFFSET") as ds:
        ds.featureType = "timeSeries"
        ds.createDimension("station", 2)
        ds.createDimension("time", 12)
        ids = char_ids(ds, "station_code", "station", "code_strlen", ["LK1", "LK2"])
        ids.cf_role = "timeseries_id"
        common_station_vars(ds, "station", [60.1, 60.3], [24.9, 25.2])
        time = ds.createVariable("time", "f8", ("time",))
        time.standard_name = "time"
        time.units = "hours since 2010-06-01T00:00:00Z"
        time[:] = np.arange(12) * 3.0
        level = ds.createVariable("level", "f4", ("station", "time"))
        level.units = "m"
        level.missing_value = np.array([-999.0, -998.0], dtype=np.float32)
        values = np.round(10.0 + rng.standard_normal((2, 12)), 3).astype(np.float32)
        values[0, 2] = -999.0
        values[1, 5] = -998.0
        level.set_auto_maskandscale(False)
        level[:] = values
        flow = ds.createVariable("flow", "i2", ("station", "time"), fill_value=np.int16(-1))
        flow.units = "m3 s-1"
        flow.scale_factor = 0.001
        flow.add_offset = 0.0
        flow.valid_range = np.array([0, 30000], dtype=np.int16)
        packed = rng.integers(0, 30000, size=(2, 12)).astype(np.int16)
        packed[0, 0] = -5      # below valid_min: missing
        packed[1, 11] = 30001  # above valid_max: missing
        packed[1, 3] = -1      # _FillValue
        flow.set_auto_maskandscale(False)
        flow[:] = packed


def write_ragged(path):
    """Contiguous ragged array: a count variable with sample_dimension, per-sample time."""
    counts = [6, 4, 8]
    starts = [0.0, 3.0, -2.0]
    with netCDF4.Dataset(path, "w", format="NETCDF4") as ds:
        ds.featureType = "timeSeries"
        ds.createDimension("station", 3)
        ds.createDimension("obs", sum(counts))
        ids = char_ids(ds, "station_id", "station", "id_strlen", ["W1", "W2", "W3"])
        ids.cf_role = "timeseries_id"
        common_station_vars(ds, "station", [40.0, 40.5, 41.0], [-105.0, -105.5, -106.0])
        row = ds.createVariable("row_size", "i4", ("station",))
        row.long_name = "number of observations per station"
        row.sample_dimension = "obs"
        row[:] = counts
        time = ds.createVariable("time", "f8", ("obs",))
        time.standard_name = "time"
        time.units = "hours since 2015-03-01 00:00"
        times = []
        for n, start in zip(counts, starts):
            hours = list(start + np.arange(n))
            times.extend(hours)
        times[6 + 4 + 5] += 1.0  # station W3 skips one hour (a gap, still on the hourly grid)
        times[6 + 4 + 6] += 1.0
        times[6 + 4 + 7] += 1.0
        time[:] = times
        stage = ds.createVariable("stage", "f4", ("obs",), fill_value=np.float32(-9999.0))
        stage.units = "m"
        stage.coordinates = "time lat lon"
        values = np.round(1.0 + 0.1 * rng.standard_normal(sum(counts)), 3).astype(np.float32)
        values[2] = -9999.0
        stage.set_auto_maskandscale(False)
        stage[:] = values


def write_single(path):
    """One station, no station dimension; reference time with a UTC offset; float64 values."""
    with netCDF4.Dataset(path, "w", format="NETCDF4_CLASSIC") as ds:
        ds.featureType = "timeSeries"
        ds.createDimension("time", 16)
        ds.createDimension("name_strlen", 8)
        sid = ds.createVariable("station_id", "S1", ("name_strlen",))
        sid.cf_role = "timeseries_id"
        sid[:] = netCDF4.stringtochar(np.array(["FEEDER-9"], dtype="S8"))[0]
        lat = ds.createVariable("lat", "f8", ())
        lat.standard_name = "latitude"
        lat.units = "degrees_north"
        lat[...] = 24.86
        lon = ds.createVariable("lon", "f8", ())
        lon.standard_name = "longitude"
        lon.units = "degrees_east"
        lon[...] = 67.01
        time = ds.createVariable("time", "i4", ("time",))
        time.standard_name = "time"
        time.units = "minutes since 2021-01-01 00:00:00 +05:00"
        time.calendar = "proleptic_gregorian"
        time[:] = np.arange(16) * 30
        load = ds.createVariable("load", "f8", ("time",), fill_value=-9999.0)
        load.units = "MW"
        load.long_name = "feeder load"
        values = np.round(3.0 + rng.standard_normal(16), 4)
        values[7] = -9999.0
        load.set_auto_maskandscale(False)
        load[:] = values


# --- Reference decodings ------------------------------------------------------------------------------------------

def decoded_var(path, name, dims, use_netcdf4):
    """Decoded values of a variable (NaN for missing) in the dimension order `dims`."""
    if use_netcdf4:
        with netCDF4.Dataset(path) as ds:
            v = ds.variables[name]
            v.set_auto_maskandscale(True)
            data = np.ma.filled(v[:].astype(np.float64), np.nan)
            order = [v.dimensions.index(d) for d in dims]
            return np.transpose(data, order)
    with xr.open_dataset(path, decode_times=False, mask_and_scale=True) as ds:
        return ds[name].transpose(*dims).values.astype(np.float64)


def reference(path, layout, variables, valid_range_vars=()):
    sources = {v: ("netCDF4.Dataset auto mask-and-scale (python3-netcdf4 %s)" % netCDF4.__version__
                   if v in valid_range_vars else "xarray.open_dataset (python3-xarray %s)" % xr.__version__)
               for v in variables}
    # xarray 2023 with cftime cannot decode a 2-D time holding fill values, so the incomplete form (a Gregorian
    # calendar) is decoded to numpy datetime64 instead, with NaT for the padding.
    with xr.open_dataset(path, use_cftime=(layout != "incomplete"), mask_and_scale=True) as ds:
        id_var = [n for n in ds.variables if ds[n].attrs.get("cf_role") == "timeseries_id"][0]
        raw_ids = ds[id_var].values
        ids = [label(raw_ids)] if raw_ids.ndim == 0 or layout == "single" else [label(x) for x in raw_ids]
        lats = np.atleast_1d(ds["lat"].values).astype(float)
        lons = np.atleast_1d(ds["lon"].values).astype(float)
        times = ds["time"].values
        counts = ds["row_size"].values if layout == "ragged" else None
    decoded = {}
    for v in variables:
        if layout == "single" or layout == "ragged":
            decoded[v] = decoded_var(path, v, ("obs",) if layout == "ragged" else ("time",), v in valid_range_vars)
        elif layout == "incomplete":
            decoded[v] = decoded_var(path, v, ("station", "obs"), v in valid_range_vars)
        else:
            decoded[v] = decoded_var(path, v, ("station", "time"), v in valid_range_vars)
    sites = []
    offset = 0
    for s, sid in enumerate(ids):
        if layout in ("single", "orthogonal"):
            site_times = list(times)
            values = {v: (decoded[v] if layout == "single" else decoded[v][s]) for v in variables}
        elif layout == "incomplete":
            site_times = list(times[s])
            values = {v: decoded[v][s] for v in variables}
        else:
            n = int(counts[s])
            site_times = list(times[offset:offset + n])
            values = {v: decoded[v][offset:offset + n] for v in variables}
            offset += n
        keep = [i for i, t in enumerate(site_times) if not is_missing_time(t)]
        sites.append({
            "id": sid,
            "latitude": clean(lats[s if len(lats) > 1 else 0]),
            "longitude": clean(lons[s if len(lons) > 1 else 0]),
            "times": [iso(site_times[i]) for i in keep],
            "values": {v: [clean(values[v][i]) for i in keep] for v in variables},
        })
    return {"file": os.path.basename(path), "layout": layout, "sources": sources, "sites": sites}


def main():
    os.makedirs(OUT, exist_ok=True)
    jobs = [
        ("packed_station_time", write_packed, "orthogonal", ["discharge", "water_temperature"], ()),
        ("noleap_time_station", write_noleap, "orthogonal", ["precip"], ()),
        ("missing_and_valid_range", write_missing, "orthogonal", ["level", "flow"], ("flow",)),
        ("ragged_contiguous", write_ragged, "ragged", ["stage"], ()),
        ("single_station", write_single, "single", ["load"], ()),
        ("incomplete_ncgen", None, "incomplete", ["swe", "air_temperature"], ()),
    ]
    for name, writer, layout, variables, valid_range_vars in jobs:
        path = os.path.join(OUT, name + ".nc")
        if os.path.exists(path):
            os.remove(path)
        if writer is None:
            subprocess.run(["ncgen", "-k", "nc3", "-o", path, os.path.join(HERE, name + ".cdl")], check=True)
        else:
            writer(path)
        ref = reference(path, layout, variables, valid_range_vars)
        with open(os.path.join(OUT, name + ".csv"), "w") as out:
            out.write("# %s decoded by: %s\n" % (name + ".nc", "; ".join("%s: %s" % kv for kv in ref["sources"].items())))
            out.write("site,latitude,longitude,time,variable,value\n")
            for site in ref["sites"]:
                for v in variables:
                    for t, x in zip(site["times"], site["values"][v]):
                        out.write("%s,%r,%r,%s,%s,%s\n" % (site["id"], site["latitude"], site["longitude"], t, v,
                                                          "nan" if x is None else repr(x)))
        print("%-26s %6d bytes, %d sites" % (name, os.path.getsize(path), len(ref["sites"])))


if __name__ == "__main__":
    main()
