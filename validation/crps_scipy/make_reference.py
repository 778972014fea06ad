#!/usr/bin/python3
"""Reference values of the CRPS of a Gaussian predictive distribution by numerical integration.

Source: the definition CRPS(F, y) = integral over x of (F(x) - 1{x >= y})^2 (Matheson & Winkler 1976;
Gneiting & Raftery 2007, eq. 20), integrated with scipy.integrate.quad (Debian python3-scipy) using
scipy.stats.norm.cdf below y and scipy.stats.norm.sf above y. The C++ closed form (Gneiting et al. 2005, eq. 5)
is compared against these numbers by tests/metrics/probabilistic_test.cpp.

Run with the Debian interpreter: /usr/bin/python3 validation/crps_scipy/make_reference.py
Writes validation/crps_scipy/gaussian_crps_quad.csv next to this script.
"""
import csv
import math
import os

import numpy as np
import scipy
from scipy import integrate, stats


def crps_by_quadrature(mu, sigma, y):
    """Integral of F(x)^2 on (-inf, y] plus (1 - F(x))^2 on [y, inf), split at mu for accuracy."""
    def below(x):
        return stats.norm.cdf(x, loc=mu, scale=sigma) ** 2

    def above(x):
        return stats.norm.sf(x, loc=mu, scale=sigma) ** 2

    pieces = []
    error = 0.0
    # (-inf, y]: break at mu when mu < y so that quad sees the bulk of the mass on a finite piece.
    edges_below = [-np.inf] + ([mu] if mu < y else []) + [y]
    for a, b in zip(edges_below[:-1], edges_below[1:]):
        value, err = integrate.quad(below, a, b, epsabs=0.0, epsrel=1e-13, limit=500)
        pieces.append(value)
        error += err
    edges_above = [y] + ([mu] if mu > y else []) + [np.inf]
    for a, b in zip(edges_above[:-1], edges_above[1:]):
        value, err = integrate.quad(above, a, b, epsabs=0.0, epsrel=1e-13, limit=500)
        pieces.append(value)
        error += err
    return math.fsum(pieces), error


def closed_form(mu, sigma, y):
    z = (y - mu) / sigma
    return sigma * (z * (2 * stats.norm.cdf(z) - 1) + 2 * stats.norm.pdf(z) - 1 / math.sqrt(math.pi))


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    table = []
    for mu in (0.0, 2.5, -40.0, 1000.0):
        for sigma in (0.01, 1.0, 3.7, 250.0):
            for z in (-6.0, -2.0, -0.5, 0.0, 0.3, 1.0, 4.5):
                table.append((mu, sigma, mu + z * sigma))
    rows = []
    worst = 0.0
    for mu, sigma, y in table:
        value, err = crps_by_quadrature(mu, sigma, y)
        worst = max(worst, abs(value - closed_form(mu, sigma, y)) / value)
        rows.append((mu, sigma, y, value, err))
    with open(os.path.join(here, "gaussian_crps_quad.csv"), "w", newline="") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["mu", "sigma", "y", "crps_quad", "quad_error_estimate"])
        for row in rows:
            writer.writerow([repr(float(v)) for v in row])
    print(f"scipy {scipy.__version__}: wrote {len(rows)} rows; worst relative gap quad vs closed form "
          f"(in Python) {worst:.3g}")


if __name__ == "__main__":
    main()
