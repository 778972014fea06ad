#!/usr/bin/python3
"""Outside check of results.h5 (docs/output-format.md, layout version 1) with h5py, netCDF4 and numpy.

Usage: check_results_h5.py OUTPUT_DIR JOB_FILE DATA_FILE

Reads the results file the tiny job wrote (tests/apps/data/tiny_catchments.toml) with h5py (Debian python3-h5py,
not runnel's reader) and checks:
  * root attributes: runnel_layout == "results", runnel_layout_version == 1, the caution text, mode "forecast";
  * the site table /sites: id, name, group, latitude, longitude, elevation of equal length; crs == "EPSG:4326";
    the ids are the job's two sites and their coordinates equal the station lat/lon of the input file read with
    netCDF4 (Debian python3-netcdf4, netCDF4.Dataset) -- tolerance 1e-9 degrees (both are doubles);
  * each site's hindcasts: issue_time (n), observed (n x L), and per method mean / median (n x L), quantile_levels
    (Q), quantiles (n x L x Q); L == len(/leads) == the job's horizon; Q levels == the default scoring quantiles;
    quantiles non-decreasing in the level (a crossing would be a bug);
  * observed[i, k] equals the input discharge at issue_time[i] + leads[k] days, as decoded by netCDF4 (scale_factor
    and add_offset applied, fill masked) -- tolerance 1e-4 relative (results store float32);
  * /metrics columns site, method, metric, lead, value, ci_low, ci_high, used, skipped of one length; every method
    of every site has nse and crps rows; for every (site, method, lead >= 1) the stored nse, rmse and mae equal the
    values numpy recomputes from the stored mean and observed arrays: NSE = 1 - sum((o-f)^2) / sum((o-mean(o))^2)
    (Nash & Sutcliffe 1970, J. Hydrol. 10(3), the efficiency R^2 of their section on the criterion; formula from
    memory), RMSE and MAE by their definitions -- tolerance 1e-6 relative + 1e-9 absolute (float32 inputs summed
    in double on both sides); `used` equals the number of finite (observed, mean) pairs;
  * /provenance: job_text equals the job file, library_version / git_commit / created present, created is ISO 8601
    UTC, input_sha256 equals hashlib.sha256 of the input file (Python standard library).
Pass rule: every check holds; the script prints one line per group of checks and exits 1 on the first failure.
"""
import datetime
import hashlib
import sys

try:
    import numpy as np
    import h5py
except ImportError as e:  # pragma: no cover - exercised only on a machine without the packages
    sys.exit(f"FAIL: {e}; install the Debian packages python3-h5py and python3-numpy")
try:
    import netCDF4
except ImportError as e:
    sys.exit(f"FAIL: {e}; install the Debian package python3-netcdf4")


def fail(message):
    sys.exit("FAIL: " + message)


def text(value):
    if isinstance(value, bytes):
        return value.decode("utf-8")
    if isinstance(value, np.ndarray) and value.shape == ():
        return text(value[()])
    return str(value)


def strings(dataset):
    return [text(v) for v in dataset[()]]


def expect(condition, message):
    if not condition:
        fail(message)


