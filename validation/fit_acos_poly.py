"""Coefficients of the polynomial behind ``toymc.physics.kinematics.elementary.acos_1``.

asin(s) = s + s z P(z) with z = s^2, for 0 <= z <= 1/4 (|s| <= 1/2).  P is fitted
by least squares at 400 Chebyshev nodes of [0, 1/4] to reference values of

    P(z) = sum_{k>=1} c_k z^(k-1),  c_k = (2k)! / (4^k (k!)^2 (2k + 1))

(the Maclaurin series of arcsin: Handbook of Mathematical Functions, NBS
Applied Mathematics Series 55 (1964), eq. 4.4.40, cited from memory), summed
in 50-digit decimal arithmetic
until the terms fall below 1e-45.  Degree 11 reaches the float64 rounding of
P itself (about 1e-15 relative); since z P(z) <= 0.05, that is below 1e-16 of
asin.  Run ``python validation/fit_acos_poly.py`` to print the coefficients
and the fit's largest relative error on a fine grid.
"""

from decimal import Decimal, getcontext

import numpy as np

DEGREE = 11


def p_reference(z):
    """P(z) from the arcsin series in 50-digit decimal arithmetic."""
    getcontext().prec = 50
    z = Decimal(float(z))
    total = Decimal(0)
    c = Decimal(1)
    zk = Decimal(1)
    for k in range(1, 400):
        c = c * Decimal((2 * k - 1) * (2 * k)) / Decimal(4 * k * k)   # (2k)! / (4^k k!^2)
        term = c / Decimal(2 * k + 1) * zk
        total += term
        zk *= z
        if term < Decimal(10) ** -45:
            break
    return float(total)


def fit(degree=DEGREE, nodes=400):
    """Monomial coefficients (lowest first) of the least-squares fit of P on [0, 1/4]."""
    t = np.cos(np.pi * (np.arange(nodes) + 0.5) / nodes)
    z = 0.125 * (t + 1.0)
    y = np.array([p_reference(v) for v in z])
    cheb = np.polynomial.chebyshev.Chebyshev.fit(z, y, degree, domain=[0.0, 0.25])
    return cheb.convert(kind=np.polynomial.Polynomial, domain=[0.0, 0.25],
                        window=[0.0, 0.25]).coef


def main():
    coef = fit()
    zt = np.linspace(0.0, 0.25, 1001)
    ref = np.array([p_reference(v) for v in zt])
    err = np.max(np.abs(np.polynomial.polynomial.polyval(zt, coef) / ref - 1.0))
    print("coefficients:", tuple(float(c) for c in coef))
    print(f"largest relative error of P on [0, 1/4]: {err:.2e}")


if __name__ == "__main__":
    main()
