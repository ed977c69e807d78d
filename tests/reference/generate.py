#!/usr/bin/env python3
"""Reference values for lib/control part A (roots, ZOH discretisation, closed loop, gain headroom).

Computed with general-purpose reference libraries only (numpy, scipy), independently of the
TypeScript code under test:
- ZOH discretisation: scipy.signal.cont2discrete(method="zoh"); with a dead time, the augmented
  matrix exponential (scipy.linalg.expm, Van Loan 1978) of a scipy.signal.tf2ss realisation, then
  scipy.signal.ss2tf of the discrete model with its delay registers.
- Roots: polynomials built from chosen roots with numpy.poly; the chosen roots are the truth
  (numpy.roots itself is inaccurate on clustered roots). A per-case tolerance is derived from the
  first-order perturbation bound of the rounded coefficients.
- Clustered roots near z = 1: seeded polynomials rounded to doubles; their exact roots by
  60-digit Durand-Kerner in Python's `decimal` (roots60.py), started from numpy.roots.
- Step responses: scipy.signal.lfilter on the cont2discrete model.
- Gain headroom: a scan of the loop-gain factor k with numpy.roots (max |root| >= 1), refined by
  bisection on the same test; no Jury test involved.

Deterministic: seeded generator, floats written with 15 significant digits, sorted keys.
Usage: python3 tests/reference/generate.py [--out PATH]
"""
import argparse
import json
import math
import os

import numpy as np
import scipy
import scipy.linalg
import scipy.signal

from roots60 import roots60

EPS = np.finfo(float).eps
SEED = 20261201


def f15(x):
    """Round to 15 significant digits (stable across platforms)."""
    x = float(x)
    if x == 0.0 or not math.isfinite(x):
        return 0.0 if x == 0.0 else x
    return float(f"{x:.15g}")


