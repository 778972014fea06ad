#!/usr/bin/python3
"""Reference values of normal and Student t distribution functions from scipy.stats.

Source: scipy.stats.norm.ppf, scipy.stats.norm.cdf, scipy.stats.t.ppf, scipy.stats.t.cdf (Debian python3-scipy).
The C++ wrappers over Boost.Math (libseq/metrics/distributions.hpp) are compared against these numbers by
tests/metrics/distributions_test.cpp.

scipy 1.10.1's t.ppf (cephes stdtri) is accurate only to about 5e-9 relative (and gives ~7e-17 instead of 0 at
p = 0.5), while its t.cdf is accurate to rounding. So each t quantile is also written refined: the root of
t.cdf(x) - p (t.sf(x) - (1 - p) above the median, where 1 - p is exact) found by scipy.optimize.brentq with
rtol 4 * machine epsilon, started from a bracket around t.ppf. Rows "t.ppf" hold the raw scipy.stats.t.ppf value,
rows "t.ppf_refined" the refined root.

Run with the Debian interpreter: /usr/bin/python3 validation/distribution_quantiles/make_reference.py
Writes validation/distribution_quantiles/scipy_reference.csv next to this script.
Columns: function, parameter (loc/scale for the normal as "loc:scale", degrees of freedom for t), argument, value.
"""
import csv
import os

import scipy
from scipy import optimize, stats

PROBABILITIES = (1e-12, 1e-6, 0.001, 0.025, 0.05, 0.1, 0.25, 0.5, 0.6, 0.9, 0.95, 0.975, 0.99, 0.999999)
POINTS = (-30.0, -8.0, -3.0, -1.96, -0.5, 0.0, 0.7, 1.0, 2.5, 6.0)
NORMAL_PARAMETERS = ((0.0, 1.0), (10.0, 2.5), (-3.0, 0.01))
DEGREES_OF_FREEDOM = (1.0, 2.0, 2.5, 5.0, 10.0, 30.0, 1000.0)


def refined_t_quantile(p, dof):
    """Root of the t cdf at p by bracketing and Brent's method (scipy.optimize.brentq)."""
    if p == 0.5:
        return 0.0
    start = stats.t.ppf(p, dof)
    if p < 0.5:
        f = lambda x: stats.t.cdf(x, dof) - p
    else:
        f = lambda x: stats.t.sf(x, dof) - (1.0 - p)
    width = 1e-6 * abs(start)
    lo, hi = start - width, start + width
    while f(lo) * f(hi) > 0:
        width *= 4
        lo, hi = start - width, start + width
    return optimize.brentq(f, lo, hi, xtol=1e-300, rtol=4 * 2.220446049250313e-16, maxiter=500)


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    rows = []
    for loc, scale in NORMAL_PARAMETERS:
        parameter = f"{loc!r}:{scale!r}"
        for p in PROBABILITIES:
            rows.append(("norm.ppf", parameter, p, stats.norm.ppf(p, loc=loc, scale=scale)))
        for x in POINTS:
            xx = loc + x * scale
            rows.append(("norm.cdf", parameter, xx, stats.norm.cdf(xx, loc=loc, scale=scale)))
    for dof in DEGREES_OF_FREEDOM:
        for p in PROBABILITIES:
            rows.append(("t.ppf", repr(dof), p, stats.t.ppf(p, dof)))
            rows.append(("t.ppf_refined", repr(dof), p, refined_t_quantile(p, dof)))
        for x in POINTS:
            rows.append(("t.cdf", repr(dof), x, stats.t.cdf(x, dof)))
    with open(os.path.join(here, "scipy_reference.csv"), "w", newline="") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["function", "parameter", "argument", "value"])
        for function, parameter, argument, value in rows:
            writer.writerow([function, parameter, repr(float(argument)), repr(float(value))])
    print(f"scipy {scipy.__version__}: wrote {len(rows)} rows")


if __name__ == "__main__":
    main()
