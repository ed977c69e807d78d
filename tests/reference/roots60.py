"""Roots of a polynomial with double-precision coefficients (taken as exact), in 60-digit decimal
arithmetic (Python's `decimal` module; no mpmath).

Method: Weierstrass / Durand-Kerner simultaneous iteration (Weierstrass 1891; Kerner 1966),
z_i <- z_i - p(z_i) / (a_0 prod_{j != i} (z_i - z_j)), started from numpy.roots and run until
every correction is below 1e-40 relative. For simple roots the iteration converges quadratically;
the polynomials here have simple (if clustered) roots, so 60 digits leave ~45 correct digits after
the cluster's ill-conditioning (which is about 1e-16 -> 1e-3, i.e. 13 digits lost).
"""
from decimal import Decimal, getcontext

import numpy as np

getcontext().prec = 60


class C:
    """Complex number with Decimal parts (only what Durand-Kerner needs)."""

    __slots__ = ("re", "im")

    def __init__(self, re, im=Decimal(0)):
        self.re = re
        self.im = im

    def __add__(self, o):
        return C(self.re + o.re, self.im + o.im)

    def __sub__(self, o):
        return C(self.re - o.re, self.im - o.im)

    def __mul__(self, o):
        return C(self.re * o.re - self.im * o.im, self.re * o.im + self.im * o.re)

    def __truediv__(self, o):
        d = o.re * o.re + o.im * o.im
        return C((self.re * o.re + self.im * o.im) / d, (self.im * o.re - self.re * o.im) / d)

    def abs2(self):
        return self.re * self.re + self.im * self.im


def roots60(coeffs, max_iter=500):
    """Roots (as Python complex, rounded from 60 digits) of the real polynomial `coeffs`
    (descending powers, exact binary doubles)."""
    a = [Decimal(float(c)) for c in coeffs]  # exact conversion of each double
    n = len(a) - 1
    z = [C(Decimal(float(r.real)), Decimal(float(r.imag))) for r in np.roots(coeffs)]
    # break exact symmetry/coincidence of the double-precision start
    z = [zi + C(Decimal(k + 1) * Decimal("1e-9"), Decimal(k + 1) * Decimal("7e-10")) for k, zi in enumerate(z)]
    tol = Decimal("1e-80")  # corrections below 1e-40 relative
    for _ in range(max_iter):
        worst = Decimal(0)
        new = []
        for i in range(n):
            p = C(a[0])
            for k in range(1, n + 1):
                p = p * z[i] + C(a[k])
            q = C(a[0])
            for j in range(n):
                if j != i:
                    q = q * (z[i] - z[j])
            d = p / q
            new.append(z[i] - d)
            worst = max(worst, d.abs2() / max(z[i].abs2(), Decimal("1e-60")))
        z = new
        if worst < tol:
            break
    else:
        raise RuntimeError("Durand-Kerner did not converge")
    return [complex(float(w.re), float(w.im)) for w in z]
