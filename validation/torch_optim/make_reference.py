#!/usr/bin/python3
"""Reference values for libseq::train optimisers, clipping and learning-rate schedules, from PyTorch.

Run with Debian's interpreter (python3-torch):  /usr/bin/python3 validation/torch_optim/make_reference.py
Writes validation/torch_optim/reference.txt next to this script. Each line is

    <key> <count> <value> <value> ...

with values printed to 17 significant digits (float64 cases) or 9 (float32 cases, exact for float). The fixed
inputs (start parameters, gradient sequence, losses) are written too so the C++ test reads everything it needs
from this one file.
"""
import math
import os

import torch

torch.set_default_dtype(torch.float64)
HERE = os.path.dirname(os.path.abspath(__file__))
lines = []


def put(key, values, digits=17):
    values = [float(v) for v in values]
    lines.append(key + " " + str(len(values)) + " " + " ".join(f"{v:.{digits}g}" for v in values))


# Fixed inputs: a parameter vector and five gradients of mixed sign and scale (two entries tiny, one large), so the
# Adam denominator, epsilon and bias correction all matter.
start = [0.5, -1.25, 2.0, 0.0, -0.003, 7.5, 1e-4]
gradients = [
    [0.1, -0.2, 0.3, 1e-9, -4.0, 0.05, 2.5],
    [-0.3, 0.1, 0.2, -1e-9, -3.0, 0.07, -2.5],
    [0.2, 0.4, -0.1, 0.0, 5.0, -0.02, 1.0],
    [0.05, -0.6, 0.3, 2e-9, 0.5, 0.01, -0.5],
    [-0.15, 0.25, 0.35, -3e-9, -1.5, 0.03, 0.25],
]
put("start", start)
for i, g in enumerate(gradients):
    put(f"gradient{i + 1}", g)

cases = {
    "adam_default": lambda p: torch.optim.Adam([p], foreach=False),
    "adam_weight_decay": lambda p: torch.optim.Adam([p], lr=0.01, weight_decay=0.1, foreach=False),
    "adamw": lambda p: torch.optim.AdamW([p], lr=0.01, weight_decay=0.05, foreach=False),
    "sgd_momentum": lambda p: torch.optim.SGD([p], lr=0.1, momentum=0.9, foreach=False),
    "sgd_nesterov_weight_decay": lambda p: torch.optim.SGD([p], lr=0.05, momentum=0.8, nesterov=True,
                                                           weight_decay=0.01, foreach=False),
    "sgd_dampening": lambda p: torch.optim.SGD([p], lr=0.1, momentum=0.5, dampening=0.3, foreach=False),
}
for dtype, tag, digits in ((torch.float64, "f64", 17), (torch.float32, "f32", 9)):
    for name, make in cases.items():
        p = torch.tensor(start, dtype=dtype, requires_grad=True)
        opt = make(p)
        for step, g in enumerate(gradients, start=1):
            p.grad = torch.tensor(g, dtype=dtype)
            opt.step()
            if step in (1, 5):
                put(f"{name}.{tag}.after{step}", p.detach().tolist(), digits)

# torch.nn.utils.clip_grad_norm_ on one tensor: once clipping (max_norm 1), once not (max_norm 100).
for dtype, tag, digits in ((torch.float64, "f64", 17), (torch.float32, "f32", 9)):
    for max_norm in (1.0, 100.0):
        p = torch.zeros(len(start), dtype=dtype, requires_grad=True)
        p.grad = torch.tensor(gradients[0], dtype=dtype)
        norm = torch.nn.utils.clip_grad_norm_([p], max_norm)
        put(f"clip{int(max_norm)}.{tag}.norm", [norm.item()], digits)
        put(f"clip{int(max_norm)}.{tag}.gradient", p.grad.tolist(), digits)

# Learning-rate schedules over 12 epochs, base rate 0.1: the rate used in each epoch.
def rates(make_scheduler, losses=None):
    p = torch.zeros(1, requires_grad=True)
    opt = torch.optim.SGD([p], lr=0.1)
    sched = make_scheduler(opt)
    out = []
    for epoch in range(12):
        out.append(opt.param_groups[0]["lr"])
        opt.step()
        if losses is None:
            sched.step()
        else:
            sched.step(losses[epoch])
    return out


put("schedule.step", rates(lambda o: torch.optim.lr_scheduler.StepLR(o, step_size=3, gamma=0.5)))
put("schedule.cosine", rates(lambda o: torch.optim.lr_scheduler.CosineAnnealingLR(o, T_max=12, eta_min=1e-3)))
plateau_losses = [1.0, 0.8, 0.79995, 0.8, 0.81, 0.7, 0.7, 0.71, 0.72, 0.73, 0.5, 0.6]
put("plateau.losses", plateau_losses)
put("schedule.plateau", rates(lambda o: torch.optim.lr_scheduler.ReduceLROnPlateau(
    o, mode="min", factor=0.5, patience=1, threshold=1e-4, threshold_mode="rel", cooldown=1, min_lr=0.02),
    plateau_losses))

# One Adam step (lr 1e-2, other defaults) on real network gradients: parameters and their torch gradients are read
# from the nn reference files (validation/torch_reference/data, written by that check's make_reference.py), one
# tensor per runnel parameter block. Stored per block: the start values (so the C++ test can tell a stale file)
# and the values after the step.
def read_torch_reference(path):
    arrays = {}
    with open(path) as f:
        lines = [line.split() for line in f if not line.startswith("#")]
    for i, fields in enumerate(lines):
        if fields and fields[0] == "array":
            arrays[fields[1]] = [float(v) for v in lines[i + 1]]
    return arrays


for case, dtype, tag, digits in (("lstm_2layer", torch.float64, "float64", 17), ("gru_1layer", torch.float32,
                                                                                    "float32", 9)):
    arrays = read_torch_reference(os.path.join(HERE, "..", "torch_reference", "data", f"{case}_{tag}.txt"))
    blocks = [k for k in arrays if "grad." + k in arrays and k != "inputs"]
    params = [torch.tensor(arrays[k], dtype=dtype, requires_grad=True) for k in blocks]
    opt = torch.optim.Adam(params, lr=1e-2, foreach=False)
    for k, p in zip(blocks, params):
        p.grad = torch.tensor(arrays["grad." + k], dtype=dtype)
    before = [p.detach().clone() for p in params]
    opt.step()
    for k, b, p in zip(blocks, before, params):
        put(f"network_adam.{case}_{tag}.{k}.start", b.tolist(), digits)
        put(f"network_adam.{case}_{tag}.{k}.after1", p.detach().tolist(), digits)

with open(os.path.join(HERE, "reference.txt"), "w") as f:
    f.write("# generated by make_reference.py with torch " + torch.__version__ + "; do not edit\n")
    f.write("\n".join(lines) + "\n")
print("wrote", len(lines), "records with torch", torch.__version__)