def main():
    if len(sys.argv) != 4:
        fail("usage: check_results_h5.py OUTPUT_DIR JOB_FILE DATA_FILE")
    out_dir, job_file, data_file = sys.argv[1:]
    path = f"{out_dir}/results.h5"
    job_text = open(job_file, encoding="utf-8").read()
    expected_sites = ["SRN-TAR01", "SRN-OSK02"]  # tests/apps/data/tiny_catchments.toml, [data] sites
    expected_horizon = 2                           # ... [windows] horizon
    expected_levels = [0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]  # docs/config.md, scoring.quantiles default
    expected_methods = {"network", "persistence", "climatology", "ridge_arx"}  # the job asks for these

    f = h5py.File(path, "r")
    a = f.attrs
    expect(text(a["runnel_layout"]) == "results", f"{path}: runnel_layout is {a['runnel_layout']!r}")
    expect(int(a["runnel_layout_version"]) == 1, f"{path}: runnel_layout_version {a['runnel_layout_version']}")
    caution = text(a["caution"])
    expect(caution.startswith("CAUTION:") and "advisory" in caution, f"{path}: caution attribute is {caution!r}")
    expect(text(a["mode"]) == "forecast", f"{path}: mode {a['mode']!r}")
    expect(text(a["target_variable"]) == "discharge", f"{path}: target_variable {a['target_variable']!r}")
    expect(int(a["step_seconds"]) == 86400, f"{path}: step_seconds {a['step_seconds']}")
    leads = f["leads"][()]
    expect(list(leads) == list(range(1, expected_horizon + 1)), f"{path}: /leads is {leads}")
    print(f"ok root attributes: layout results v1, caution, mode forecast, leads {list(leads)}")

    sites = f["sites"]
    expect(text(sites.attrs["crs"]) == "EPSG:4326", f"/sites crs is {sites.attrs['crs']!r}")
    ids = strings(sites["id"])
    names = strings(sites["name"])
    groups = strings(sites["group"])
    lat = sites["latitude"][()]
    lon = sites["longitude"][()]
    elev = sites["elevation"][()]
    expect(sorted(ids) == sorted(expected_sites), f"/sites/id is {ids}, expected {expected_sites}")
    expect(len({len(ids), len(names), len(groups), len(lat), len(lon), len(elev)}) == 1, "/sites columns differ in length")
    nc = netCDF4.Dataset(data_file)
    nc_ids = [str(s) for s in nc.variables["station_id"][:]]
    nc_lat = np.asarray(nc.variables["lat"][:], dtype=float)
    nc_lon = np.asarray(nc.variables["lon"][:], dtype=float)
    for i, site in enumerate(ids):
        j = nc_ids.index(site)
        expect(abs(lat[i] - nc_lat[j]) < 1e-9 and abs(lon[i] - nc_lon[j]) < 1e-9,
               f"/sites {site}: lat/lon {lat[i]}, {lon[i]} but {data_file} has {nc_lat[j]}, {nc_lon[j]}")
    print(f"ok site table: {ids}, crs EPSG:4326, lat/lon equal to {data_file} (netCDF4)")

    # Observed discharge as netCDF4 decodes it (scale/offset applied, fill masked), indexed by time.
    times = netCDF4.num2date(nc.variables["time"][:], nc.variables["time"].units,
                             getattr(nc.variables["time"], "calendar", "standard"),
                             only_use_cftime_datetimes=False, only_use_python_datetimes=True)
    epoch = datetime.datetime(1970, 1, 1)
    time_seconds = {int(round((t - epoch).total_seconds())): k for k, t in enumerate(times)}
    discharge = nc.variables["discharge"]

    hindcasts = f["hindcasts"]
    metric_checks = 0
    m = f["metrics"]
    columns = ["site", "method", "metric", "lead", "value", "ci_low", "ci_high", "used", "skipped"]
    for c in columns:
        expect(c in m, f"/metrics/{c} is missing")
    rows = len(m["value"])
    expect(rows > 0, "/metrics is empty")
    for c in columns:
        expect(len(m[c]) == rows, f"/metrics/{c} has {len(m[c])} rows, value has {rows}")
    m_site, m_method, m_metric = strings(m["site"]), strings(m["method"]), strings(m["metric"])
    m_lead, m_value, m_used = m["lead"][()], m["value"][()], m["used"][()]
    table = {(m_site[r], m_method[r], int(m_lead[r]), m_metric[r]): (m_value[r], int(m_used[r])) for r in range(rows)}

    for i, site in enumerate(ids):
        g = hindcasts[groups[i]]
        expect(text(g.attrs["site_id"]) == site, f"/hindcasts/{groups[i]} site_id {g.attrs['site_id']!r}")
        issue = g["issue_time"][()]
        n = len(issue)
        expect(n > 0, f"/hindcasts/{groups[i]}: no issue times")
        observed = g["observed"][()]
        expect(observed.shape == (n, len(leads)), f"{site}: observed shape {observed.shape}, expected {(n, len(leads))}")
        j = nc_ids.index(site)
        station_dim_first = discharge.dimensions[0] == "station"
        compared = 0
        for r in range(n):
            for k, lead in enumerate(leads):
                t = int(issue[r]) + int(lead) * 86400
                idx = time_seconds.get(t)
                expect(idx is not None, f"{site}: target time {t} not in {data_file}")
                ref = discharge[j, idx] if station_dim_first else discharge[idx, j]
                if np.ma.is_masked(ref):
                    expect(np.isnan(observed[r, k]), f"{site}: observed at a fill value is {observed[r, k]}")
                    continue
                expect(abs(observed[r, k] - float(ref)) <= 1e-4 * max(1.0, abs(float(ref))),
                       f"{site}: observed[{r},{k}] = {observed[r, k]} but {data_file} has {float(ref)}")
                compared += 1
        methods = set(strings(g["methods"]))
        # The job's methods must all be there; methods the run derives from them (if any) are checked alike.
        expect(expected_methods <= methods, f"{site}: methods {sorted(methods)} lack some of {sorted(expected_methods)}")
        for method in sorted(methods):
            b = g[method]
            for name in ("mean", "median"):
                expect(b[name].shape == (n, len(leads)), f"{site}/{method}/{name} shape {b[name].shape}")
            levels = b["quantile_levels"][()]
            expect(np.allclose(levels, expected_levels, rtol=0, atol=1e-12), f"{site}/{method} levels {levels}")
            q = b["quantiles"][()]
            expect(q.shape == (n, len(leads), len(levels)), f"{site}/{method}/quantiles shape {q.shape}")
            finite = np.isfinite(q).all(axis=2)
            diffs = np.diff(q[finite], axis=1)
            expect((diffs >= -1e-6 * (1 + np.abs(q[finite][:, 1:]))).all(), f"{site}/{method}: quantiles cross")
            for metric in ("nse", "crps"):
                expect((site, method, -1, metric) in table, f"/metrics: no pooled {metric} row for {site} {method}")
            mean = b["mean"][()].astype(float)
            for k, lead in enumerate(leads):
                o = observed[:, k].astype(float)
                s = mean[:, k]
                ok = np.isfinite(o) & np.isfinite(s)
                o, s = o[ok], s[ok]
                reference = {
                    "nse": 1.0 - np.sum((o - s) ** 2) / np.sum((o - o.mean()) ** 2),
                    "rmse": float(np.sqrt(np.mean((o - s) ** 2))),
                    "mae": float(np.mean(np.abs(o - s))),
                }
                for metric, want in reference.items():
                    key = (site, method, int(lead), metric)
                    expect(key in table, f"/metrics: no row {key}")
                    got, used = table[key]
                    expect(abs(got - want) <= 1e-6 * abs(want) + 1e-9,
                           f"/metrics {key}: runnel {got!r}, numpy {want!r}")
                    expect(used == int(ok.sum()), f"/metrics {key}: used {used}, finite pairs {int(ok.sum())}")
                    metric_checks += 1
        print(f"ok hindcasts {site}: {n} issues x {len(leads)} leads x {len(expected_levels)} quantiles, "
              f"{compared} observed values equal to {data_file}, methods {sorted(methods)}")
    print(f"ok metrics: {rows} rows, {metric_checks} (site, method, lead, nse|rmse|mae) values equal to numpy")

    p = f["provenance"]
    expect(text(p.attrs["job_text"]) == job_text, "/provenance job_text differs from the job file")
    for name in ("library_version", "git_commit", "created", "job_path"):
        expect(text(p.attrs[name]) != "", f"/provenance {name} is empty")
    created = text(p.attrs["created"])
    try:
        datetime.datetime.strptime(created, "%Y-%m-%dT%H:%M:%SZ")
    except ValueError:
        fail(f"/provenance created {created!r} is not ISO 8601 UTC (YYYY-MM-DDTHH:MM:SSZ)")
    sums = strings(p["input_sha256"])
    files = strings(p["input_files"])
    expect(len(files) == 1 and len(sums) == 1, f"/provenance inputs {files}")
    want = hashlib.sha256(open(data_file, "rb").read()).hexdigest()
    expect(sums[0] == want, f"/provenance input_sha256 {sums[0]} but hashlib gives {want}")
    expect(len(p["seeds"][()]) > 0, "/provenance seeds is empty")
    print(f"ok provenance: job_text verbatim, version {text(p.attrs['library_version'])}, created {created}, "
          f"sha256 {want[:12]}... equal to hashlib")
    print("PASS results.h5")


if __name__ == "__main__":
    main()
