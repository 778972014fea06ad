#!/usr/bin/python3
"""PyTorch CPU peer of nn_recurrent_benchmark: same configurations, float32, a training step (forward, MSE loss of
a linear head on the last state, backward, Adam step) and inference (no_grad), with torch.set_num_threads(1) and 2.

Run with the Debian interpreter: /usr/bin/python3 benchmarks/nn/torch_peer.py [--repetitions N] [--json]
Prints one JSON object per line with --json (used by compare.py), otherwise a readable table.
"""
import argparse
import json
import time

import torch

# cell, D, H, T, B  (same list as configurations() in recurrent_benchmark.cpp)
CONFIGS = [
    ("lstm", 5, 64, 365, 256),
    ("lstm", 5, 128, 365, 256),
    ("lstm", 5, 256, 365, 256),
    ("lstm", 16, 128, 168, 128),
    ("lstm", 1, 8, 50, 32),
    ("gru", 5, 128, 365, 256),
    ("elman", 5, 128, 365, 256),
]
GATES = {"lstm": 4, "gru": 3, "elman": 1}


def build(cell, d, h):
    if cell == "lstm":
        rnn = torch.nn.LSTM(d, h, batch_first=False)
    elif cell == "gru":
        rnn = torch.nn.GRU(d, h, batch_first=False)
    else:
        rnn = torch.nn.RNN(d, h, nonlinearity="tanh", batch_first=False)
    return rnn, torch.nn.Linear(h, 1)


def timed(fn, repetitions):
    if repetitions > 1:
        fn()  # warm-up (skipped for a single quick repetition)
    best = float("inf")
    for _ in range(repetitions):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def run(cell, d, h, t, b, threads, repetitions):
    torch.set_num_threads(threads)
    torch.manual_seed(0)
    rnn, head = build(cell, d, h)
    params = list(rnn.parameters()) + list(head.parameters())
    adam = torch.optim.Adam(params, lr=1e-3)
    x = torch.randn(t, b, d)  # time-major, as runnel
    y = torch.randn(b, 1)

    def train():
        adam.zero_grad(set_to_none=False)
        out, _ = rnn(x)
        loss = torch.nn.functional.mse_loss(head(out[-1]), y)
        loss.backward()
        adam.step()

    def infer():
        with torch.no_grad():
            out, _ = rnn(x)
            head(out[-1])

    flops = 2.0 * b * t * GATES[cell] * h * (d + h)
    rows = []
    for mode, fn, factor in (("train", train, 3.0), ("predict", infer, 1.0)):
        seconds = timed(fn, repetitions)
        rows.append({"engine": "torch-%dt" % threads, "mode": mode, "cell": cell, "D": d, "H": h, "T": t, "B": b,
                     "seconds": seconds, "seq_per_s": b / seconds, "GFLOP_per_s": factor * flops / seconds * 1e-9})
    return rows


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--repetitions", type=int, default=3)
    parser.add_argument("--threads", type=int, nargs="+", default=[1, 2])
    parser.add_argument("--json", action="store_true")
    parser.add_argument("--keep-denormals", action="store_true",
                        help="do not call torch.set_flush_denormal(True); runnel flushes subnormals in its kernels")
    parser.add_argument("--only", type=int, nargs="+", help="indices into CONFIGS to run (default: all)")
    args = parser.parse_args()
    # Gradients through hundreds of steps reach the subnormal range, where CPU arithmetic is very slow; runnel
    # flushes them to zero inside its kernels, so by default the peer does the same.
    torch.set_flush_denormal(not args.keep_denormals)
    for threads in args.threads:
        for index, cfg in enumerate(CONFIGS):
            if args.only and index not in args.only:
                continue
            for row in run(*cfg, threads=threads, repetitions=args.repetitions):
                if args.json:
                    print(json.dumps(row), flush=True)
                else:
                    print("%-9s %-7s %-5s D=%-3d H=%-4d T=%-4d B=%-4d %10.1f seq/s %7.2f GFLOP/s" % (
                        row["engine"], row["mode"], row["cell"], row["D"], row["H"], row["T"], row["B"],
                        row["seq_per_s"], row["GFLOP_per_s"]), flush=True)


if __name__ == "__main__":
    main()
