#!/usr/bin/python3
"""Reference values for the exponential-smoothing and ridge-ARX checks of libseq::baselines.

Run with the Debian interpreter (it has python3-statsmodels, python3-numpy):
    /usr/bin/python3 validation/exp_smoothing/make_reference.py
Writes `reference.txt` beside this script: one record per line, `key v1 v2 ...`, whitespace separated, values with
17 significant digits. The C++ tests (tests/baselines/exp_smoothing_test.cpp, ridge_arx_test.cpp) read it.

Exponential smoothing: statsmodels.tsa.holtwinters.ExponentialSmoothing with initialization_method="estimated" and every
initial state held fixed (fix_params) at the values computed here by the same rule the C++ fitter uses (documented in README.md), so that both optimisers
minimise the same sum of squared one-step errors over the same smoothing parameters in [0, 1].

Ridge ARX: numpy.linalg.solve of the ridge normal equations on standardised features (README.md gives the design).
"""
import os
import numpy as np
import statsmodels
from statsmodels.tsa.holtwinters import ExponentialSmoothing

HERE = os.path.dirname(os.path.abspath(__file__))
DATASETS = os.path.join(HERE, "..", "datasets")
lines = []


def put(key, values):
    values = np.atleast_1d(np.asarray(values, dtype=float))
    lines.append(key + " " + " ".join(f"{v:.17g}" for v in values))


def load(name, column):
    import csv
    with open(os.path.join(DATASETS, name)) as f:
        return np.array([float(row[column]) for row in csv.DictReader(f)])


def initial_states(y, trend, period):
    """The heuristic initial states shared with the C++ fitter (README.md, 'Initial states')."""
    if period == 0:
        level = y[0]
        slope = (y[1] - y[0]) if trend else None
        return level, slope, None
    m = period
    level = y[:m].mean()
    slope = (y[m:2 * m].mean() - y[:m].mean()) / m if trend else None
    seasonal = y[:m] - level
    return level, slope, seasonal


def es_case(name, y, trend, period, horizon):
    level, slope, seasonal = initial_states(y, trend, period)
    model = ExponentialSmoothing(
        y, trend="add" if trend else None, seasonal="add" if period else None,
        seasonal_periods=period if period else None, initialization_method="estimated")
    # statsmodels 0.13 with initialization_method="known" still optimises the initial states in fit() (checked:
    # the returned initial_level differed from the one given). So the states are declared "estimated" and then all
    # held fixed with fix_params, which leaves only the smoothing parameters free, as in the C++ fitter.
    fixed = {"initial_level": level}
    if trend:
        fixed["initial_trend"] = slope
    if period:
        fixed.update({f"initial_seasonal.{j}": seasonal[j] for j in range(period)})
    with model.fix_params(fixed):
        fit = model.fit(optimized=True, use_brute=True)
    assert abs(fit.params["initial_level"] - level) < 1e-12, "initial level was not held fixed"
    if period:
        assert np.max(np.abs(fit.params["initial_seasons"] - seasonal)) < 1e-12, "seasonal states were not held fixed"
    p = fit.params
    put(f"{name}.smoothing_level", p["smoothing_level"])
    put(f"{name}.smoothing_trend", p["smoothing_trend"] if trend else np.nan)
    put(f"{name}.smoothing_seasonal", p["smoothing_seasonal"] if period else np.nan)
    put(f"{name}.sse", fit.sse)
    put(f"{name}.fitted", fit.fittedvalues)
    put(f"{name}.forecast", fit.forecast(horizon))
    print(f"{name}: params {p['smoothing_level']:.6f} "
          f"{p['smoothing_trend'] if trend else float('nan'):.6f} "
          f"{p['smoothing_seasonal'] if period else float('nan'):.6f} sse {fit.sse:.10g}")


put("statsmodels.version", [float(x) for x in statsmodels.__version__.split("+")[0].split(".")])

nile = load("nile.csv", "flow")
es_case("ses_nile", nile, trend=False, period=0, horizon=10)
es_case("holt_nile", nile, trend=True, period=0, horizon=10)
log_air = np.log(load("air_passengers.csv", "passengers"))
es_case("hw_log_air", log_air, trend=True, period=12, horizon=24)
co2 = load("co2.csv", "co2_ppm")
es_case("hw_co2", co2, trend=True, period=12, horizon=24)
# Two weeks of taylor with one daily season (48 half-hours): the C++ double-seasonal filter with the weekly
# smoothing parameter fixed at 0 and zero weekly states must reproduce these fitted values.
taylor = load("taylor.csv", "demand_mw")[:672]
es_case("hw_taylor48", taylor, trend=True, period=48, horizon=48)

# --- Ridge ARX: a small synthetic problem (seeded), solved with numpy.linalg.solve -----------------------------------
rng = np.random.default_rng(20260512)
n = 60
x1 = rng.normal(size=n)
x2 = np.cumsum(rng.normal(size=n)) * 0.3
y = np.zeros(n)
for t in range(n):
    y[t] = 0.5 * (y[t - 1] if t else 0.0) + 0.8 * x1[t] - 0.4 * x2[t] + rng.normal(scale=0.5) + 3.0
put("ridge.target", y)
put("ridge.input0", x1)
put("ridge.input1", x2)
target_lags, input_lags, max_lead, penalty = 3, 2, 3, 2.5
fit_begin, fit_end = 0, 45  # half-open; rows whose issue t and target t+h both lie in [fit_begin, fit_end)
put("ridge.options", [target_lags, input_lags, max_lead, penalty, fit_begin, fit_end])
inputs = [x1, x2]
for lead in range(1, max_lead + 1):
    rows, targets = [], []
    for t in range(fit_begin + max(target_lags, input_lags) - 1, fit_end - lead):
        feats = [y[t - k] for k in range(target_lags)]
        for x in inputs:
            feats += [x[t - k] for k in range(input_lags)]
        feats += [x[t + lead] for x in inputs]  # the target step's inputs (known future inputs)
        rows.append(feats)
        targets.append(y[t + lead])
    X, z = np.array(rows), np.array(targets)
    mu, sd = X.mean(axis=0), X.std(axis=0, ddof=0)
    Z = (X - mu) / sd
    zc = z - z.mean()
    beta_std = np.linalg.solve(Z.T @ Z + penalty * np.eye(Z.shape[1]), Z.T @ zc)
    slopes = beta_std / sd
    intercept = z.mean() - slopes @ mu
    put(f"ridge.lead{lead}.coefficients", np.concatenate([[intercept], slopes]))

with open(os.path.join(HERE, "reference.txt"), "w") as f:
    f.write("\n".join(lines) + "\n")
print("wrote", os.path.join(HERE, "reference.txt"))
