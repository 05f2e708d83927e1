#!/usr/bin/env python3
"""Live check: the margins of `polewright design` against scipy and numpy.

Usage:
    python3 tests/oracle/check_margins.py [--cli target/release/polewright]

For single-input designs (illustrative data), the loop at the plant input is rebuilt here with
numpy from the design result's own numbers, following the controller's equations as firmware
runs them (the loop broken at the plant input; the controller keeps its own command for its
observer and its delay line) — the plant or the sampled plant with the gain; with a computation
delay the delay state and K_u inside the controller; a continuous observer; a sampled
current-form observer with a delay — and:
- its frequency response is evaluated with scipy.signal.freqresp (continuous) or dfreqresp
  (sampled); the crossover |L| = 1 and the -180 degree crossing are found with scipy.optimize.brentq;
  the phase margin, crossover frequency and gain margins reported by Polewright must agree to
  1e-6 (relative; degrees for the phase);
- the margins are checked by perturbing the loop (common practice): with the loop gain scaled by
  the reported gain margin, or its phase turned by the reported phase margin, the closed loop
  (numpy.linalg.eigvals) must have a pole on the stability boundary to 1e-6.
For a two-input design the all-inputs (multiloop) disk margin is recomputed independently:
for two diagonal complex perturbations mu(M) = max over theta of the spectral radius of
diag(1, e^{j theta}) M (Doyle, IEE Proc. D 129(6), 1982, from memory), maximised over a dense
phase grid and frequency grid refined with scipy.optimize.minimize_scalar; alpha = 1/max mu of
S - I/2 (skew 0; Seiler, Packard & Gahinet, IEEE Control Systems Magazine 40(5), 2020) must
agree to 1e-4 relative.
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
    "digital-current-observer-delay": {"plant": {"a": [[0, 1], [20.6, 0]], "b": [[0], [1]], "c": [[1, 0]]},
                                       "feedback": {"poles": ["-4±3j"]}, "observer": {"speed_factor": 3, "form": "current"},
                                       "implementation": {"sample_time": 0.02, "computation_delay": True}},
    # Two masses on a lightly damped spring: |L| crosses 1 three times.
    "two-mass-three-crossovers": {"plant": {"a": [[0, 1, 0, 0], [-1, -0.01, 1, 0.01], [0, 0, 0, 1], [1, 0.01, -1, -0.01]],
                                            "b": [[0], [1], [0], [0]]},
                                  "feedback": {"poles": ["-0.3±0.8j", "-0.4±1.6j"]}},
}

MULTILOOP = {
    "two-input": {"plant": {"a": [[0, 1, 0], [-2, -0.3, 1], [0, 0, -4]], "b": [[0, 0], [1, 0.4], [0, 1]]},
                  "feedback": {"poles": ["-1.5±2j", -3]}},
    # The spinning body (Zhou, Doyle & Glover, Robust and Optimal Control, 1996; from memory):
    # loop at a time 90 degrees and unbounded gain, all inputs at once fragile.
    "spinning-body": {"plant": {"a": [[0, 10], [-10, 0]], "b": [[1, 0], [0, 1]]}, "feedback": {"poles": [-1, -1]}},
}


def design(cli, body):
    doc = {"format": "polewright.design", "version": 3, **body}
    out = subprocess.run([str(cli), "design", "-"], input=json.dumps(doc), capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise RuntimeError(out.stderr.strip())
    return json.loads(out.stdout)


def loop_model(body, r):
    """(A, B, C, dt) of L at the plant input, from the result's numbers (closed by u_in = -C x)."""
    k = np.array(r["feedback"]["gain"], float)
    if r.get("discrete_plant"):
        phi = np.array(r["discrete_plant"]["a"], float)
        gamma = np.array(r["discrete_plant"]["b"], float)
        t = r["sample_time"]
        n, m = gamma.shape
        ku = np.array(r["feedback"]["delay_gain"], float) if r["feedback"].get("delay_gain") else None
        if r.get("observer"):
            # Current form with a delay: est = Lc C x + (I - Lc C) xh; u = -K est - Ku u_prev;
            # xh+ = Phi est + Gamma u_prev; u_prev+ = u; the plant gets u_in; output -u_prev.
            c = np.array(body["plant"]["c"], float)
            lc = np.array(r["observer"]["current_gain"], float)
            i_lc = np.eye(n) - lc @ c
            a = np.block([[phi, np.zeros((n, n)), np.zeros((n, m))],
                          [phi @ lc @ c, phi @ i_lc, gamma],
                          [-k @ lc @ c, -k @ i_lc, -ku]])
            b = np.vstack([gamma, np.zeros((n + m, m))])
            return a, b, np.hstack([np.zeros((m, 2 * n)), -np.eye(m)]), t
        if ku is not None:
            # x+ = Phi x + Gamma u_in; u_prev+ = -K x - Ku u_prev; output -u_prev (the K_u term
            # stays inside the controller: the loop is broken at the plant input, not the command).
            a = np.block([[phi, np.zeros((n, m))], [-k, -ku]])
            b = np.vstack([gamma, np.zeros((m, m))])
            return a, b, np.hstack([np.zeros((m, n)), -np.eye(m)]), t
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
    p = r["margins"]["per_input"][0]["classical"]
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
        # Every crossover; the phase margin is the one of smallest size.
        best = None
        for i in idx:
            wci = scipy.optimize.brentq(lambda x: abs(response(model, x)[0]) - 1.0, w[i], w[i + 1], xtol=1e-14, rtol=1e-14)
            pmi = 180.0 + np.degrees(np.angle(response(model, wci)[0]))
            pmi = pmi - 360.0 if pmi > 180.0 else pmi
            if best is None or abs(pmi) < abs(best[1]):
                best = (wci, pmi)
        wc, pm = best
        if not (abs(p["crossover"] - wc) <= 1e-6 * wc and abs(p["phase_margin_deg"] - pm) <= 1e-6):
            fails.append(f"crossover {p['crossover']} / PM {p['phase_margin_deg']} vs scipy {wc} / {pm}")
        # Turning the phase by PM puts a closed-loop pole on the boundary at ω_c.
        d = boundary_distance(model, np.exp(-1j * np.radians(p["phase_margin_deg"])))
        if not d <= 1e-6:
            fails.append(f"phase-perturbed loop {d:.1e} from the boundary")
        pm_text = f"PM {pm:.6f} deg at {wc:.6f} rad/s ({len(idx)} crossover{'s' if len(idx) > 1 else ''})"
    else:
        pm_text = "no crossover"
        # Both ways: no crossover here means none may be reported.
        if p["crossover"] is not None or p["phase_margin_deg"] is not None:
            fails.append(f"crossover {p['crossover']} / PM {p['phase_margin_deg']} reported where scipy finds none")
    # -180 degree crossings and gain margins.
    im = lw.imag
    idx = [i for i in np.where(np.sign(im[:-1]) != np.sign(im[1:]))[0]]
    gms = []
    for i in idx:
        x = scipy.optimize.brentq(lambda v: response(model, v)[0].imag, w[i], w[i + 1], xtol=1e-15, rtol=1e-14)
        v = response(model, x)[0]
        if v.real < 0:
            gms.append(1.0 / abs(v))
    # The loop is real at 0 and, sampled, at the Nyquist frequency: a negative value there is a
    # -180 degree point too.
    for end in [0.0] + ([np.pi / model[3]] if model[3] else []):
        a_, b_, c_, dt_ = model
        zs = 1.0 if dt_ else 0.0
        zs = -1.0 if dt_ and end > 0 else zs
        try:
            v = (c_ @ np.linalg.solve(zs * np.eye(a_.shape[0]) - a_, b_))[0, 0]
        except np.linalg.LinAlgError:
            continue
        if np.isfinite(v) and v.real < 0:
            gms.append(1.0 / abs(v))
    ours = [g for g in (p["gain_margin_low"], p["gain_margin_high"]) if g is not None]
    # Both ways: the nearest −180° points on each side of 1 are the gain margins, so each side
    # is reported exactly when scipy finds a point there.
    want_low = max([g for g in gms if g < 1.0], default=None)
    want_high = min([g for g in gms if g > 1.0], default=None)
    for label, got, want in [("low", p["gain_margin_low"], want_low), ("high", p["gain_margin_high"], want_high)]:
        if (got is None) != (want is None) or (got is not None and abs(got - want) > 1e-6 * want):
            fails.append(f"{label} gain margin {got} where scipy's nearest is {want}")
    for g in ours:
        if not any(abs(g - s) <= 1e-6 * s for s in gms):
            fails.append(f"gain margin {g} not among scipy's {gms}")
        d = boundary_distance(model, g)
        if not d <= 1e-6:
            fails.append(f"loop scaled by {g} is {d:.1e} from the boundary")
    print(f"{'ok  ' if not fails else 'FAIL'} {name}: {pm_text}; gain margins ours {ours} scipy {gms}" + ("" if not fails else "; " + "; ".join(fails)))
    return not fails


