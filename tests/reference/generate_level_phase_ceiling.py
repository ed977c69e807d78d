#!/usr/bin/env python3
"""Reference phase margins for lib/assessment/level-phase-ceiling.ts.

A PI controller Kc (1 + 1/(j w Ti)) on an integrating process k' e^(-j w theta) / (j w) with
theta = 1 s and k' = 1 (the best margin over all gains does not depend on k', which only shifts the
gain): for each Ti / theta, the phase margin 180 deg + angle L(j wc) at the gain crossover wc is
computed with numpy over a log grid of 1,201 gains (the crossover by bisection on |L| = 1 on a
log-spaced bracket), and the largest margin over the gains is kept. Also the same loop with a
first-order lag of 0.5 s after the integrator (the ceiling must still hold: a lag only takes phase away).

Usage: python3 tests/reference/generate_level_phase_ceiling.py            (writes the fixture)
       python3 tests/reference/generate_level_phase_ceiling.py --stdout   (prints it)
"""
import json

import numpy as np
from fixture_io import emit


def loop(w, kc, ti, lag):
    c = kc * (1 + 1 / (1j * w * ti))
    g = np.exp(-1j * w) / (1j * w * (1 + 1j * w * lag))
    return c * g


def phase_margin(kc, ti, lag):
    # |L| falls monotonically with w here; bracket the crossover on a log grid, then bisect.
    ws = np.logspace(-6, 3, 2000)
    mags = np.abs(loop(ws, kc, ti, lag))
    idx = np.nonzero((mags[:-1] >= 1) & (mags[1:] < 1))[0]
    if len(idx) == 0:
        return None
    a, b = ws[idx[0]], ws[idx[0] + 1]
    for _ in range(80):
        m = np.sqrt(a * b)
        if abs(loop(m, kc, ti, lag)) >= 1:
            a = m
        else:
            b = m
    wc = np.sqrt(a * b)
    # unwrapped phase: -90 deg (integrator) - theta w - atan(1/(w Ti)) - atan(w lag)
    ph = -np.pi / 2 - wc - np.arctan(1 / (wc * ti)) - np.arctan(wc * lag)
    return float(np.degrees(np.pi + ph))


def best_margin(ti, lag):
    best = -180.0
    for kc in np.logspace(-4, 2, 1201):
        pm = phase_margin(kc, ti, lag)
        if pm is not None and pm > best:
            best = pm
    return best


cases = []
for r in [0.8, 1.5, 2.0, 2.5, 3.0, 3.3, 4.0, 6.0, 8.0, 14.0]:
    cases.append({"tiOverDead": r, "lagS": 0.0, "bestMarginDeg": round(best_margin(r, 0.0), 6)})
for r in [2.5, 8.0]:
    cases.append({"tiOverDead": r, "lagS": 0.5, "bestMarginDeg": round(best_margin(r, 0.5), 6)})
emit(json.dumps({"source": "numpy search over gains, tests/reference/generate_level_phase_ceiling.py", "cases": cases}, indent=1) + "\n", "level-phase-ceiling.json")
