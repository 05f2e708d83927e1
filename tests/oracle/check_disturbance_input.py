#!/usr/bin/env python3
"""Live cross-check of the load step acting through the disturbance input matrix E.

Usage:
    python3 tests/oracle/check_disturbance_input.py [--cli target/release/polewright]

The plant is the illustrative belt axis (examples/belt-axis.json): carriage and tool head
joined by a belt. A load force on the head (invented: E = [0, 0, 0, 2.5]ᵀ, the head's
acceleration per newton) enters where the physics puts it, not at the motor. Polewright
designs each case with the CLI; the gains are taken from its result and the same loop is
simulated here independently:

1. continuous controller with feedforward tracking and no limit: the closed loop
   [x; x̂]' = F [x; x̂] + G [r; w] is linear with piecewise-constant r and w, so it is stepped
   exactly from one of Polewright's output times to the next (split at the two step times)
   with scipy.linalg.expm of the augmented matrix [[F, G], [0, 0]];
2. digital controller (T = 1 ms) with a predictor observer and integral action: the
   sampled plant Φ, Γ and Γ_E come from scipy.signal.cont2discrete (zero-order hold) of
   (A, B) and (A, E), and the loop is stepped in numpy;
3. the same digital design with E = B, which must give what the document without E gives;
4. the digital design with the reference also fed forward (two degrees of freedom:
   u = N_u r − K (x̂ − N_x r) − K_i z), stepped the same way.

In the digital cases the loop's reported peak states are compared with the largest |x| over
every sample of the numpy loop.

It prints the largest deviation of each signal relative to its peak and exits 1 if any
exceeds its tolerance. The head's deflection under the load (the head position output)
must differ from the load applied at the motor: otherwise E would not be in use.
Only numpy and scipy are used.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)
import numpy as np
from scipy.linalg import expm
from scipy.signal import cont2discrete

ROOT = Path(__file__).resolve().parents[2]
# Both sides compute exact transitions of a linear loop (matrix exponentials) and differ by
# rounding only: 1e-9 of each signal's peak (measured: see the printout) is many orders above
# the rounding and far below any modelling error.
TOLERANCE = 1e-9
E_HEAD = [[0.0], [0.0], [0.0], [2.5]]


def base() -> dict:
    d = json.loads((ROOT / "examples" / "belt-axis.json").read_text())
    d["version"] = 2
    d["plant"]["c"] = [[0, 0, 1, 0]]
    d["plant"]["output_names"] = ["head position"]
    d.pop("actuators", None)
    d["simulation"] = {"initial_state": [0, 0, 0, 0], "duration": 0.8, "reference": [0.01], "reference_time": 0.05,
                       "disturbance": [5.0], "disturbance_time": 0.4}
    return d


def run(cli: str, spec: dict) -> dict:
    out = subprocess.run([cli, "design", "-"], input=json.dumps(spec), capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise RuntimeError(f"the CLI failed: {out.stderr.strip()}")
    return json.loads(out.stdout)


def deviation(name: str, got: np.ndarray, want: np.ndarray) -> float:
    peak = np.max(np.abs(want), axis=0)
    dev = np.max(np.abs(got - want), axis=0) / np.where(peak > 0, peak, 1.0)
    print(f"disturbance input: {name}: largest deviation / peak = {', '.join(f'{d:.2e}' for d in np.atleast_1d(dev))}")
    return float(np.max(dev))


def continuous_case(cli: str) -> float:
    spec = base()
    spec["plant"]["e"] = E_HEAD
    spec["observer"] = {"speed_factor": 3}
    spec["tracking"] = {"mode": "feedforward"}
    res = run(cli, spec)
    a, b, c = (np.array(spec["plant"][k], float) for k in "abc")
    e = np.array(E_HEAD)
    k = np.array(res["feedback"]["gain"], float)
    l = np.array(res["observer"]["gain"], float)
    nx = np.array(res["tracking"]["nx"], float)
    nu = np.array(res["tracking"]["nu"], float)
    # u = N_u r − K (x̂ − N_x r); x̂' = A x̂ + B u + L (y − C x̂).
    n = a.shape[0]
    f = np.block([[a, -b @ k], [l @ c, a - b @ k - l @ c]])
    j = nu + k @ nx
    g = np.block([[b @ j, e], [b @ j, np.zeros((n, 1))]])
    loop = res["loop"]
    t = np.array(loop["time"], float)
    sim = spec["simulation"]
    events = [sim["reference_time"], sim["disturbance_time"]]

    def exo(tt: float) -> np.ndarray:
        return np.array([sim["reference"][0] if tt >= sim["reference_time"] else 0.0, sim["disturbance"][0] if tt >= sim["disturbance_time"] else 0.0])

    aug = np.zeros((2 * n + 2, 2 * n + 2))
    aug[:2 * n, :2 * n] = f
    aug[:2 * n, 2 * n:] = g
    state = np.zeros(2 * n)
    rows = [state.copy()]
    for t0, t1 in zip(t[:-1], t[1:]):
        cuts = [t0] + [ev for ev in events if t0 < ev < t1] + [t1]
        for u0, u1 in zip(cuts[:-1], cuts[1:]):
            step = expm(aug * (u1 - u0))
            state = step[:2 * n, :2 * n] @ state + step[:2 * n, 2 * n:] @ exo(u0)
        rows.append(state.copy())
    s = np.array(rows)
    r = np.array([exo(tt)[0] for tt in t])
    want_u = (j @ r[None, :]).T - s[:, n:] @ k.T
    worst = deviation("states (continuous)", np.array(loop["states"], float).T, s[:, :n])
    worst = max(worst, deviation("estimates (continuous)", np.array(loop["estimates"], float).T, s[:, n:]))
    worst = max(worst, deviation("input (continuous)", np.array(loop["inputs"], float).T, want_u))
    return worst


def digital_loop(spec: dict, res: dict, e: np.ndarray) -> dict:
    """The digital loop with a predictor observer and integral action, stepped in numpy."""
    a, b, c = (np.array(spec["plant"][k], float) for k in "abc")
    t_s = spec["implementation"]["sample_time"]
    phi, gam, *_ = cont2discrete((a, b, c, np.zeros((1, 1))), t_s, method="zoh")
    _, gam_e, *_ = cont2discrete((a, e, c, np.zeros((1, e.shape[1]))), t_s, method="zoh")
    k = np.array(res["tracking"]["state_gain"], float)
    ki = np.array(res["tracking"]["integral_gain"], float)
    l = np.array(res["observer"]["gain"], float)
    # Two degrees of freedom: the reference also fed forward through N_x, N_u.
    two_dof = spec["tracking"].get("feedforward", False)
    nx = np.array(res["tracking"]["nx"], float) if two_dof else np.zeros((a.shape[0], 1))
    nu = np.array(res["tracking"]["nu"], float) if two_dof else np.zeros((1, 1))
    sim = spec["simulation"]
    steps = int(round(sim["duration"] / t_s))
    n = a.shape[0]
    x, xh, z = np.zeros(n), np.zeros(n), np.zeros(1)
    xs, us = [], []
    for i in range(steps + 1):
        tk = i * t_s
        r = sim["reference"][0] if tk + 1e-9 * t_s >= sim["reference_time"] else 0.0
        w = sim["disturbance"][0] if tk + 1e-9 * t_s >= sim["disturbance_time"] else 0.0
        y = c @ x
        u = nu @ [r] - k @ (xh - nx @ [r]) - ki @ z
        xs.append(x.copy())
        us.append(u.copy())
        z = z + (r - y) * t_s
        xh = phi @ xh + gam @ u + l @ (y - c @ xh)
        x = phi @ x + gam @ u + gam_e[:, 0] * w
    return {"t": np.arange(steps + 1) * t_s, "x": np.array(xs), "u": np.array(us)}


def digital_case(cli: str) -> float:
    spec = base()
    spec["implementation"] = {"sample_time": 0.001}
    spec["observer"] = {"speed_factor": 4}
    spec["tracking"] = {"mode": "integral", "integral_poles": [-10]}
    worst = 0.0
    heads = {}
    for label, e, two_dof in [("E on the head", E_HEAD, False), ("E = B", spec["plant"]["b"], False), ("no E", None, False), ("E on the head, two degrees of freedom", E_HEAD, True)]:
        s = json.loads(json.dumps(spec))
        if e is not None:
            s["plant"]["e"] = e
        if two_dof:
            s["tracking"]["feedforward"] = True
        res = run(cli, s)
        loop = res["loop"]
        t = np.array(loop["time"], float)
        ref = digital_loop(s, res, np.array(e if e is not None else s["plant"]["b"], float))
        idx = np.rint(t / s["implementation"]["sample_time"]).astype(int)
        worst = max(worst, deviation(f"states (digital, {label})", np.array(loop["states"], float).T, ref["x"][idx]))
        worst = max(worst, deviation(f"input (digital, {label})", np.array(loop["inputs"], float).T, ref["u"][idx]))
        # The loop's peak states are taken over every sample (the plotted series are thinned).
        worst = max(worst, deviation(f"peak states (digital, {label})", np.array(loop["peak_states"], float)[None, :], np.max(np.abs(ref["x"]), axis=0)[None, :]))
        heads[label] = np.array(loop["outputs"], float)[0]
    same = float(np.max(np.abs(heads["E = B"] - heads["no E"])))
    differ = float(np.max(np.abs(heads["E on the head"] - heads["no E"])) / np.max(np.abs(heads["no E"])))
    print(f"disturbance input: E = B against no E: largest output difference {same:.1e}; E on the head against no E: {differ:.2e} of the peak")
    if same != 0.0:
        print("disturbance input: E = B should be the document without E exactly")
        return float("inf")
    if differ < 1e-3:
        print("disturbance input: the load on the head gives the same response as the load at the motor: E is not in use")
        return float("inf")
    return worst


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cli", default=str(ROOT / "target" / "release" / "polewright"))
    args = ap.parse_args()
    try:
        worst = max(continuous_case(args.cli), digital_case(args.cli))
    except RuntimeError as err:
        print(f"disturbance input: {err}")
        return 1
    print(f"disturbance input: worst {worst:.2e} (tolerance {TOLERANCE:g})")
    return 0 if worst <= TOLERANCE else 1


if __name__ == "__main__":
    sys.exit(main())
