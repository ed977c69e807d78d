#!/usr/bin/env python3
"""Reference values for the Harris (minimum-variance) index of lib/assessment/harris.ts, and for
its extended-horizon reading (lib/assessment/extended-horizon.ts).

For a sampled loop with plant y = q^-b B/A u + C/D a (a white, variance 1) under the linear
controller u = -(Cn/Cd) y (regulation, r = 0), the output is y = psi(q) a with

    psi = C A Cd / (D (A Cd + q^-b B Cn))        (polynomials in q^-1, ascending powers)

and the Harris index (Harris, Can. J. Chem. Eng. 67, 1989) is

    index = var(y) / var_mv = sum_k psi_k^2 / sum_{k<b} psi_k^2,

the first b impulse-response terms being those no controller can change; the extended-horizon
index (Thornhill, Oettinger & Fedenczuk, J. Process Control 9, 1999) is sum_k psi_k^2 /
sum_{k<h} psi_k^2 at h = 2b - 1 terms, the dead time b - 1 doubled (SIMC's tight tau_c = theta). psi is computed by
scipy.signal.lfilter on a unit impulse (long enough for the tail to vanish below 1e-15), and
sum psi^2 cross-checked against scipy.signal.freqz (Parseval: var = mean |psi(e^jw)|^2 over a
dense grid). The TypeScript test simulates each loop with its own random numbers and compares
the FCOR estimate with these values.

Usage: python3 tests/reference/generate_assessment.py            (writes the fixture)
       python3 tests/reference/generate_assessment.py --stdout   (prints it; staleness check)
"""
import json
import math
import os
import sys

import numpy as np
from scipy import signal


def f15(x):
    x = float(x)
    return 0.0 if x == 0.0 else float(f"{x:.15g}")


def polymul(p, q):
    return list(np.convolve(p, q))


def polyadd(p, q):
    n = max(len(p), len(q))
    return [(p[i] if i < len(p) else 0.0) + (q[i] if i < len(q) else 0.0) for i in range(n)]


def shift(p, b):
    return [0.0] * b + list(p)


def mv_controller(A, B0, C, b):
    """Minimum-variance controller (Astrom, Introduction to Stochastic Control Theory, 1970,
    ch. 6): C = A F + q^-b G with deg F = b - 1; u = -G / (B0 F) y for B = B0 (a constant)."""
    F = []
    rem = list(C) + [0.0] * (b + len(A))
    for k in range(b):
        f = rem[k] / A[0]
        F.append(f)
        for i, a in enumerate(A):
            rem[k + i] -= f * a
    G = rem[b:]
    while len(G) > 1 and abs(G[-1]) < 1e-15:
        G.pop()
    return [float(g) for g in G], [B0 * f for f in F]


def pi_q(kp, ti, T):
    """Velocity-form PI, u = Cn/Cd e: Cn = kp[(1 + T/ti) - q^-1], Cd = 1 - q^-1 (backward
    difference; Astrom & Wittenmark, Computer-Controlled Systems, 3rd ed., 1997, sec. 8.3)."""
    return [kp * (1 + T / ti), -kp], [1.0, -1.0]


def case(name, A, B, b, C, D, Cn, Cd):
    if list(D) == list(Cd):
        # An integrated disturbance under integral action: D = Cd cancels exactly (both 1 - q^-1).
        num = polymul(C, A)
        den = polyadd(polymul(A, Cd), shift(polymul(B, Cn), b))
    else:
        num = polymul(polymul(C, A), Cd)
        den = polymul(D, polyadd(polymul(A, Cd), shift(polymul(B, Cn), b)))
    roots = np.roots(den)
    assert max(abs(roots)) < 0.999, f"{name}: closed loop not stable ({max(abs(roots))})"
    n = 20000
    imp = np.zeros(n)
    imp[0] = 1.0
    psi = signal.lfilter(num, den, imp)
    assert abs(psi[-100:]).max() < 1e-15, f"{name}: impulse response too long"
    var = float(np.sum(psi ** 2))
    w, h = signal.freqz(num, den, worN=1 << 16, whole=True)
    var_parseval = float(np.mean(np.abs(h) ** 2))
    assert abs(var - var_parseval) < 1e-8 * var, f"{name}: Parseval check failed"
    mv = float(np.sum(psi[:b] ** 2))
    # Extended horizon (Thornhill, Oettinger & Fedenczuk 1999) at theta + tau_c with SIMC's tight
    # tau_c = theta: a dead time of b - 1 samples gives 2 (b - 1) + 1 = 2b - 1 terms.
    h = 2 * b - 1
    ext = float(np.sum(psi[:h] ** 2))
    return {
        "name": name,
        "A": A, "B": B, "delay": b, "C": C, "D": D, "Cn": Cn, "Cd": Cd,
        "psi": [f15(v) for v in psi[:12]],
        "variance": f15(var),
        "minimumVariance": f15(mv),
        "harrisIndex": f15(var / mv),
        "extendedDelay": h,
        "extendedIndex": f15(var / ext),
    }


