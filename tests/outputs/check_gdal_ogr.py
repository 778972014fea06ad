#!/usr/bin/python3
"""Outside check that GIS tools open the tiny job's outputs: gdalinfo on hindcasts.nc and ogrinfo on
stations.geojson (Debian package gdal-bin), with the expected counts from results.h5 (h5py, python3-h5py).

Usage: check_gdal_ogr.py OUTPUT_DIR

Checks:
  * `gdalinfo hindcasts.nc` exits 0 and its report names the file's variables as subdatasets
    (lines SUBDATASET_<n>_NAME=NETCDF:"...":observed and ...:network_mean) -- the GDAL netCDF driver lists every
    2-D-or-more variable of a multi-variable file as a subdataset (GDAL netCDF driver documentation);
  * `ogrinfo -al -so stations.geojson` exits 0, reports "Feature Count: N" with N the number of sites of results.h5
    that have a latitude and longitude, "Geometry: Point" (or "3D Point" when an elevation is given), and lists the
    fields site_id and network_nse (the pooled NSE of the network per site) among the layer's fields;
  * the GeoJSON parsed with Python's json module: every <method>_<metric> property of every feature equals the
    results.h5 /metrics row of that site, method and metric with lead -1 (pooled over leads) to the 10
    significant digits the writer prints (relative 1e-9), null where the value is NaN.
Pass rule: every check holds; exit 1 naming the tool and the missing line otherwise.
"""
import json
import math
import re
import shutil
import subprocess
import sys

try:
    import h5py
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian package python3-h5py")


def fail(message):
    sys.exit("FAIL: " + message)


def run(tool, *args):
    exe = shutil.which(tool)
    if exe is None:
        fail(f"{tool} not found on PATH; install the Debian package gdal-bin")
    done = subprocess.run([exe, *args], capture_output=True, text=True)
    if done.returncode != 0:
        fail(f"{tool} {' '.join(args)} exited {done.returncode}:\n{done.stdout}\n{done.stderr}")
    return done.stdout


def main():
    if len(sys.argv) != 2:
        fail("usage: check_gdal_ogr.py OUTPUT_DIR")
    out_dir = sys.argv[1]
    nc_path, geojson_path = f"{out_dir}/hindcasts.nc", f"{out_dir}/stations.geojson"

    report = run("gdalinfo", nc_path)
    subdatasets = re.findall(r"SUBDATASET_\d+_NAME=NETCDF:\"?[^\n]*?\"?:(\w+)", report)
    for variable in ("observed", "network_mean", "persistence_quantiles"):
        if variable not in subdatasets:
            fail(f"gdalinfo {nc_path}: no subdataset for variable {variable}; found {subdatasets}")
    print(f"ok gdalinfo: exit 0, {len(subdatasets)} subdatasets including observed, network_mean, "
          f"persistence_quantiles")

    with h5py.File(f"{out_dir}/results.h5", "r") as h5:
        lat, lon = h5["sites/latitude"][()], h5["sites/longitude"][()]
        m = h5["metrics"]
        decode = lambda column: [v.decode() if isinstance(v, bytes) else str(v) for v in m[column][()]]
        pooled = {(s, f"{me}_{mt}"): v for s, me, mt, lead, v in
                  zip(decode("site"), decode("method"), decode("metric"), m["lead"][()], m["value"][()])
                  if lead == -1 and s != "*"}
    placed = sum(1 for y, x in zip(lat, lon) if math.isfinite(y) and math.isfinite(x))

    summary = run("ogrinfo", "-al", "-so", geojson_path)
    count = re.search(r"^Feature Count: (\d+)$", summary, re.M)
    if not count or int(count.group(1)) != placed:
        fail(f"ogrinfo {geojson_path}: feature count {count.group(1) if count else 'missing'}, expected {placed}\n"
             f"{summary}")
    if not re.search(r"^Geometry: (3D )?Point$", summary, re.M):
        fail(f"ogrinfo {geojson_path}: geometry is not Point\n{summary}")
    for field in ("site_id", "network_nse", "persistence_crps"):
        if not re.search(rf"^{field}: \w+", summary, re.M):
            fail(f"ogrinfo {geojson_path}: field {field} not listed\n{summary}")
    print(f"ok ogrinfo: exit 0, Feature Count {placed}, Point geometry, fields site_id, network_nse, persistence_crps")

    with open(geojson_path, encoding="utf-8") as f:
        collection = json.load(f)
    compared = 0
    for feature in collection["features"]:
        site = feature["properties"]["site_id"]
        for key, value in feature["properties"].items():
            if key in ("site_id", "name", "elevation_m"):
                continue
            if (site, key) not in pooled:
                fail(f"{geojson_path}: {site} property {key} has no pooled /metrics row in results.h5")
            want = pooled[(site, key)]
            if value is None:
                if not math.isnan(want):
                    fail(f"{geojson_path}: {site} {key} is null, results.h5 has {want}")
            elif not abs(value - want) <= 1e-9 * abs(want):
                fail(f"{geojson_path}: {site} {key} = {value}, results.h5 has {want}")
            compared += 1
    expected = sum(1 for (s, _) in pooled if s in {f["properties"]["site_id"] for f in collection["features"]})
    if compared != expected:
        fail(f"{geojson_path}: {compared} metric properties, results.h5 has {expected} pooled rows for these sites")
    print(f"ok json: {compared} metric properties equal to the pooled /metrics rows of results.h5")
    print("PASS gdalinfo / ogrinfo")


if __name__ == "__main__":
    main()
