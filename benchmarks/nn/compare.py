#!/usr/bin/python3
"""Runs nn_recurrent_benchmark (runnel, 1 thread) and torch_peer.py (PyTorch, 1 and 2 threads) in one go and prints
one table. Usage (from the source root, after building the benchmark in <build>):
  /usr/bin/python3 benchmarks/nn/compare.py --binary <build>/benchmarks/nn/nn_recurrent_benchmark [--repetitions N]
      [--torch-json FILE]   (reuse a saved `torch_peer.py --json` run instead of running torch again)
"""
import argparse
import json
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
CELLS = {0: "elman", 1: "lstm", 2: "gru"}


def runnel_rows(binary, repetitions):
    out = subprocess.run([binary, "--benchmark_format=json", "--benchmark_repetitions=%d" % repetitions,
                          "--benchmark_min_time=0.01", "--benchmark_report_aggregates_only=false"],
                         check=True, capture_output=True, text=True).stdout
    report = json.loads(out)
    rows, gemm = {}, {}
    for bench in report["benchmarks"]:
        if bench.get("run_type") != "iteration":
            continue
        name = bench["name"]
        if name.startswith("eigen_gemm"):
            n = name.split("/")[1]
            gemm[n] = max(gemm.get(n, 0.0), bench["GFLOP_per_s"])
            continue
        parts = dict(p.split(":") for p in name.split("/")[1:] if ":" in p)
        key = ("train" if name.startswith("train_step") else "predict", CELLS[int(parts["cell"])], int(parts["D"]),
               int(parts["H"]), int(parts["T"]), int(parts["B"]))
        best = rows.get(key)
        if best is None or bench["seq_per_s"] > best["seq_per_s"]:
            rows[key] = {"seq_per_s": bench["seq_per_s"], "GFLOP_per_s": bench["GFLOP_per_s"]}
    return rows, gemm


def torch_rows(repetitions, cached):
    if cached:
        with open(cached) as f:
            out = f.read()
    else:
        out = subprocess.run([sys.executable, os.path.join(HERE, "torch_peer.py"), "--json",
                              "--repetitions", str(repetitions)], check=True, capture_output=True, text=True).stdout
    rows = {}
    for line in out.splitlines():
        r = json.loads(line)
        rows[(r["engine"], r["mode"], r["cell"], r["D"], r["H"], r["T"], r["B"])] = r
    return rows


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--binary", required=True)
    parser.add_argument("--repetitions", type=int, default=3)
    parser.add_argument("--torch-json", help="read torch_peer.py --json output from this file instead of running it")
    args = parser.parse_args()
    ours, gemm = runnel_rows(args.binary, args.repetitions)
    peer = torch_rows(args.repetitions, args.torch_json)
    print("| mode | cell | D | H | T | B | runnel seq/s | runnel GFLOP/s | torch 1t seq/s | torch 2t seq/s | "
          "runnel / torch 1t |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    for key in sorted(ours, key=lambda k: (k[0], k[1], k[3], k[2])):
        mode, cell, d, h, t, b = key
        r = ours[key]
        t1 = peer.get(("torch-1t",) + key, {}).get("seq_per_s", float("nan"))
        t2 = peer.get(("torch-2t",) + key, {}).get("seq_per_s", float("nan"))
        print("| %s | %s | %d | %d | %d | %d | %.1f | %.2f | %.1f | %.1f | %.2f |" % (
            mode, cell, d, h, t, b, r["seq_per_s"], r["GFLOP_per_s"], t1, t2, r["seq_per_s"] / t1))
    print()
    for n, rate in sorted(gemm.items(), key=lambda kv: int(kv[0])):
        print("Eigen single-thread float32 GEMM %sx%s: %.1f GFLOP/s" % (n, n, rate))


if __name__ == "__main__":
    main()
