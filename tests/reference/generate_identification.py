#!/usr/bin/env python3
"""Reference data for ARX identification tests (lib/control/arx.ts, rls.ts).

Everything here is computed by general-purpose reference libraries, never by the code under test:
- data: seeded numpy Generator; ARX output y = B/A u + 1/A e by scipy.signal.lfilter;
- batch least squares by numpy.linalg.lstsq on the ARX regressor matrix (Ljung, System
  Identification, 2nd ed., 1999, sec. 7.3), after removing the sample means of u and y;
- Akaike's FPE = V (1 + d/N) / (1 - d/N) and AIC = N ln V + 2 d (Ljung 1999, sec. 16.4)
  for every structure of a grid, all over the same equations (from the longest start-up on);
- NRMSE fit of the simulated output, 100 (1 - ||y - yhat|| / ||y - mean y||), with yhat from
  scipy.signal.lfilter (zero initial conditions) on the mean-removed data.

Usage: python3 tests/reference/generate_identification.py            (writes the fixture)
       python3 tests/reference/generate_identification.py --stdout   (prints it; used by the
       staleness check in tests/control/arx.test.ts)
"""
import json
import os
import sys

import numpy as np
from scipy import signal

SEED = 20240607
N = 400


def regressors(u, y, na, nb, nk, start):
    rows = []
    for k in range(start, len(y)):
        rows.append([-y[k - 1 - i] for i in range(na)] + [u[k - nk - j] for j in range(nb)])
    return np.array(rows), y[start:]


def fit(u, y, na, nb, nk, start):
    X, t = regressors(u, y, na, nb, nk, start)
    theta, _, _, _ = np.linalg.lstsq(X, t, rcond=None)
    res = t - X @ theta
    m, d = X.shape
    V = float(res @ res / m)
    fpe = V * (1 + d / m) / (1 - d / m)
    aic = m * np.log(V) + 2 * d
    a = theta[:na]
    b = theta[na:]
    num = np.concatenate([np.zeros(nk), b])
    den = np.concatenate([[1.0], a])
    yhat = signal.lfilter(num, den, u)
    fitp = 100 * (1 - np.linalg.norm(y - yhat) / np.linalg.norm(y - y.mean()))
    return {
        "na": na,
        "nb": nb,
        "nk": nk,
        "a": [float(v) for v in a],
        "b": [float(v) for v in b],
        "loss": V,
        "fpe": float(fpe),
        "aic": float(aic),
        "fit": float(fitp),
    }


def case(name, rng, a_true, b_true, nk_true, noise, grid):
    u = rng.standard_normal(N)
    e = noise * rng.standard_normal(N)
    num = np.concatenate([np.zeros(nk_true), b_true])
    den = np.concatenate([[1.0], a_true])
    y = signal.lfilter(num, den, u) + signal.lfilter([1.0], den, e) + 3.0  # operating point 3.0
    u = u + 40.0  # operating point 40 % of span
    uc = u - u.mean()
    yc = y - y.mean()
    nas, nbs, nks = grid
    start = max(max(na, nk + nb - 1) for na in nas for nb in nbs for nk in nks)
    cands = [fit(uc, yc, na, nb, nk, start) for na in nas for nb in nbs for nk in nks]
    return {
        "name": name,
        "true": {"a": list(a_true), "b": list(b_true), "nk": nk_true, "noiseStd": noise},
        "u": [float(v) for v in u],
        "y": [float(v) for v in y],
        "grid": {"na": nas, "nb": nbs, "nk": nks},
        "start": start,
        "candidates": cands,
    }


def main():
    rng = np.random.default_rng(SEED)
    cases = [
        # A = 1 - 1.5 q^-1 + 0.7 q^-2 (poles 0.75 +- 0.37j), B = 0.5 + 0.3 q^-1, nk = 1.
        case("second-order, nk 1", rng, [-1.5, 0.7], [0.5, 0.3], 1, 0.1, ([2], [2], [1])),
        # Same plant with a 3-sample delay; a structure grid for FPE/AIC and delay selection.
        case("second-order, nk 3, grid", rng, [-1.5, 0.7], [0.5, 0.3], 3, 0.1, ([1, 2, 3], [1, 2], [1, 2, 3, 4, 5])),
    ]
    out = {
        "generator": "tests/reference/generate_identification.py",
        "seed": SEED,
        "numpy": np.__version__.split(".")[0],
        "cases": cases,
    }
    text = json.dumps(out, indent=1, sort_keys=True) + "\n"
    if "--stdout" in sys.argv:
        sys.stdout.write(text)
        return
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "fixtures", "identification.json")
    with open(path, "w") as f:
        f.write(text)


if __name__ == "__main__":
    main()
