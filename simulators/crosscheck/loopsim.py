"""Closed-loop simulation for the independent cross-check set of the routine-data assessment.

Shares no code with the TypeScript simulators (simulators/*.ts): its own plant discretisation,
PI controller, load noise and valve-stiction model, each from a different source than theirs.

Everything runs in deviation variables in % of span: PV % = 100 (PV - pvLo) / (pvHi - pvLo),
MV % of output. The caller adds the operating point.
"""
import numpy as np
from scipy import signal


# ---------------------------------------------------------------- plant
def plant_tf(p):
    """Continuous transfer function (num, den) of the plant without its dead time.

    Kinds (textbook forms, e.g. Seborg, Edgar & Mellichamp, Process Dynamics and Control, ch. 5-6):
      fopdt   K / (tau s + 1)
      sopdt   K / ((tau1 s + 1)(tau2 s + 1))           (overdamped second order)
      integ   k / (s (lag s + 1))                       (level: integrator with a small lag)
    The dead time theta is a whole number of samples of input delay (below).
    """
    if p["kind"] == "fopdt":
        return [p["K"]], [p["tau"], 1.0]
    if p["kind"] == "sopdt":
        return [p["K"]], list(np.polymul([p["tau1"], 1.0], [p["tau2"], 1.0]))
    if p["kind"] == "integ":
        return [p["K"]], [p["lag"], 1.0, 0.0]
    raise ValueError(p["kind"])


def discretise(p, T):
    """Zero-order-hold state space at period T with scipy.signal.cont2discrete ('zoh'), the hold a
    digital controller's output really has (common practice)."""
    num, den = plant_tf(p)
    A, B, C, D = signal.tf2ss(num, den)
    Ad, Bd, Cd, Dd, _ = signal.cont2discrete((A, B, C, D), T, method="zoh")
    return Ad, Bd[:, 0], Cd[0, :], float(Dd[0, 0])


# ---------------------------------------------------------------- tuning
def simc_pi(p, T, tau_c=None):
    """SIMC PI settings (Skogestad, J. Process Control 13 (2003) 291-309, from memory).

    fopdt: Kc = tau / (K (tau_c + theta)), Ti = min(tau, 4 (tau_c + theta)).
    sopdt: the half rule first: tau1' = tau1 + tau2/2, theta' = theta + tau2/2.
    integ: the lag joins the dead time, Kc = 1 / (k (tau_c + theta)), Ti = 4 (tau_c + theta).
    A sampled PI adds about T/2 of dead time (common practice). tau_c = theta by default
    (Skogestad's "tight but robust" choice).
    """
    theta = p["theta"] + T / 2
    if p["kind"] == "fopdt":
        tau = p["tau"]
    elif p["kind"] == "sopdt":
        tau = p["tau1"] + p["tau2"] / 2
        theta += p["tau2"] / 2
    else:
        theta += p["lag"]
        tc = theta if tau_c is None else tau_c
        return 1.0 / (p["K"] * (tc + theta)), 4.0 * (tc + theta), theta
    tc = theta if tau_c is None else tau_c
    return tau / (p["K"] * (tc + theta)), min(tau, 4.0 * (tc + theta)), theta


# ---------------------------------------------------------------- noise
def arma_load(rng, n, T, tau_load, std):
    """Coloured load: ARMA(1,1) d_k = a d_{k-1} + e_k + c e_{k-1}, a = exp(-T/tau_load), c = 0.5,
    scaled to standard deviation `std` (a first-order coloured noise with a zero: common practice
    for unmeasured loads, e.g. Box & Jenkins' ARMA models)."""
    a = np.exp(-T / tau_load)
    d = signal.lfilter([1.0, 0.5], [1.0, -a], rng.standard_normal(n))
    return std * d / (np.std(d) or 1.0)


def periodic_load(n, T, period, amp, shape, phase):
    """An outside periodic load: a sinusoid or a square wave of period `period` s."""
    t = np.arange(n) * T
    s = np.sin(2 * np.pi * t / period + phase)
    return amp * (np.sign(s) if shape == "square" else s)


