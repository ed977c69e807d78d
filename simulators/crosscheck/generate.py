"""Independent cross-check set for the routine-data assessment: labelled historian exports made by
other means than simulators/benchmark (see loopsim.py; no code shared with the TypeScript
simulators). Eight recordings per label, two per plant type (self-regulating, second order,
integrating level, dead-time dominant), sample period 0.5-10 s, spans of 2 h to a day.

Each case is checked after it is simulated: a case whose data do not show its label (an
aggressive loop whose load response decays faster than 0.3, a sticking valve without a limit
cycle above the noise, a disturbance buried in the noise, a "saturated" loop mostly off its
limits) is drawn again with the next seed, so every label can be seen in its data.

    python3 simulators/crosscheck/generate.py OUT_DIR [--seed N]

writes OUT_DIR/<id>.csv, OUT_DIR/<id>.loop.json and OUT_DIR/manifest.json (id, label, plant,
note, the plant's parameters). Requires Debian's python3-numpy and python3-scipy.
"""
import json
import os
import sys
from datetime import datetime, timedelta, timezone

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from loopsim import HeValve, arma_load, decay_ratio, periodic_load, simc_pi, simulate  # noqa: E402

LABELS = ["healthy", "aggressive-tuning", "sluggish-tuning", "valve-stiction",
          "external-disturbance", "saturated", "sensor-fault", "manual"]
PLANTS = ["self-regulating", "second-order", "integrating", "dead-time-dominant"]
# Invented loops of our own scenario (tags, units, spans).
KINDS = {"self-regulating": ("flow", "m3/h", 0.0, 80.0), "second-order": ("temperature", "degC", 20.0, 180.0),
         "integrating": ("level", "%", 0.0, 100.0), "dead-time-dominant": ("pressure", "kPa", 0.0, 600.0)}


def draw_plant(rng, plant):
    """A plant with its time scale; the sample period and span follow from it."""
    if plant == "self-regulating":
        tau = rng.uniform(10, 120)
        return {"kind": "fopdt", "K": rng.uniform(0.6, 2.0), "tau": tau, "theta": tau * rng.uniform(0.1, 0.4)}, tau
    if plant == "second-order":
        t1 = rng.uniform(60, 400)
        return {"kind": "sopdt", "K": rng.uniform(0.5, 1.5), "tau1": t1, "tau2": t1 * rng.uniform(0.2, 0.5),
                "theta": t1 * rng.uniform(0.05, 0.2)}, t1
    if plant == "integrating":
        ts = rng.uniform(60, 600)  # time to move the level by the MV's change, %/% (k = 1/ts)
        return {"kind": "integ", "K": 1.0 / ts, "lag": ts * rng.uniform(0.02, 0.06),
                "theta": ts * rng.uniform(0.03, 0.1)}, ts * 0.3
    tau = rng.uniform(10, 80)
    return {"kind": "fopdt", "K": rng.uniform(0.5, 1.5), "tau": tau, "theta": tau * rng.uniform(1.5, 4.0)}, tau


def timing(rng, p, scale):
    """Sample period 0.5-10 s, a few dozen samples per dominant time; span 2-24 h, <= 30,000 samples."""
    T = float(np.clip(round(min(scale, p["theta"] * 4) / rng.uniform(15, 40), 1), 0.5, 10.0))
    span = rng.uniform(2, 24) * 3600
    n = int(min(span / T, 30000))
    return T, n


def manual_profile(rng, n, share):
    """Manual stretches covering `share` of the span, with a few operator moves of the output."""
    manual = np.zeros(n, bool)
    start = int(rng.uniform(0, 1 - share) * n)
    manual[start:start + int(share * n)] = True
    mv = np.zeros(n)
    for at in sorted(rng.integers(start, start + int(share * n), size=int(rng.integers(2, 6)))):
        mv[at:] += rng.uniform(-6, 6)
    return manual, mv


def step_loads(rng, n, std):
    """A few lasting load steps of one to three times the coloured load's deviation (common practice)."""
    out = np.zeros(n)
    for at in rng.integers(0, n, size=int(rng.integers(2, 8))):
        out[at:] += rng.choice([-1, 1]) * rng.uniform(1, 3) * std
    return out - out.mean()