def clean(obj):
    if isinstance(obj, dict):
        return {k: clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [clean(v) for v in obj.tolist()]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return f15(obj)
    return obj


def trim_leading(p, tol=0.0):
    p = list(np.atleast_1d(np.asarray(p, dtype=float)))
    while len(p) > 1 and abs(p[0]) <= tol:
        p.pop(0)
    return p


# ---------------------------------------------------------------- ZOH discretisation
ZOH_PLANTS = [
    # name, num, den, T, delay (s)
    ("first-order", [1.0], [1.0, 1.0], 1.0, 0.0),
    ("first-order-gain-2-tau-5", [2.0], [5.0, 1.0], 0.5, 0.0),
    ("second-order-underdamped", [1.0], [1.0, 0.6, 1.0], 0.2, 0.0),
    ("integrating", [0.5], [1.0, 0.0], 1.0, 0.0),
    ("integrator-plus-lag", [1.0], [1.0, 1.0, 0.0], 1.0, 0.0),
    ("double-integrator", [1.0], [1.0, 0.0, 0.0], 0.5, 0.0),
    ("third-order", [6.0], [1.0, 6.0, 11.0, 6.0], 0.1, 0.0),
    ("third-order-with-zero", [1.0, 0.5], [1.0, 2.0, 5.0, 4.0], 0.25, 0.0),
    ("biproper-lead", [2.0, 1.0], [1.0, 3.0], 0.1, 0.0),
    ("three-equal-lags", [1.0], [1.0, 3.0, 3.0, 1.0], 0.5, 0.0),
    ("four-equal-lags-fast-sampling", [1.0], [1.0, 4.0, 6.0, 4.0, 1.0], 0.01, 0.0),
    ("first-order-fractional-delay", [1.0], [1.0, 1.0], 1.0, 1.5),
    ("first-order-whole-delay", [1.0], [1.0, 1.0], 1.0, 2.0),
    ("second-order-fractional-delay", [1.0], [1.0, 0.6, 1.0], 0.1, 0.35),
    ("third-order-fractional-delay", [1.0, 0.5], [1.0, 2.0, 5.0, 4.0], 0.25, 0.6),
    ("integrator-plus-lag-delay", [1.0], [1.0, 1.0, 0.0], 0.5, 0.2),
    ("biproper-fractional-delay", [2.0, 1.0], [1.0, 3.0], 0.1, 0.25),
    ("two-equal-lags-fractional-delay", [1.0], [100.0, 20.0, 1.0], 1.0, 2.5),
]


def zoh_with_delay(num, den, T, tau):
    """ZOH of G(s) e^{-s tau} by the augmented matrix exponential (tau = N T + f, 0 <= f < T)."""
    A, B, C, D = scipy.signal.tf2ss(num, den)
    n = A.shape[0]
    ratio = tau / T
    N = int(round(ratio))
    if abs(ratio - N) > 1e-9 * max(1.0, ratio):
        N = int(math.floor(ratio))
    f = tau - N * T
    if abs(f) <= 1e-9 * T:
        f = 0.0

    def aug(t):
        M = np.zeros((n + 1, n + 1))
        M[:n, :n] = A * t
        M[:n, n:] = B * t
        E = scipy.linalg.expm(M)
        return E[:n, :n], E[:n, n:]

    if f == 0.0:
        Phi, G0 = aug(T)
        G1 = np.zeros((n, 1))
    else:
        E1, G0 = aug(T - f)
        E2, Gf = aug(f)
        Phi = E1 @ E2
        G1 = E1 @ Gf
    M = N + (1 if f > 0 else 0)
    size = n + M
    Ad = np.zeros((size, size))
    Bd = np.zeros((size, 1))
    Cd = np.zeros((1, size))
    Dd = np.zeros((1, 1))
    Ad[:n, :n] = Phi
    Cd[0, :n] = C[0, :]

    def add_input(lag, G):
        if lag == 0:
            Bd[:n, 0] += G[:, 0]
        else:
            Ad[:n, n + lag - 1] += G[:, 0]

    add_input(N, G0)
    if f > 0:
        add_input(N + 1, G1)
    if M > 0:
        Bd[n, 0] = 1.0
        for j in range(2, M + 1):
            Ad[n + j - 1, n + j - 2] = 1.0
    lag = N + (1 if f > 0 else 0)
    if lag == 0:
        Dd[0, 0] = D[0, 0]
    else:
        Cd[0, n + lag - 1] = D[0, 0]
    numd, dend = scipy.signal.ss2tf(Ad, Bd, Cd, Dd)
    return numd[0], dend, N, f / T


def zoh_cases():
    out = []
    for name, num, den, T, tau in ZOH_PLANTS:
        if tau == 0.0:
            numd, dend, _ = scipy.signal.cont2discrete((num, den), T, method="zoh")
            numd = numd[0]
            method = "scipy.signal.cont2discrete(method='zoh')"
            N, frac = 0, 0.0
        else:
            numd, dend, N, frac = zoh_with_delay(num, den, T, tau)
            method = "scipy.linalg.expm augmented matrix + scipy.signal.ss2tf"
        lead = dend[0]
        numd = np.asarray(numd, dtype=float) / lead
        dend = np.asarray(dend, dtype=float) / lead
        # Exact zeros where the reference leaves rounding noise (scale-relative).
        scale = max(1.0, float(np.max(np.abs(numd))))
        numd = np.where(np.abs(numd) < 1e-13 * scale, 0.0, numd)
        dend = np.where(np.abs(dend) < 1e-13, 0.0, dend)
        out.append({
            "name": name,
            "num": num,
            "den": den,
            "T": T,
            "delay": tau,
            "delaySamples": N,
            "delayFraction": frac,
            "numZ": trim_leading(numd),
            "denZ": list(dend),
            "method": method,
        })
    return out


# ---------------------------------------------------------------- roots from chosen roots
def cplx(z):
    return [float(np.real(z)), float(np.imag(z))]


def root_tolerance(coeffs, roots, r, mult):
    """First-order perturbation bound for the rounded coefficients (times a safety factor 100)."""
    c = np.asarray(coeffs, dtype=float)
    n = len(c) - 1
    S = sum(abs(c[k]) * abs(r) ** (n - k) for k in range(n + 1))
    others = [z for z in roots if abs(z - r) > 1e-12]
    q = np.prod([r - z for z in others]) if others else 1.0
    dz = (100.0 * EPS * S / abs(q)) ** (1.0 / mult)
    return max(dz, 1e-12)


def roots_cases(rng):
    cases = []

    def add(name, roots, kind, lead=1.0, coeffs=None):
        roots = [complex(z) for z in roots]
        if coeffs is None:
            coeffs = lead * np.real(np.poly(roots))
        tols = []
        for r in roots:
            mult = sum(1 for z in roots if abs(z - r) <= 1e-12)
            tols.append(root_tolerance(coeffs, roots, r, mult))
        cases.append({
            "name": name,
            "kind": kind,
            "coeffs": list(coeffs),
            "roots": [cplx(z) for z in roots],
            "tolerance": max(tols),
        })

    add("separated-real", [0.9, 0.5, -0.3], "simple")
    add("complex-pair-and-reals", [0.8 + 0.3j, 0.8 - 0.3j, 0.5, 0.2], "simple")
    add("leading-coefficient-not-one", [0.7 + 0.2j, 0.7 - 0.2j, -0.4], "simple", lead=-3.5)
    add("cluster-near-one", [0.995, 0.985 + 0.01j, 0.985 - 0.01j, 0.97, 0.95], "simple")
    add("outside-and-inside", [1.5, 0.5 + 0.5j, 0.5 - 0.5j, -2.0], "simple")
    add("double-root-near-one", [0.98, 0.98, 0.6 + 0.2j, 0.6 - 0.2j], "multiple")
    add("triple-root", [0.9, 0.9, 0.9, 0.3], "multiple")
    add("fourfold-root", [0.95, 0.95, 0.95, 0.95], "multiple")
    # Degree 20, random simple roots in the unit disk (conjugate pairs + reals), seeded.
    rs = []
    for _ in range(8):
        rad = rng.uniform(0.2, 0.95)
        ang = rng.uniform(0.1, math.pi - 0.1)
        z = rad * complex(math.cos(ang), math.sin(ang))
        rs += [z, z.conjugate()]
    rs += list(rng.uniform(-0.9, 0.9, size=4))
    add("random-degree-20", rs, "simple")
    # Degree 64: a loop with 60 samples of dead time (ring of 60 roots) and 4 plant-like roots.
    # numpy.poly of 64 roots loses accuracy to cancellation (partial products grow to ~1e15), so
    # the ring is built exactly as z^60 + 0.9^60 (roots 0.9 e^{j(2k+1)pi/60}) and multiplied by
    # the real factors of the other roots.
    ring = [0.9 * complex(math.cos(math.pi * (2 * k + 1) / 60), math.sin(math.pi * (2 * k + 1) / 60)) for k in range(60)]
    ring_poly = np.zeros(61)
    ring_poly[0] = 1.0
    ring_poly[60] = 0.9 ** 60
    rest = np.polymul(np.polymul([1.0, -0.95], [1.0, -1.6, 0.65]), [1.0, -0.3])  # 0.95, 0.8 +- 0.1j, 0.3
    add("degree-64-dead-time-ring", ring + [0.95, 0.8 + 0.1j, 0.8 - 0.1j, 0.3], "simple", coeffs=np.polymul(ring_poly, rest))
    return cases


# ---------------------------------------------------------------- clustered roots near z = 1
# The polynomial of the independent check (degree 8, spectral radius 1.0073 in 60 digits).
CLUSTER_CHECK = [1, -7.950331912110265, 27.656735084214, -54.98338110127773, 68.32749654287207,
                 -54.34925991791389, 27.02255540039403, -7.678498832658167, 0.9546847364799502]


def cluster_cases(rng, count=60):
    """Seeded polynomials of degree 6-10 with roots clustered near z = 1 (a data-only model at
    fast sampling): conjugate pairs at small angles and reals, radius 0.96-1.01, one far root
    sometimes. The double-precision coefficients are the polynomial; its exact roots come from
    60-digit Durand-Kerner (roots60.py), not from the chosen roots."""
    def case(name, coeffs):
        # coefficients as round-trip strings (repr): the fixture's 15-digit rounding of numbers
        # would change these ill-conditioned polynomials by more than their roots' bounds allow
        return {"name": name, "coeffs": [repr(float(c)) for c in coeffs], "roots": [cplx(z) for z in roots60(coeffs)]}

    cases = [case("independent-check-degree-8", CLUSTER_CHECK)]
    for t in range(count):
        deg = int(rng.integers(6, 11))
        rs = []
        while len(rs) < deg:
            rad = rng.uniform(0.96, 1.01)
            if deg - len(rs) >= 2 and rng.uniform() < 0.6:
                ang = rng.uniform(0.0005, 0.06)
                z = rad * complex(math.cos(ang), math.sin(ang))
                rs += [z, z.conjugate()]
            elif len(rs) == 0 or rng.uniform() < 0.85:
                rs.append(rad)
            else:
                rs.append(rng.uniform(-0.5, 0.7))
        coeffs = [float(c) for c in np.real(np.poly(rs))]
        cases.append(case(f"cluster-{t}", coeffs))
    return cases


# ---------------------------------------------------------------- closed loop and gain headroom
def pi_velocity(kp, ti, T):
    """Velocity-form PI (docs/domain.md §3): N = kp[(1 + T/ti) - q^-1], D = 1 - q^-1."""
    return [kp * (1 + T / ti), -kp], [1.0, -1.0]


def pid_ideal(kp, ti, td, tf, T):
    """Ideal PID, backward differences, filtered derivative (written out term by term)."""
    beta = tf / (tf + T)
    kd = td / (tf + T)
    D = np.polymul([1.0, -1.0], [1.0, -beta])
    # q^-1 polynomials (ascending): (1 - q^-1)(1 - beta q^-1) + (T/ti)(1 - beta q^-1) + kd (1 - q^-1)^2
    Nn = qpoly_add(qpoly_add(D, (T / ti) * np.array([1.0, -beta])), kd * np.polymul([1.0, -1.0], [1.0, -1.0]))
    return list(kp * np.asarray(Nn)), list(D)


def qpoly_add(p, q):
    n = max(len(p), len(q))
    out = np.zeros(n)
    out[: len(p)] += p
    out[: len(q)] += q
    return out


def loop_parts(a, b, nk, num, den):
    A = np.concatenate([[1.0], a])
    Bq = np.concatenate([np.zeros(nk), b])
    open_ = np.convolve(A, den)
    loop = np.convolve(Bq, num)
    n = max(len(open_), len(loop))
    return np.pad(open_, (0, n - len(open_))), np.pad(loop, (0, n - len(loop)))


def critical_gain(open_, loop):
    def rho(k):
        return float(np.max(np.abs(np.roots(open_ + k * loop))))

    if rho(1.0) >= 1.0:
        raise ValueError("reference cases must be stable at k = 1")
    k = 1.0
    while rho(k * 1.001) < 1.0:
        k *= 1.001
        if k > 1e4:
            return None
    lo, hi = k, k * 1.001
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        if rho(mid) < 1.0:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def loop_cases():
    cases = []

    def add(name, a, b, nk, T, ctrl, ctrl_kind):
        num, den = ctrl
        open_, loop = loop_parts(np.asarray(a, float), np.asarray(b, float), nk, np.asarray(num, float), np.asarray(den, float))
        cl = open_ + loop
        kc = critical_gain(open_, loop)
        cases.append({
            "name": name,
            "plant": {"a": a, "b": b, "nk": nk, "T": T},
            "controller": {"num": list(num), "den": list(den), "T": T, "kind": ctrl_kind},
            "closedLoop": list(cl),
            "closedLoopRadius": float(np.max(np.abs(np.roots(cl)))),
            "gainHeadroom": kc,
        })

    add("first-order-PI", [-0.8], [0.2], 1, 1.0, pi_velocity(2.0, 5.0, 1.0), {"kp": 2.0, "ti": 5.0})
    add("first-order-delay-3-PI", [-0.9], [0.1], 3, 1.0, pi_velocity(1.0, 10.0, 1.0), {"kp": 1.0, "ti": 10.0})
    add("second-order-PI", [-1.5, 0.56], [0.05, 0.04], 1, 0.5, pi_velocity(1.5, 4.0, 0.5), {"kp": 1.5, "ti": 4.0})
    add("integrating-PI", [-1.0], [0.05], 2, 1.0, pi_velocity(0.5, 40.0, 1.0), {"kp": 0.5, "ti": 40.0})
    add(
        "second-order-PID",
        [-1.6, 0.64],
        [0.02, 0.015],
        2,
        1.0,
        pid_ideal(1.2, 8.0, 2.0, 0.2, 1.0),
        {"kp": 1.2, "ti": 8.0, "td": 2.0, "tf": 0.2},
    )
    return cases


# ---------------------------------------------------------------- step response overshoot
def step_cases():
    out = []
    for zeta in (0.707, 0.5, 0.215):
        wn, T = 1.0, 0.05
        num, den, _ = scipy.signal.cont2discrete(([wn * wn], [1.0, 2 * zeta * wn, wn * wn]), T, method="zoh")
        y = scipy.signal.lfilter(num[0], den, np.ones(int(30 / T)))
        overshoot = 100.0 * (float(np.max(y)) - 1.0)
        out.append({"zeta": zeta, "wn": wn, "T": T, "samples": int(30 / T), "overshootPercent": overshoot})
    return out


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=os.path.join(here, "fixtures", "control-a.json"))
    args = ap.parse_args()
    rng = np.random.default_rng(SEED)
    data = {
        "generator": "tests/reference/generate.py",
        "seed": SEED,
        "libraries": "numpy, scipy (versions not recorded: values rounded to 15 significant digits)",
        "zoh": zoh_cases(),
        "roots": roots_cases(rng),
        "clusters": cluster_cases(np.random.default_rng(SEED + 1)),
        "loops": loop_cases(),
        "steps": step_cases(),
    }
    text = json.dumps(clean(data), sort_keys=True, indent=1) + "\n"
    os.makedirs(os.path.dirname(os.path.abspath(args.out)), exist_ok=True)
    with open(args.out, "w", encoding="utf-8") as fh:
        fh.write(text)


if __name__ == "__main__":
    main()
