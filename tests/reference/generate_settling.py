#!/usr/bin/env python3
"""Reference set-point step responses of the control error for lib/assessment/spectral-line.ts
(`settledMask`: how long after a set-point move the error is left out of the line test).

The loop of tests/assessment/loop-sim.ts as written in generate_setpoint_response.py (T = 1 s):
plant G(q) = (1 - a) K q^-(d+2) / (1 - a q^-1), a = exp(-T/tau) (zero-order hold, d samples of
transport delay, one more of the simulator's input queue); velocity-form PI
C(q) = kp ((1 + T/ti) - q^-1) / (1 - q^-1). The error after a set-point step of 10 % is
e = 10 (1 - y) with y the unit step response of CG / (1 + CG) (that file's `step_response`,
scipy.signal.lfilter). Written: the error trace and its 2 % settling time (the last sample with
|e| above 2 % of the move, plus one).

Usage: python3 tests/reference/generate_settling.py            (writes the fixture)
       python3 tests/reference/generate_settling.py --stdout   (prints it)
"""
import json
import os
import sys

import numpy as np

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from generate_setpoint_response import step_response  # noqa: E402  (the same loop, scipy.signal.lfilter)
from fixture_io import emit  # noqa: E402

MOVE = 10.0
CASES = [
    # SIMC at tauC = theta (Skogestad 2003, from memory) for K = 1, tau = 20 s, theta about 3.5 s
    {"name": "simc", "K": 1.0, "tau": 20.0, "d": 2, "kp": 2.9, "ti": 20.0},
    # gain about 1.7 times SIMC's with half its integral time: an underdamped answer
    {"name": "tight", "K": 1.0, "tau": 20.0, "d": 2, "kp": 5.0, "ti": 10.0},
    # dead-time dominant: tau 5 s, theta about 21 s, SIMC kp = tau / (K 2 theta), ti = tau
    {"name": "dead-time", "K": 1.0, "tau": 5.0, "d": 20, "kp": 0.12, "ti": 5.0},
    # a twentieth of SIMC's gain with a five times longer integral time
    {"name": "sluggish", "K": 1.0, "tau": 20.0, "d": 2, "kp": 0.15, "ti": 100.0},
]


def error_trace(c, n):
    return MOVE * (1.0 - step_response(c, n))


def main():
    out = []
    for c in CASES:
        e = error_trace(c, 4000)
        above = np.nonzero(np.abs(e) > 0.02 * MOVE)[0]
        settle = int(above[-1]) + 1
        n = min(len(e), 3 * settle + 50)
        out.append({**c, "move": MOVE, "settle2pct": settle, "e": [float(f"{v:.10g}") for v in e[:n]]})
    text = json.dumps({"source": "tests/reference/generate_settling.py (scipy.signal.lfilter)", "cases": out}) + "\n"
    emit(text, "settling.json")


if __name__ == "__main__":
    main()