def make_case(label, plant, seed):
    rng = np.random.default_rng(seed)
    p, scale = draw_plant(rng, plant)
    T, n = timing(rng, p, scale)
    kc, ti, theta = simc_pi(p, T, tau_c=None)
    tc_factor = rng.uniform(1.0, 2.0)
    kc, ti, theta = simc_pi(p, T, tau_c=theta * tc_factor)
    load_std = rng.uniform(0.5, 2.0)
    load = arma_load(rng, n, T, scale * rng.uniform(0.5, 3), load_std)
    steps = label != "saturated" and rng.random() < 0.5  # half the cases also get load steps (feed changes), half only coloured loads
    if steps:
        load = load + step_loads(rng, n, load_std)
    noise = rng.uniform(0.05, 0.25)
    u0 = rng.uniform(35, 65)
    lim = (-u0, 100 - u0)
    kw = {"load": load, "u0": 0.0, "mv_lim": lim, "noise_std": noise, "rng": rng}
    note = f"{p['kind']} theta {p['theta']:.0f} s, T {T} s, {n * T / 3600:.1f} h{', load steps' if steps else ''}"
    mode = None
    freeze = None
    if label == "aggressive-tuning":
        f = rng.uniform(2.5, 4.0)
        dr = decay_ratio(p, T, kc * f, ti)
        if dr is None or dr < 0.3:
            return None  # not a decaying oscillation with decay ratio > 0.3: draw again
        kc *= f
        note += f", Kc x{f:.1f} of SIMC, load decay ratio {dr:.2f}"
    elif label == "sluggish-tuning":
        f, g = rng.uniform(0.1, 0.25), rng.uniform(3, 5)
        # the data must show it: PV's deviation at least 1.5 times that of the SIMC loop under the same loads
        base = np.std(simulate(p, T, n, kc, ti, load=load, mv_lim=lim)["pv_true"])
        kc, ti = kc * f, ti * g
        worse = np.std(simulate(p, T, n, kc, ti, load=load, mv_lim=lim)["pv_true"]) / base
        if worse < 1.5:
            return None
        note += f", Kc x{f:.2f}, Ti x{g:.1f} of SIMC, PV std x{worse:.1f} of SIMC's"
    elif label == "valve-stiction":
        fs = rng.uniform(1.0, 5.0)
        fd = fs * rng.uniform(0.1, 0.6)
        kw["valve"] = HeValve(fs, fd, rng.uniform(-1, 1) * fs)  # stem stuck off the position the loop needs
        kw["load"] = load * 0.3
        note += f", He et al. valve fs {fs:.1f} % fd {fd:.1f} %"
    elif label == "external-disturbance":
        period = scale * rng.uniform(4, 12) + p["theta"] * rng.uniform(2, 6)
        shape = "square" if rng.random() < 0.4 else "sine"
        amp = rng.uniform(3, 8) * (1 if p["kind"] != "integ" else 0.3)
        kw["load"] = load * 0.3 + periodic_load(n, T, period, amp, shape, rng.uniform(0, 6.3))
        note += f", {shape} load period {period:.0f} s amplitude {amp:.1f} % MV"
    elif label == "saturated":
        # episodes of a load the output cannot fully counter (MV pinned at its upper limit), each
        # short enough that PV stays on its span (an integrating level would otherwise run away)
        excess = rng.uniform(0.05, 0.2)
        rise = excess * (100 - u0) * p["K"] * (1 if p["kind"] == "integ" else 1 / scale)  # % of span per s
        on = int(min(n / 3, 20.0 / rise / T))
        off = int(on * rng.uniform(0.2, 0.6))
        step = -(100 - u0) * np.where(np.arange(n) % (on + off) < on, 1 + excess, 0.92)
        kw["load"] = load * 0.5 + step
        kw["u0"] = 0.92 * (100 - u0)  # the loop starts balanced against the load's lower level
        note += f", {on * T:.0f} s episodes of a load {excess * 100:.0f} % beyond the output's reach"
    elif label == "sensor-fault":
        freeze = (int(rng.uniform(0.05, 0.35) * n), "stuck" if rng.random() < 0.4 else "frozen")
        kw["fault"] = (freeze[0], None if freeze[1] == "frozen" else rng.choice([-1, 1]) * rng.uniform(10, 28))
        # stuck inside the span (SP is 35-65 %): a value pinned at a range end with the output at a limit
        # looks the same as a saturated process, so the data could not show the fault
        note += f", PV {freeze[1]} from {freeze[0] * T / 3600:.1f} h (the controller sees it)"
    elif label == "manual":
        share = rng.uniform(0.7, 0.95)
        kw["manual"], kw["manual_mv"] = manual_profile(rng, n, share)
        mode = kw["manual"]
        note += f", manual {share * 100:.0f} % of the span"
    r = simulate(p, T, n, kc, ti, **kw)
    pv, u = r["pv_meas"], r["u"]
    if not shows(label, r, pv, u, lim, noise, mode, freeze):
        return None
    return {"p": p, "T": T, "n": n, "kc": kc, "ti": ti, "pv": pv, "u": u, "u0": u0, "mode": mode,
            "note": note, "theta": p["theta"]}


