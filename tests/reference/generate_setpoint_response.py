#!/usr/bin/env python3
"""Reference set-point step responses for lib/assessment/setpoint-response.ts.

The loop of tests/assessment/loop-sim.ts, written as transfer functions in q^-1 (T = 1 s):
plant x_{k+1} = a x_k + (1 - a) K u_{k-d-1} with a = exp(-T/tau) (zero-order hold, d samples of
transport delay, one more sample of the simulator's input queue), so
G(q) = (1 - a) K q^-(d+2) / (1 - a q^-1); velocity-form PI acting on e_k = r_k - y_k,
C(q) = kp ((1 + T/ti) - q^-1) / (1 - q^-1). The closed loop r -> y is CG / (1 + CG); its unit
step response is computed with scipy.signal.lfilter. From it: the closed-loop delay (first
sample that moves), the time to 20 % and the time to 63 % of the move (t63).

Usage: python3 tests/reference/generate_setpoint_response.py            (writes the fixture)
       python3 tests/reference/generate_setpoint_response.py --stdout   (prints it)
"""
import json
import math

import numpy as np
from scipy import signal
from fixture_io import emit

CASES = [
    # SIMC at tauC = theta (Skogestad 2003, from memory) for K = 1, tau = 20 s, theta about 3.5 s
    {"name": "simc", "K": 1.0, "tau": 20.0, "d": 2, "kp": 2.9, "ti": 20.0},
    # a twentieth of that gain with a five times longer integral time
    {"name": "sluggish", "K": 1.0, "tau": 20.0, "d": 2, "kp": 0.15, "ti": 100.0},
]


def step_response(c, n=4000):
    """Set-point step response of the PI loop (velocity form, T = 1 s) around a ZOH first-order
    plant, or an integrator when c["integrating"]; dead time c["d"] + 1 samples."""
    T = 1.0
    d = c["d"]
    g_num = np.zeros(d + 3)
    if c.get("integrating", False):
        g_num[d + 2] = T * c["K"] / c["tau"]
        g_den = np.array([1.0, -1.0])
    else:
        a = math.exp(-T / c["tau"])
        g_num[d + 2] = (1 - a) * c["K"]
        g_den = np.array([1.0, -a])
    c_num = c["kp"] * np.array([1 + T / c["ti"], -1.0])
    c_den = np.array([1.0, -1.0])
    ol_num = np.convolve(c_num, g_num)
    ol_den = np.convolve(c_den, g_den)
    m = max(len(ol_num), len(ol_den))
    cl_den = np.pad(ol_den, (0, m - len(ol_den))) + np.pad(ol_num, (0, m - len(ol_num)))
    y = signal.lfilter(ol_num, cl_den, np.ones(n))
    return y


def main():
    out = []
    for c in CASES:
        y = step_response(c)
        moved = int(np.argmax(np.abs(y) > 1e-12))
        t20 = int(np.argmax(y >= 0.2))
        t63 = int(np.argmax(y >= 0.63))
        out.append({**c, "delayS": moved, "t20S": t20, "t63S": t63, "final": float(f"{y[-1]:.12g}")})
    text = json.dumps({"source": "tests/reference/generate_setpoint_response.py (scipy.signal.lfilter)", "cases": out}, indent=2) + "\n"
    emit(text, "setpoint-response.json")


if __name__ == "__main__":
    main()
