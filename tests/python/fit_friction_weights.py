#!/usr/bin/python3
"""The exponential weights of the distributed line's unsteady friction
(core/include/swashtune/model/line.hpp), fitted here with scipy.

Zielke's (1968) unsteady laminar friction convolves the flow's
acceleration with a weighting function W(tau), tau = nu t / r^2. A sum of
exponentials W ~ sum m_i exp(-n_i tau) makes it a set of first-order
states. In the Laplace domain (sigma = s r^2 / nu) the series impedance of
a reach is then, per unit length and in units of rho nu / (A r^2),
    sigma + 8 + 4 sum_i m_i sigma / (sigma + n_i),
against Brown's (1962) exact sigma / B(sigma), B = -J2(k)/J0(k), k = j
sqrt(sigma) (line_reference.viscous_factor_b). The exponents are fixed,
log-spaced from Zielke's first exponent (the square of the first zero of
J2, 26.3746) to 10^5.5; the weights are non-negative least squares
(scipy.optimize.nnls) on the relative error over sigma = j w, w = 0.1 to
1e5 (for a 20 mm line of 46 mm^2/s oil, 0.07 Hz to 7 kHz).

    /usr/bin/python3 tests/python/fit_friction_weights.py
prints the weights as C++ and the fit's worst relative error.
"""

import os
import sys

import numpy as np
from scipy.optimize import nnls
from scipy.special import jn_zeros

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import line_reference as lr  # noqa: E402

TERMS = 5


def fit(terms=TERMS):
    w = np.logspace(-1, 5, 400)
    sigma = 1j * w
    exact = sigma / lr.viscous_factor_b(sigma, 1.0, 1.0)
    target = (exact - sigma - 8.0) / 4.0
    exponents = np.logspace(np.log10(jn_zeros(2, 1)[0] ** 2), 5.5, terms)
    basis = np.array([sigma / (sigma + n) for n in exponents]).T
    weight = 1.0 / np.abs(exact)
    a = np.vstack([(basis * weight[:, None]).real, (basis * weight[:, None]).imag])
    b = np.concatenate([(target * weight).real, (target * weight).imag])
    m, _ = nnls(a, b)
    model = sigma + 8.0 + 4.0 * (basis @ m)
    worst = float(np.max(np.abs(model - exact) / np.abs(exact)))
    return exponents, m, worst


def main():
    n, m, worst = fit()
    print("// %d terms, worst relative error of the series impedance %.2e" % (len(n), worst))
    print("static constexpr double weight_m[friction_terms] = {%s};" % ", ".join("%.6g" % v for v in m))
    print("static constexpr double weight_n[friction_terms] = {%s};" % ", ".join("%.6g" % v for v in n))
    print("sum m/n = %.6f (Zielke's W integrates to 1/12 = %.6f)" % (np.sum(m / n), 1.0 / 12.0))
    return 0


if __name__ == "__main__":
    sys.exit(main())