def shows(label, r, pv, u, lim, noise, mode, freeze):
    """Does the recording show its label? (an honest label needs it in the data)"""
    at_limit = np.mean((u <= lim[0] + 1e-6) | (u >= lim[1] - 1e-6))
    if freeze is None and (np.abs(r["pv_true"]) > 35).any():
        return False  # PV off its span (SP is 35-65 % of span): what the data show would be another fault
    if label == "saturated":
        return at_limit >= 0.4
    if label == "sensor-fault":
        return True  # the output may wind up to a limit: it follows from the false reading
    if at_limit > 0.05:
        return False  # another fault (saturation) would hide the label
    if label == "valve-stiction":
        n = len(u)
        return r["moves"] >= 20 and np.std(r["pv_true"][n // 4:]) > 3 * noise
    if label == "external-disturbance":
        return np.std(r["pv_true"]) > 3 * noise
    return True


def write_case(out, cid, label, plant, c, rng):
    kind, units, lo, hi = KINDS[plant]
    span = hi - lo
    sp_pct = rng.uniform(35, 65)
    dec = max(0, min(6, 4 - int(np.floor(np.log10(span)))))
    iso = rng.random() < 0.5
    start = datetime(2026, 3, 1, tzinfo=timezone(timedelta(hours=int(rng.integers(-6, 7))))) + timedelta(hours=float(rng.uniform(0, 500)))
    with_mode = c["mode"] is not None or rng.random() < 0.3
    sep = ";" if rng.random() < 0.2 else ","
    head = ["t" if iso else "t [s]", f"sp [{units}]", f"pv [{units}]", "mv [%]"] + (["mode"] if with_mode else [])
    rows = [sep.join(head)]
    t0 = rng.uniform(0, 1e5)
    for k in range(c["n"]):
        t = c["T"] * k
        ts = (start + timedelta(seconds=t)).isoformat(timespec="milliseconds") if iso else f"{t0 + t:.3f}"
        cells = [ts, f"{lo + span * sp_pct / 100:.{dec}f}", f"{lo + span * (sp_pct + c['pv'][k]) / 100:.{dec}f}",
                 f"{c['u0'] + c['u'][k]:.3f}"]
        if with_mode:
            cells.append("manual" if c["mode"] is not None and c["mode"][k] else "auto")
        rows.append(sep.join(cells))
    with open(os.path.join(out, f"{cid}.csv"), "w") as f:
        f.write("\n".join(rows) + "\n")
    cfg = {"tag": cid.upper(), "description": "cross-check loop (invented)", "kind": kind, "units": units,
           "pvLo": lo, "pvHi": hi, "samplePeriodS": c["T"],
           "deadTimeS": round(c["theta"], 1) if rng.random() < 0.7 else None,
           "controller": {"kp": round(c["kc"], 4), "ti": round(c["ti"], 1), "td": 0, "action": "reverse",
                          "mvLo": 0, "mvHi": 100}}
    with open(os.path.join(out, f"{cid}.loop.json"), "w") as f:
        json.dump(cfg, f, indent=1)


def main():
    out = sys.argv[1]
    base = int(sys.argv[sys.argv.index("--seed") + 1]) if "--seed" in sys.argv else 20071
    os.makedirs(out, exist_ok=True)
    manifest = []
    for li, label in enumerate(LABELS):
        for pi, plant in enumerate(PLANTS):
            for rep in range(2):
                seed, tries, c = base * 1000 + li * 100 + pi * 10 + rep, 0, None
                while c is None and tries < 40:
                    c = make_case(label, plant, seed * 97 + tries)
                    tries += 1
                if c is None:
                    print(f"no case of {label} on {plant} shows its label in 40 draws", file=sys.stderr)
                    continue
                cid = f"xc-{label[:4]}-{plant[:4]}-{rep}"
                write_case(out, cid, label, plant, c, np.random.default_rng(seed + 7))
                # the plant's parameters (s, and % PV per % MV), for studies of what the configured
                # dead time means (tests/bench/crosscheck.bench.ts --dead-time step-test); the files
                # do not depend on them being written
                params = {k: (round(float(v), 6) if k != "kind" else v) for k, v in c["p"].items()}
                manifest.append({"id": cid, "label": label, "plant": plant, "note": c["note"], "draws": tries, "plantParams": params})
    with open(os.path.join(out, "manifest.json"), "w") as f:
        json.dump(manifest, f, indent=1)
    print(f"{len(manifest)} recordings in {out}", file=sys.stderr)


if __name__ == "__main__":
    main()
