#!/usr/bin/python3
"""Runs nn_recurrent_benchmark (runnel, 1 and 2 threads, 2 ensemble members on 2 threads), nn_memory_probe (peak
memory of a training step, one fresh process per configuration) and torch_peer.py (PyTorch, 1 and 2 threads) in one
go and prints the tables. Usage (from the source root, after building both targets in <build>):
  /usr/bin/python3 benchmarks/nn/compare.py --binary <build>/benchmarks/nn/nn_recurrent_benchmark [--repetitions N]
      [--torch-json FILE]   (reuse a saved `torch_peer.py --json` run instead of running torch again)
      [--no-memory]         (skip the memory probe)
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
        mode = name.split("/")[0]
        mode = {"train_step": "train", "inference": "predict", "ensemble_train": "ensemble2"}[mode]
        threads = int(parts.get("threads", 2))
        key = (mode, CELLS[int(parts["cell"])], int(parts["D"]), int(parts["H"]), int(parts["T"]), int(parts["B"]),
               threads)
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


def memory_rows(probe, shapes):
    rows = []
    for cell, d, h, t, b in shapes:
        out = subprocess.run([probe, cell, str(d), str(h), str(t), str(b), "1"], check=True, capture_output=True,
                             text=True).stdout
        rows.append(json.loads(out))
    return rows


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--binary", required=True)
    parser.add_argument("--repetitions", type=int, default=3)
    parser.add_argument("--torch-json", help="read torch_peer.py --json output from this file instead of running it")
    parser.add_argument("--no-memory", action="store_true", help="skip nn_memory_probe")
    args = parser.parse_args()
    ours, gemm = runnel_rows(args.binary, args.repetitions)
    peer = torch_rows(args.repetitions, args.torch_json)
    nan = float("nan")
    print("| mode | cell | D | H | T | B | runnel 1t seq/s | runnel 1t GFLOP/s | runnel 2t seq/s | torch 1t seq/s | "
          "torch 2t seq/s | runnel / torch 1t | runnel / torch 2t |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    shapes = sorted({k[1:6] for k in ours if k[0] != "ensemble2"}, key=lambda k: (k[0], k[2], k[1]))
    for mode in ("predict", "train"):
        for shape in shapes:
            one, two = ours.get((mode,) + shape + (1,)), ours.get((mode,) + shape + (2,))
            if one is None:
                continue
            two_rate = two["seq_per_s"] if two else nan
            t1 = peer.get(("torch-1t", mode) + shape, {}).get("seq_per_s", nan)
            t2 = peer.get(("torch-2t", mode) + shape, {}).get("seq_per_s", nan)
            print("| %s | %s | %d | %d | %d | %d | %.1f | %.2f | %.1f | %.1f | %.1f | %.2f | %.2f |" % (
                (mode,) + shape + (one["seq_per_s"], one["GFLOP_per_s"], two_rate, t1, t2, one["seq_per_s"] / t1,
                                   two_rate / t2)))
    print()
    for n, rate in sorted(gemm.items(), key=lambda kv: int(kv[0])):
        print("Eigen single-thread float32 GEMM %sx%s: %.1f GFLOP/s" % (n, n, rate))
    reference = gemm.get("256")
    if reference:
        print()
        print("| training step, 1 thread | GFLOP/s | share of the 256x256 GEMM rate |")
        print("|---|---|---|")
        for shape in shapes:
            one = ours.get(("train",) + shape + (1,))
            if one:
                print("| %s D=%d H=%d T=%d B=%d | %.2f | %.0f %% |" % (shape + (one["GFLOP_per_s"],
                                                                       100.0 * one["GFLOP_per_s"] / reference)))
    print()
    print("| 2 members on 2 threads | cell | D | H | T | B | ensemble seq/s | 1 member 1t seq/s | speed-up |")
    print("|---|---|---|---|---|---|---|---|---|")
    for shape in shapes:
        ens, one = ours.get(("ensemble2",) + shape + (2,)), ours.get(("train",) + shape + (1,))
        if ens and one:
            print("| train | %s | %d | %d | %d | %d | %.1f | %.1f | %.2f |" % (
                shape + (ens["seq_per_s"], one["seq_per_s"], ens["seq_per_s"] / one["seq_per_s"])))
    if not args.no_memory:
        probe = os.path.join(os.path.dirname(os.path.abspath(args.binary)), "nn_memory_probe")
        print()
        print("| peak memory, training step | cell | D | H | T | B | bound MB | step peak MB | process peak MB | "
              "ratio |")
        print("|---|---|---|---|---|---|---|---|---|---|")
        for r in memory_rows(probe, shapes):
            print("| 1 thread | %s | %d | %d | %d | %d | %.1f | %.1f | %.1f | %.2f |" % (
                r["cell"], r["D"], r["H"], r["T"], r["B"], r["bound_MB"], r["step_peak_MB"], r["peak_MB"],
                r["ratio"]))


if __name__ == "__main__":
    main()