def main():
    cases = []
    # 1. ARMAX plant A y = q^-b B u + C a (so D = A) under its minimum-variance controller: y = F a
    #    and the index is 1 by construction.
    A = [1.0, -0.8]
    C = [1.0, 0.5]
    b = 3
    G, BF = mv_controller(A, 0.5, C, b)
    cases.append(case("armax-minimum-variance", A, [0.5], b, C, A, G, BF))
    # 2. First-order plant, delay 3 samples, PI, a drifting disturbance (IMA(1,1): C = 1 - 0.6 q^-1,
    #    D = 1 - q^-1; the disturbance model of Harris 1989 and Box & Jenkins).
    Cn, Cd = pi_q(0.6, 8.0, 1.0)
    cases.append(case("first-order-pi-ima-disturbance", [1.0, -0.9], [0.1], 3, [1.0, -0.6], [1.0, -1.0], Cn, Cd))
    # 3. Same plant, a sluggish PI: the index grows.
    Cn, Cd = pi_q(0.2, 25.0, 1.0)
    cases.append(case("first-order-sluggish-pi", [1.0, -0.9], [0.1], 3, [1.0, -0.6], [1.0, -1.0], Cn, Cd))
    # 4. Second-order plant, delay 5 samples, PI, IMA disturbance filtered by a lag.
    Cn, Cd = pi_q(0.8, 12.0, 1.0)
    cases.append(case("second-order-pi-filtered-ima", [1.0, -1.5, 0.56], [0.06, 0.04], 5, [1.0, 0.4], [1.0, -1.0], Cn, Cd))
    # 5. A stationary (AR(1)) disturbance under PI: the error then has an MA root at z = 1 (the
    #    integrator's zero), which a finite AR model approximates slowly; the TypeScript test
    #    allows for that known truncation bias on this case only.
    Cn, Cd = pi_q(0.6, 8.0, 1.0)
    cases.append(case("first-order-pi-stationary-disturbance", [1.0, -0.9], [0.1], 3, [1.0], [1.0, -0.95], Cn, Cd))
    # 6. Two lags (30 s and 8 s, K = 1, T = 1 s, zero-order hold by scipy.signal.cont2discrete)
    #    behind a transport delay of 2 s (b = 3), a drifting disturbance (random walk), and a PI
    #    tuned by SIMC (Skogestad 2003, from memory) on the half rule's effective delay
    #    theta + tau2/2 + T/2 = 6.5 s with tau_c = theta_eff: well tuned, yet above 3x minimum
    #    variance at the transport delay, within 3x at the extended horizon.
    Bd, Ad, _ = signal.cont2discrete(([1.0], np.polymul([30.0, 1.0], [8.0, 1.0])), 1.0, method="zoh")
    A2 = [f15(v) for v in Ad]
    B2 = [f15(v) for v in np.trim_zeros(Bd.flatten(), "f")]
    kc, ti = 34.0 / (2 * 6.5), min(34.0, 8 * 6.5)
    Cn, Cd = pi_q(kc, ti, 1.0)
    cases.append(case("second-order-lag-simc-pi-transport-delay", A2, B2, 3, [1.0], [1.0, -1.0], Cn, Cd))
    # 7. The same loop with a fifth of the gain and four times the integral time: sluggish, and
    #    far above 3x at the extended horizon too.
    Cn, Cd = pi_q(kc * 0.2, ti * 4, 1.0)
    cases.append(case("second-order-lag-sluggish-pi", A2, B2, 3, [1.0], [1.0, -1.0], Cn, Cd))
    data = {
        "generator": "tests/reference/generate_assessment.py",
        "libraries": "numpy, scipy.signal (lfilter, freqz); values rounded to 15 significant digits",
        "harris": cases,
    }
    text = json.dumps(data, sort_keys=True, indent=1) + "\n"
    if "--stdout" in sys.argv:
        sys.stdout.write(text)
        return
    here = os.path.dirname(os.path.abspath(__file__))
    with open(os.path.join(here, "fixtures", "assessment.json"), "w", encoding="utf-8") as fh:
        fh.write(text)


if __name__ == "__main__":
    main()