def mu_two(m):
    """mu of a 2x2 complex matrix for diagonal complex perturbations: max over theta of
    rho(diag(1, e^{j theta}) M), on a 720-point grid refined by minimize_scalar."""
    def rho(th):
        q = m * np.array([[1.0], [np.exp(1j * th)]])
        return max(abs(np.linalg.eigvals(q)))
    ths = np.linspace(0, 2 * np.pi, 720, endpoint=False)
    vals = [rho(t) for t in ths]
    i = int(np.argmax(vals))
    res = scipy.optimize.minimize_scalar(lambda t: -rho(t), bounds=(ths[i] - np.pi / 360, ths[i] + np.pi / 360), method="bounded", options={"xatol": 1e-12})
    return max(vals[i], -res.fun)


def check_multiloop(name, body, r):
    a = np.array(body["plant"]["a"], float)
    b = np.array(body["plant"]["b"], float)
    k = np.array(r["feedback"]["gain"], float)
    acl = a - b @ k

    def m_at(w):
        s = np.eye(2) - k @ np.linalg.solve(1j * w * np.eye(a.shape[0]) - acl, b)
        return s - 0.5 * np.eye(2)
    ws = np.logspace(-3, 3, 600)
    mus = [mu_two(m_at(w)) for w in ws]
    i = int(np.argmax(mus))
    lo, hi = ws[max(i - 1, 0)], ws[min(i + 1, len(ws) - 1)]
    res = scipy.optimize.minimize_scalar(lambda w: -mu_two(m_at(w)), bounds=(lo, hi), method="bounded", options={"xatol": 1e-10})
    peak = max(mus[i], -res.fun, 0.5)  # S - I/2 tends to -I/2 as w grows: mu >= 1/2
    alpha = 1.0 / peak
    ours = r["margins"]["all_inputs"]["disk_margin"]
    ok = abs(ours - alpha) <= 1e-4 * alpha
    print(f"{'ok  ' if ok else 'FAIL'} {name}: all-inputs disk margin ours {ours:.8f} ({r['margins']['all_inputs']['accuracy']}), numpy {alpha:.8f}")
    return ok


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cli", type=Path, default=ROOT / "target" / "release" / "polewright")
    args = ap.parse_args(argv)
    ok = True
    for name, body in CASES.items():
        ok &= check(name, body, design(args.cli, body))
    for name, body in MULTILOOP.items():
        ok &= check_multiloop(name, body, design(args.cli, body))
    print(f"margins against scipy: {len(CASES) + len(MULTILOOP)} designs, {'no' if ok else 'some'} failures")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
