#!/usr/bin/env python3
"""Reference sensitivity peaks for lib/assessment/loop-margin.ts.

Each case is a discrete process G(q) = q^-nk (b0 + b1 q^-1) / (1 + f1 q^-1 + f2 q^-2) under a
velocity-form PI C(q) = Kp ((1 + T/Ti) - q^-1) / (1 - q^-1) (Astrom & Wittenmark 1997, backward
differences), at period T:
- the first-order plant of tests/assessment/loop-sim.ts (K = 1, tau = 20 s, T = 1 s, its PV reading
  the plant input of 4 + 2 samples before: x+ = a x + (1 - a) K u, a = exp(-T/tau), exact for a
  zero-order hold), at the gains the tests simulate;
- a level (integrator with a lag of 10 s, gain 0.01 %/s per %) and an overdamped second-order
  process (lags 60 s and 20 s), discretised with scipy.signal.cont2discrete (zero-order hold).
Ms = max |1 / (1 + G C)| on 400,001 frequencies from 0 to pi (scipy.signal.freqz), and the gain
margin 1/|G C| where the phase of G C first crosses -180 deg.

Usage: python3 tests/reference/generate_loop_margin.py            (writes the fixture)
       python3 tests/reference/generate_loop_margin.py --stdout   (prints it)
"""
import json

import numpy as np
from scipy import signal
from fixture_io import emit


def margins(b, f, nk, kp, ti, T):
    w = np.linspace(0, np.pi, 400001)[1:]
    _, g = signal.freqz(np.r_[np.zeros(nk), b], f, worN=w)
    _, c = signal.freqz([kp * (1 + T / ti), -kp], [1.0, -1.0], worN=w)
    L = g * c
    ms = float(np.max(np.abs(1 / (1 + L))))
    ph = np.unwrap(np.angle(L))
    idx = np.nonzero((ph[:-1] > -np.pi) & (ph[1:] <= -np.pi))[0]
    gm = float(1 / np.abs(L[idx[0]])) if len(idx) else None
    return ms, gm


def zoh(num, den, T):
    """Continuous num/den to b (two coefficients, from lag 1) and f (monic, three), zero-order hold."""
    nd, dd, _ = signal.cont2discrete((num, den), T, method="zoh")
    nd = np.atleast_1d(np.squeeze(nd))
    dd = np.asarray(dd, float)
    nd, dd = nd / dd[0], dd / dd[0]
    # in powers of z: num of degree 1 over den of degree 2 -> q^-1 (n0 + n1 q^-1) / (1 + d1 q^-1 + d2 q^-2)
    n = nd[-2:]
    return [float(n[0]), float(n[1])], [float(v) for v in dd]


cases = []
a = np.exp(-1.0 / 20.0)
for kp in [2.0, 3.0, 4.0]:
    b, f, nk = [1 - a, 0.0], [1.0, -a, 0.0], 6
    ms, gm = margins(b, f, nk, kp, 20.0, 1.0)
    cases.append({"what": f"first order, tau 20 s, delay 6 samples, Kp {kp}, Ti 20 s", "b": b, "f": f, "nk": nk, "kp": kp, "ti": 20.0, "T": 1.0, "ms": round(ms, 8), "gainMargin": gm and round(gm, 8)})
for what, num, den, T, nk, kp, ti in [
    ("level: 0.01/(s (10 s + 1)), delay 5 samples of 2 s", [0.01], [10.0, 1.0, 0.0], 2.0, 5, 2.0, 120.0),
    ("level: 0.01/(s (10 s + 1)), delay 5 samples of 2 s, high gain", [0.01], [10.0, 1.0, 0.0], 2.0, 5, 6.0, 120.0),
    ("second order: 1/((60 s + 1)(20 s + 1)), delay 4 samples of 3 s", [1.0], list(np.polymul([60.0, 1.0], [20.0, 1.0])), 3.0, 4, 3.0, 70.0),
]:
    b, f = zoh(num, den, T)
    ms, gm = margins(b, f, nk, kp, ti, T)
    cases.append({"what": what, "b": b, "f": f, "nk": nk, "kp": kp, "ti": ti, "T": T, "ms": round(ms, 8), "gainMargin": gm and round(gm, 8)})
emit(json.dumps({"source": "scipy.signal.freqz and cont2discrete, tests/reference/generate_loop_margin.py", "cases": cases}, indent=1) + "\n", "loop-margin.json")
