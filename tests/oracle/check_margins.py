#!/usr/bin/env python3
"""Live check: the margins of `polewright design` against scipy and numpy.

Usage:
    python3 tests/oracle/check_margins.py [--cli target/release/polewright]

For single-input designs (illustrative data), the loop at the plant input is rebuilt here with
numpy from the design result's own numbers — the plant (or the sampled plant, augmented by the
computation-delay state) with the gain, or the plant with a continuous observer fed the
controller's command — and:
- its frequency response is evaluated with scipy.signal.freqresp (continuous) or dfreqresp
  (sampled); the crossover |L| = 1 and the -180 degree crossing are found with scipy.optimize.brentq;
  the phase margin, crossover frequency and gain margins reported by Polewright must agree to
  1e-6 (relative; degrees for the phase);
- the margins are checked by perturbing the loop (common practice): with the loop gain scaled by
  the reported gain margin, or its phase turned by the reported phase margin, the closed loop
  (numpy.linalg.eigvals) must have a pole on the stability boundary to 1e-6.
Exit status 1 on any failure.
"""

from __future__ import annotations

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import argparse  # noqa: E402
import json  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import scipy.optimize  # noqa: E402
import scipy.signal  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]

CASES = {
    "continuous-chain": {"plant": {"a": [[-1, 1, 0], [0, -1, 1], [0, 0, -1]], "b": [[0], [0], [1]]},
                         "feedback": {"poles": ["-1.2±1.5j", -2.5]}},
    "digital-delay": {"plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": ["-2±2j"]},
                      "implementation": {"sample_time": 0.05, "computation_delay": True}},
    "continuous-observer": {"plant": {"a": [[0, 1], [20.6, 0]], "b": [[0], [1]], "c": [[1, 0]]},
                            "feedback": {"poles": ["-1.8±2.4j"]}, "observer": {"speed_factor": 4}},
}


def design(cli, body):
    doc = {"format": "polewright.design", "version": 3, **body}
    out = subprocess.run([str(cli), "design", "-"], input=json.dumps(doc), capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise RuntimeError(out.stderr.strip())
    return json.loads(out.stdout)


def loop_model(body, r):
    """(A, B, C, dt) of L at the plant input, from the result's numbers."""
    k = np.array(r["feedback"]["gain"], float)
    if r.get("discrete_plant"):
        phi = np.array(r["discrete_plant"]["a"], float)
        gamma = np.array(r["discrete_plant"]["b"], float)
        t = r["sample_time"]
        n, m = gamma.shape
        if r["feedback"].get("delay_gain"):
            ku = np.array(r["feedback"]["delay_gain"], float)
            a = np.block([[phi, gamma], [np.zeros((m, n)), np.zeros((m, m))]])
            b = np.vstack([np.zeros((n, m)), np.eye(m)])
            return a, b, np.hstack([k, ku]), t
        return phi, gamma, k, t
    a = np.array(body["plant"]["a"], float)
    b = np.array(body["plant"]["b"], float)
    if r.get("observer"):
        c = np.array(body["plant"]["c"], float)
        lo = np.array(r["observer"]["gain"], float)
        n = a.shape[0]
        al = np.block([[a, np.zeros((n, n))], [lo @ c, a - lo @ c - b @ k]])
        bl = np.vstack([b, np.zeros_like(b)])
        cl = np.hstack([np.zeros_like(k), k])
        return al, bl, cl, None
    return a, b, k, None


def response(model, w):
    a, b, c, dt = model
    d = np.zeros((c.shape[0], b.shape[1]))
    if dt is None:
        return scipy.signal.freqresp((a, b, c, d), w=np.atleast_1d(w))[1]
    return scipy.signal.dfreqresp((a, b, c, d, dt), w=np.atleast_1d(w) * dt)[1]


def boundary_distance(model, factor):
    a, b, c, dt = model
    ev = np.linalg.eigvals(a - factor * (b @ c))
    return float(np.min(np.abs(ev.real))) / max(1.0, float(np.max(np.abs(ev)))) if dt is None else float(np.min(np.abs(np.abs(ev) - 1.0)))


def check(name, body, r):
    model = loop_model(body, r)
    p = r["margins"]["per_input"][0]
    top = np.pi / model[3] if model[3] else 1e4
    import warnings
    warnings.simplefilter("ignore", scipy.signal.BadCoefficients)
    w = np.logspace(-4, np.log10(top) - 1e-9, 20000)
    lw = response(model, w)
    fails = []
    # Crossover and phase margin.
    mag = np.abs(lw) - 1.0
    idx = np.where(np.sign(mag[:-1]) != np.sign(mag[1:]))[0]
    if len(idx):
        wc = scipy.optimize.brentq(lambda x: abs(response(model, x)[0]) - 1.0, w[idx[0]], w[idx[0] + 1], xtol=1e-14, rtol=1e-14)
        pm = 180.0 + np.degrees(np.angle(response(model, wc)[0]))
        pm = pm - 360.0 if pm > 180.0 else pm
        if not (abs(p["crossover"] - wc) <= 1e-6 * wc and abs(p["classical_phase_margin_deg"] - pm) <= 1e-6):
            fails.append(f"crossover {p['crossover']} / PM {p['classical_phase_margin_deg']} vs scipy {wc} / {pm}")
        # Turning the phase by PM puts a closed-loop pole on the boundary at ω_c.
        d = boundary_distance(model, np.exp(-1j * np.radians(p["classical_phase_margin_deg"])))
        if not d <= 1e-6:
            fails.append(f"phase-perturbed loop {d:.1e} from the boundary")
        pm_text = f"PM {pm:.6f} deg at {wc:.6f} rad/s"
    else:
        pm_text = "no crossover"
    # -180 degree crossings and gain margins.
    im = lw.imag
    idx = [i for i in np.where(np.sign(im[:-1]) != np.sign(im[1:]))[0]]
    gms = []
    for i in idx:
        x = scipy.optimize.brentq(lambda v: response(model, v)[0].imag, w[i], w[i + 1], xtol=1e-15, rtol=1e-14)
        v = response(model, x)[0]
        if v.real < 0:
            gms.append(1.0 / abs(v))
    if model[3]:
        # A sampled loop is real at the Nyquist frequency: a negative value there is a -180 point.
        v = response(model, np.pi / model[3])[0]
        if v.real < 0 and abs(v.imag) <= 1e-9 * abs(v):
            gms.append(1.0 / abs(v))
    ours = [g for g in (p["gain_margin_low"], p["gain_margin_high"]) if g is not None]
    for g in ours:
        if not any(abs(g - s) <= 1e-6 * s for s in gms):
            fails.append(f"gain margin {g} not among scipy's {gms}")
        d = boundary_distance(model, g)
        if not d <= 1e-6:
            fails.append(f"loop scaled by {g} is {d:.1e} from the boundary")
    print(f"{'ok  ' if not fails else 'FAIL'} {name}: {pm_text}; gain margins ours {ours} scipy {gms}" + ("" if not fails else "; " + "; ".join(fails)))
    return not fails


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cli", type=Path, default=ROOT / "target" / "release" / "polewright")
    args = ap.parse_args(argv)
    ok = True
    for name, body in CASES.items():
        ok &= check(name, body, design(args.cli, body))
    print(f"margins against scipy: {len(CASES)} designs, {'no' if ok else 'some'} failures")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
