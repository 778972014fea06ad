#!/usr/bin/python3
"""Writes the runnel-format job inputs of the validation suite from the committed dataset CSVs.

validation/datasets/ice_river.csv (tseries::ice.river)  -> validation/datasets/job_inputs/ice_river_long.csv
validation/datasets/taylor.csv    (forecast::taylor)    -> validation/datasets/job_inputs/taylor_demand.csv

Values are copied as text, unchanged; only the layout changes (docs/input-formats.md, CSV). Run from anywhere:
    /usr/bin/python3 validation/suite/convert.py
"""
import csv
import hashlib
import pathlib

ROOT = pathlib.Path(__file__).resolve().parents[2]
DATASETS = ROOT / "validation" / "datasets"
OUT = DATASETS / "job_inputs"


def ice_river():
    rows = list(csv.DictReader(open(DATASETS / "ice_river.csv", newline="")))
    assert len(rows) == 1096, len(rows)
    path = OUT / "ice_river_long.csv"
    with open(path, "w", newline="") as f:
        # Units as in the tseries help page of ice.river: flows "cms" (m3 s-1), precipitation "mm" per day (daily
        # totals), temperature "deg C". There is one precipitation and one temperature series (Hveravellir) for both
        # rivers, so the two sites carry the same prec and temp columns.
        f.write("# Icelandic river data, tseries::ice.river (Tong 1990; Tong, Thanoon and Gudmundsson 1985)\n")
        f.write("# written by validation/suite/convert.py from validation/datasets/ice_river.csv\n")
        f.write("# prec and temp are the same Hveravellir series at both sites\n")
        f.write("# units flow: m3 s-1\n")
        f.write("# long_name flow: mean daily river flow\n")
        f.write("# units prec: mm day-1\n")
        f.write("# long_name prec: daily precipitation at Hveravellir\n")
        f.write("# units temp: degC\n")
        f.write("# long_name temp: mean daily air temperature at Hveravellir\n")
        f.write("# name vat: Vatnsdalsa\n")
        f.write("# name jok: Jokulsa Eystri\n")
        f.write("site,time,flow,prec,temp\n")
        for site, column in (("vat", "flow_vat"), ("jok", "flow_jok")):
            for r in rows:
                f.write(f"{site},{r['date']},{r[column]},{r['prec']},{r['temp']}\n")
    return path


def taylor():
    rows = list(csv.DictReader(open(DATASETS / "taylor.csv", newline="")))
    assert len(rows) == 12 * 336, len(rows)
    path = OUT / "taylor_demand.csv"
    with open(path, "w", newline="") as f:
        # forecast::taylor help page: "Half-hourly electricity demand in England and Wales ... Units: Megawatts".
        # The UTC labels are those of validation/datasets/taylor.csv (see PROVENANCE.md: nominal clock).
        f.write("# Half-hourly electricity demand in England and Wales, forecast::taylor (Taylor 2003)\n")
        f.write("# written by validation/suite/convert.py from validation/datasets/taylor.csv\n")
        f.write("# site_id: ew\n")
        f.write("# name: England and Wales\n")
        f.write("# units demand: MW\n")
        f.write("# long_name demand: half-hourly electricity demand\n")
        f.write("time,demand\n")
        for r in rows:
            f.write(f"{r['time']},{r['demand_mw']}\n")
    return path


if __name__ == "__main__":
    OUT.mkdir(parents=True, exist_ok=True)
    for p in (ice_river(), taylor()):
        print(hashlib.sha256(p.read_bytes()).hexdigest(), p.relative_to(ROOT))
