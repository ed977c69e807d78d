#!/usr/bin/env python3
"""Reference overshoot of closed-loop set-point step responses for lib/assessment/setpoint-overshoot.ts.

1. "loops": the discrete loops of tests/assessment/loop-sim.ts (T = 1 s), written as transfer
   functions in q^-1 as in generate_setpoint_response.py: a first-order plant
   G(q) = (1 - a) K q^-(d+2) / (1 - a q^-1), a = exp(-T/tau), or an integrating one
   G(q) = (T K / tau) q^-(d+2) / (1 - q^-1); velocity-form PI C(q) = kp ((1 + T/ti) - q^-1) / (1 - q^-1).
   Unit set-point step response of CG / (1 + CG) by scipy.signal.lfilter; its peak less 1.
2. "survey": continuous plants with dead time theta = 1 (zero-order hold at theta/40 by
   scipy.signal.cont2discrete, the delay as whole samples), PI/PID by SIMC (Skogestad, J. Process
   Control 13, 2003; from memory) at its tightest tauC = theta, and "aggressive" settings: SIMC's
   Ti times 0.3 or 0.7 with the gain set for a gain margin of 1.25 or 1.7. Overshoot of each.

Usage: python3 tests/reference/generate_setpoint_overshoot.py            (writes the fixture)
       python3 tests/reference/generate_setpoint_overshoot.py --stdout   (prints it)
"""
import json

import numpy as np
from scipy import signal
from fixture_io import emit
from generate_setpoint_response import step_response  # the same loop, with an integrating plant too

LOOPS = [
    # SIMC at tauC = theta for K = 1, tau = 20 s, theta about 3.5 s (as generate_setpoint_response.py)
    {"name": "simc", "integrating": False, "K": 1.0, "tau": 20.0, "d": 2, "kp": 2.9, "ti": 20.0},
    # far more gain and integral action on the same plant
    {"name": "aggressive", "integrating": False, "K": 1.0, "tau": 20.0, "d": 2, "kp": 4.5, "ti": 6.0},
    # level loop: k' = K / tau = 0.05 /s, theta about 3.5 s; SIMC tauC = theta: kp = 1 / (k' 2 theta), Ti = 8 theta
    {"name": "simc-level", "integrating": True, "K": 1.0, "tau": 20.0, "d": 2, "kp": 2.9, "ti": 28.0},
    {"name": "aggressive-level", "integrating": True, "K": 1.0, "tau": 20.0, "d": 2, "kp": 3.5, "ti": 12.0},
]


def loop_step(c, n=3000):
    return step_response(c, n)


def continuous_step(num, den, theta, kc, ti, td=0.0, span=200.0):
    h = theta / 40
    d = int(round(theta / h))
    gn, gd, _ = signal.cont2discrete((num, den), h, method="zoh")
    gn = np.atleast_1d(np.squeeze(gn))
    gd = np.atleast_1d(np.squeeze(gd))
    gn = np.concatenate([np.zeros(d), gn])
    # PID in velocity form, backward differences at the fine step
    cn = kc * np.array([1 + h / ti + td / h, -1 - 2 * td / h, td / h])
    cd = np.array([1.0, -1.0])
    on = np.convolve(cn, gn)
    od = np.convolve(cd, gd)
    m = max(len(on), len(od))
    cl = np.pad(od, (0, m - len(od))) + np.pad(on, (0, m - len(on)))
    return signal.lfilter(on, cl, np.ones(int(span * theta / h)))


def gain_margin(num, den, theta, kc, ti):
    w = np.logspace(-4, 3, 200000)
    s = 1j * w
    L = kc * (1 + 1 / (ti * s)) * np.polyval(num, s) / np.polyval(den, s) * np.exp(-theta * s)
    ph = np.unwrap(np.angle(L))
    i = int(np.argmax(ph <= -np.pi))
    return 1 / abs(L[i])


def r6(v):
    return float(f"{v:.6g}")


def survey():
    out = []
    theta = 1.0
    plants = [("first-order", r) for r in [0.1, 0.5, 1, 2, 4, 8, 16, 50, 200]] + [("integrating", lag) for lag in [0, 0.5, 1, 2]]
    for kind, p in plants:
        if kind == "first-order":
            tau = p * theta
            num, den, te = [1.0], [tau, 1.0], theta
            kc, ti = tau / (2 * te), min(tau, 8 * te)
        else:
            lag = p
            num, den, te = [1.0], ([lag, 1.0, 0.0] if lag > 0 else [1.0, 0.0]), theta + lag
            kc, ti = 1 / (2 * te), 8 * te
        y = continuous_step(num, den, theta, kc, ti)
        out.append({"plant": kind, "ratioOrLag": p, "tuning": "simc", "overshoot": r6(y.max() - 1)})
        if kind == "first-order" and p not in (1, 16, 200) or kind == "integrating" and p != 0:
            continue
        for f in (0.3, 0.7):
            for gm in (1.25, 1.7):
                k0 = gain_margin(num, den, theta, kc, ti * f)
                y = continuous_step(num, den, theta, kc * k0 / gm, ti * f, span=400.0)
                out.append({"plant": kind, "ratioOrLag": p, "tuning": f"aggressive Ti x{f} GM {gm}", "overshoot": r6(y.max() - 1)})
    return out


def main():
    loops = []
    for c in LOOPS:
        y = loop_step(c)
        loops.append({**c, "overshoot": r6(y.max() - 1), "t63S": int(np.argmax(y >= 0.63)), "final": r6(y[-1])})
    text = json.dumps({"source": "tests/reference/generate_setpoint_overshoot.py (scipy.signal.lfilter, cont2discrete)", "loops": loops, "survey": survey()}, indent=2) + "\n"
    emit(text, "setpoint-overshoot.json")


if __name__ == "__main__":
    main()
