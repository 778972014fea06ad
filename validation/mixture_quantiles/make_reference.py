#!/usr/bin/python3
"""Reference quantiles and moments of predictive mixtures, for tests/uncertainty/mixture_test.cpp.

Run with the Debian interpreter (python3-scipy, python3-numpy):
    /usr/bin/python3 validation/mixture_quantiles/make_reference.py > validation/mixture_quantiles/reference.txt

Sources (see README.md):
  - Gaussian mixtures: quantiles by scipy.optimize.brentq on the mixture CDF built from scipy.stats.norm.cdf;
    moments by the law of total variance.
  - Point values: numpy.quantile(method="linear") (Hyndman & Fan 1996 definition 7), numpy.mean, numpy.var (ddof=0).
  - Quantile-set members: each member CDF is numpy.interp over its sorted quantiles with linear tails (the rule
    documented in libseq/uncertainty/mixture.hpp); the mixture CDF is inverted by scipy.optimize.brentq and its
    moments come from scipy.integrate.quad of the CDF, independently of the closed forms used in C++.
"""
import sys

import numpy as np
from scipy import integrate, optimize, stats

LEVELS = [0.001, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999]
XTOL = 1e-15


def fmt(values):
    return " ".join(repr(float(v)) for v in values)


def emit(out, kind, name, fields):
    out.write(f"case {kind} {name}\n")
    for key, values in fields:
        out.write(f"{key} {fmt(values)}\n")
    out.write("end\n")


def gaussian_cases(out):
    cases = {
        "single_standard": ([0.0], [1.0]),
        "two_equal_bimodal": ([-3.0, 3.0], [1.0, 1.0]),
        "five_members_discharge": ([12.5, 14.0, 11.2, 13.1, 19.8], [2.25, 4.0, 1.0, 9.0, 16.0]),
        "wide_and_narrow": ([100.0, 100.5], [1e-4, 400.0]),
        "large_offset": ([1.0e4, 1.0e4 + 1.0, 1.0e4 - 2.0], [0.25, 0.5, 1.0]),
    }
    for name, (means, variances) in cases.items():
        m = np.array(means)
        s = np.sqrt(np.array(variances))

        def cdf(x):
            return float(np.mean(stats.norm.cdf((x - m) / s)))

        quantiles = []
        for p in LEVELS:
            z = stats.norm.ppf(p)
            lo, hi = float(np.min(m + s * z)) - 1.0, float(np.max(m + s * z)) + 1.0
            quantiles.append(optimize.brentq(lambda x: cdf(x) - p, lo, hi, xtol=XTOL, rtol=4 * np.finfo(float).eps,
                                             maxiter=500))
        mean = float(np.mean(m))
        variance = float(np.mean(np.array(variances) + m * m) - mean * mean)
        emit(out, "gaussian", name, [("means", means), ("variances", variances), ("levels", LEVELS),
                                     ("quantiles", quantiles), ("mean", [mean]), ("variance", [variance])])


def point_cases(out):
    rng = np.random.default_rng(20260102)
    cases = {
        "one_value": np.array([3.5]),
        "two_values": np.array([1.0, 2.0]),
        "seven_gamma": rng.gamma(2.0, 3.0, size=7),
        "fifty_normal": rng.normal(10.0, 2.0, size=50),
        "with_ties": np.array([1.0, 1.0, 2.0, 2.0, 2.0, 5.0, 8.0, 8.0]),
    }
    for name, values in cases.items():
        quantiles = np.quantile(values, LEVELS, method="linear")
        emit(out, "points", name, [("values", values), ("levels", LEVELS), ("quantiles", quantiles),
                                   ("median", [np.quantile(values, 0.5, method="linear")]),
                                   ("mean", [np.mean(values)]), ("variance", [np.var(values)])])


def member_knots(levels, values):
    v = np.sort(np.asarray(values, dtype=float))
    t = np.asarray(levels, dtype=float)
    lower = v[0] - t[0] * (v[1] - v[0]) / (t[1] - t[0])
    upper = v[-1] + (1 - t[-1]) * (v[-1] - v[-2]) / (t[-1] - t[-2])
    return np.concatenate([[lower], v, [upper]]), np.concatenate([[0.0], t, [1.0]])


def quantile_set_cases(out):
    cases = {
        "three_members": ([0.1, 0.5, 0.9], [[1.0, 2.0, 4.0], [1.5, 2.5, 3.0], [0.0, 3.0, 7.0]]),
        "one_member_crossing": ([0.05, 0.25, 0.5, 0.75, 0.95], [[5.0, 3.0, 6.0, 7.5, 9.0]]),
        # Two groups far apart: the mixture CDF is flat at 2/3 between them (no level in LEVELS falls on the flat part,
        # where brentq could return any point of the flat stretch while the C++ returns its left end, inf{x: F >= p}).
        "disjoint_members": ([0.25, 0.5, 0.75], [[0.0, 1.0, 2.0], [0.5, 1.5, 2.5], [10.0, 11.0, 13.0]]),
    }
    for name, (levels, members) in cases.items():
        knots = [member_knots(levels, m) for m in members]

        def cdf(x):
            return float(np.mean([np.interp(x, kx, kf, left=0.0, right=1.0) for kx, kf in knots]))

        lo = min(k[0][0] for k in knots)
        hi = max(k[0][-1] for k in knots)
        quantiles = [optimize.brentq(lambda x: cdf(x) - p, lo, hi, xtol=XTOL, rtol=4 * np.finfo(float).eps,
                                     maxiter=500) for p in LEVELS]
        breaks = sorted(set(float(x) for k in knots for x in k[0]))
        # E[X] = hi - int F, E[X^2] = hi^2 - int 2 x F over [lo, hi] (integration by parts of a CDF on [lo, hi]).
        integral_f = integrate.quad(cdf, lo, hi, points=breaks, limit=400, epsabs=1e-13, epsrel=1e-13)[0]
        integral_xf = integrate.quad(lambda x: 2 * x * cdf(x), lo, hi, points=breaks, limit=400, epsabs=1e-13,
                                     epsrel=1e-13)[0]
        mean = hi - integral_f
        variance = hi * hi - integral_xf - mean * mean
        emit(out, "quantile_set", name, [("member_levels", levels), ("values", np.ravel(members)),
                                         ("levels", LEVELS), ("quantiles", quantiles), ("mean", [mean]),
                                         ("variance", [variance])])


def main():
    out = sys.stdout
    out.write("# Generated by validation/mixture_quantiles/make_reference.py with scipy "
              f"{__import__('scipy').__version__}, numpy {np.__version__}. Do not edit by hand.\n")
    gaussian_cases(out)
    point_cases(out)
    quantile_set_cases(out)


if __name__ == "__main__":
    main()