# ---------------------------------------------------------------- valve
class HeValve:
    """Two-parameter semi-physical stiction model of He, Wang, Pottmann & Qin, "A curve fitting
    method for detecting valve stiction in oscillating control loops", Ind. Eng. Chem. Res. 46
    (2007) 4549-4560 (from memory): a residual force u_r accumulates the controller output's
    changes; while |u_r| <= fs (static friction band) the stem stays; when it exceeds fs the stem
    moves by u_r - sign(u_r) fd and the residual is left at sign(u_r) fd (fd: dynamic friction
    band, fd < fs; the slip is fs - fd). Different from the Choudhury-Thornhill-Shah (S, J) model
    the TypeScript simulators use.
    """

    def __init__(self, fs, fd, x0, u0=0.0):
        """x0: where the stem is stuck at the start; u0: the controller's output then."""
        self.fs, self.fd, self.x, self.ur, self.u_prev, self.moves = fs, fd, x0, 0.0, u0, 0

    def step(self, u):
        self.ur += u - self.u_prev
        self.u_prev = u
        if abs(self.ur) > self.fs:
            s = 1.0 if self.ur > 0 else -1.0
            self.x += self.ur - s * self.fd
            self.ur = s * self.fd
            self.moves += 1
        return self.x


class IdealValve:
    moves = 0

    def step(self, u):
        return u


# ---------------------------------------------------------------- controller and loop
def simulate(p, T, n, kc, ti, *, sp=None, load=None, valve=None, u0=0.0, mv_lim=(-50.0, 50.0),
             manual=None, manual_mv=None, noise_std=0.0, rng=None, fault=None):
    """Closed loop at period T for n samples, deviation variables (% of span).

    PI controller in positional form u = u0 + Kc (e + I / Ti), I = sum e T, reverse acting
    (e = SP - PV for a positive plant gain), output clamped to mv_lim with anti-windup by
    conditional integration: the integral stops while the output sits at a limit and the error
    would drive it further (Astrom & Hagglund, Advanced PID Control, 2006, sec. 3.5, from memory).
    In manual (manual[k] True) the output is manual_mv[k] and the integral tracks it (bumpless).
    Load enters at the plant input (MV units); white measurement noise on the PV. fault = (k0, value)
    makes the transmitter fail at sample k0: from then on the controller (and the record) sees
    `value`, or the reading at k0 when value is None (a frozen transmitter).
    Returns dict of arrays: pv_true, pv_meas, u (controller output = recorded MV), x (stem).
    """
    Ad, Bd, Cd, Dd = discretise(p, T)
    delay = max(0, int(round(p["theta"] / T)))
    sp = np.zeros(n) if sp is None else sp
    load = np.zeros(n) if load is None else load
    valve = valve or IdealValve()
    noise = (rng.standard_normal(n) * noise_std) if noise_std > 0 else np.zeros(n)
    state = np.zeros(Ad.shape[0])
    buf = [0.0] * (delay + 1)
    lo, hi = mv_lim
    pv_true, pv_meas, u_out, x_out = (np.zeros(n) for _ in range(4))
    integ, u = 0.0, u0
    for k in range(n):
        y = float(Cd @ state) + Dd * buf[0]
        ym = y + noise[k]
        if fault is not None and k >= fault[0]:
            ym = pv_meas[fault[0]] if fault[1] is None and k > fault[0] else (ym if fault[1] is None else fault[1])
        e = sp[k] - ym
        if manual is not None and manual[k]:
            u = manual_mv[k]
            integ = (u - u0 - kc * e) * ti / kc
        else:
            v = u0 + kc * (e + integ / ti)
            if not ((v >= hi and e > 0) or (v <= lo and e < 0)):
                integ += e * T
            u = min(hi, max(lo, u0 + kc * (e + integ / ti)))
        x = valve.step(u)
        buf.append(x + load[k])
        vin = buf.pop(0)
        state = Ad @ state + Bd * vin
        pv_true[k], pv_meas[k], u_out[k], x_out[k] = y, ym, u, x
    return {"pv_true": pv_true, "pv_meas": pv_meas, "u": u_out, "x": x_out, "moves": valve.moves}


def decay_ratio(p, T, kc, ti):
    """Decay ratio of the load response (second peak over first peak of the PV deviation after a
    unit input step), or None when the loop does not settle (growing or undamped)."""
    n = int(max(400, 60 * (p["theta"] + p.get("tau", p.get("tau1", p.get("lag", 1)))) / T))
    r = simulate(p, T, n, kc, ti, load=np.ones(n), mv_lim=(-1e9, 1e9))
    y = r["pv_true"]
    peaks = [i for i in range(1, n - 1) if abs(y[i]) >= abs(y[i - 1]) and abs(y[i]) > abs(y[i + 1])
             and np.sign(y[i]) == np.sign(y[np.argmax(np.abs(y))])]
    if len(peaks) < 2 or abs(y[peaks[0]]) < 1e-9:
        return 0.0
    dr = abs(y[peaks[1]]) / abs(y[peaks[0]])
    tail = np.abs(y[-n // 5:]).max()
    return None if dr >= 0.98 or tail > 0.5 * abs(y[peaks[0]]) else dr
