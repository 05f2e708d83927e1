#!/usr/bin/env python3
"""Live cross-check of the continuous-controller loop simulation while an input saturates.

Usage:
    python3 tests/oracle/check_saturated_loop.py [--cli target/release/polewright]

The committed loop fixtures (make_loop_fixtures.py) check the continuous loop against
scipy.signal.lsim where no input saturates, with the step size given. This script checks
the other case, with the step size Polewright chooses itself: it designs an illustrative
belt axis (examples/belt-axis.json, made into a version-2 file with a head-position
measurement, an observer, integral action with conditional integration and a reference
step) with the CLI, takes the gains K, L, K_i from the result, and integrates the same
closed loop with scipy.integrate.solve_ivp (DOP853, rtol 1e-11) as the nonlinear ODE it is:

    x'  = A x + B sat(u)
    x̂'  = A x̂ + B sat(u) + L (y − C x̂),   y = C x
    z'  = r − y while no input is clipped, 0 while one is (conditional integration)
    u   = −K x̂ − K_i z

integrating piecewise between the instants the saturation switches (found as events), so
each piece is smooth. It prints the largest deviation of each signal relative to its peak
and exits 1 if any exceeds TOLERANCE. Only numpy and scipy are used.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)
import numpy as np
from scipy.integrate import solve_ivp

ROOT = Path(__file__).resolve().parents[2]
# Polewright holds the clipped input over each fine step (an O(h) scheme, h = 1/20 of the
# fastest closed-loop time constant, switches resolved to h/32); measured 3.9e-5 of each
# signal's peak on this case. An O(h) scheme's error scales with h: a step twice as coarse, or
# switches resolved to h/16, would roughly double it, so the tolerance is 2e-4 (five times the
# measured figure), which such a regression would cross.
TOLERANCE = 2e-4


def design_file() -> dict:
    d = json.loads((ROOT / "examples" / "belt-axis.json").read_text())
    d["version"] = 2
    d["plant"]["c"] = [[0, 0, 1, 0]]
    d["observer"] = {"speed_factor": 4}
    d["tracking"] = {"mode": "integral", "integral_poles": [-10]}
    d["anti_windup"] = {"mode": "clamp"}
    d["simulation"]["reference"] = [0.01]
    d["simulation"]["reference_time"] = 0.2
    return d


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cli", default=str(ROOT / "target" / "release" / "polewright"))
    args = ap.parse_args()
    spec = design_file()
    run = subprocess.run([args.cli, "design", "-"], input=json.dumps(spec), capture_output=True, text=True, check=False)
    if run.returncode != 0:
        print(f"saturated loop: the CLI failed: {run.stderr.strip()}")
        return 1
    res = json.loads(run.stdout)
    a = np.array(spec["plant"]["a"], float)
    b = np.array(spec["plant"]["b"], float)
    c = np.array(spec["plant"]["c"], float)
    k = np.array(res["tracking"]["state_gain"], float)
    ki = np.array(res["tracking"]["integral_gain"], float)
    l = np.array(res["observer"]["gain"], float)
    loop = res["loop"]
    t = np.array(loop["time"], float)
    limit = spec["actuators"]["limit"][0]
    r_step = spec["simulation"]["reference"][0]
    t_ref = spec["simulation"]["reference_time"]
    n = a.shape[0]

    def command(s):
        xh, z = s[n:2 * n], s[2 * n:]
        return float((-k @ xh - ki @ z)[0])

    def rhs(tt, s, clipped):
        x, xh = s[:n], s[n:2 * n]
        u = float(np.clip(command(s), -limit, limit))
        y = c @ x
        r = r_step if tt >= t_ref else 0.0
        dx = a @ x + b[:, 0] * u
        dxh = a @ xh + b[:, 0] * u + l @ (y - c @ xh)
        dz = np.zeros(1) if clipped else np.array([r - y[0]])
        return np.concatenate([dx, dxh, dz])

    def edge(sign):
        ev = lambda tt, s, clipped: abs(command(s)) - limit  # noqa: E731
        ev.terminal = True
        ev.direction = sign
        return ev

    s = np.concatenate([np.array(loop["states"], float)[:, 0], np.array(loop["estimates"], float)[:, 0], [0.0]])
    ts, ss = [t[0]], [s]
    t0 = t[0]
    breaks = [t_ref, t[-1]]
    clipped = abs(command(s)) > limit
    pieces = 0
    while t0 < t[-1] - 1e-12:
        pieces += 1
        if pieces > 10_000:
            print("saturated loop: the saturation switches too often to integrate piecewise")
            return 1
        t_end = min(x for x in breaks if x > t0 + 1e-12)
        # Leaving saturation (|u| falls through the limit) or entering it (rises through).
        sol = solve_ivp(rhs, (t0, t_end), s, method="DOP853", rtol=1e-11, atol=1e-14,
                        args=(clipped,), events=[edge(-1.0 if clipped else 1.0)], dense_output=True)
        if sol.status < 0:
            print(f"saturated loop: solve_ivp failed: {sol.message}")
            return 1
        inside = t[(t > t0) & (t <= sol.t[-1])]
        for tt in inside:
            ts.append(tt)
            ss.append(sol.sol(tt))
        t0, s = sol.t[-1], sol.y[:, -1]
        if sol.status == 1:  # the command crossed the limit: the other mode from here on
            clipped = not clipped
        else:  # a break (the reference step): the mode follows the state
            clipped = abs(command(s)) > limit
    ref = np.array(ss)
    got_x = np.array(loop["states"], float).T
    got_xh = np.array(loop["estimates"], float).T
    got_u = np.array(loop["inputs"], float)[0]
    want_cmd = np.array([command(v) for v in ref])
    want_u = np.clip(want_cmd, -limit, limit)
    # The commanded (unclipped) input −K x̂ − K_i z carries the integrator state z, which the
    # result does not list on its own: comparing it checks the integrator too.
    got_cmd = np.array(loop["commanded"], float)[0]
    worst = 0.0
    for name, got, want in [("states", got_x, ref[:, :n]), ("estimates", got_xh, ref[:, n:2 * n]), ("input", got_u[:, None], want_u[:, None]),
                            ("commanded input (with the integrator)", got_cmd[:, None], want_cmd[:, None])]:
        peak = np.max(np.abs(want), axis=0)
        dev = np.max(np.abs(got - want), axis=0) / np.where(peak > 0, peak, 1.0)
        worst = max(worst, float(dev.max()))
        print(f"saturated loop: {name}: largest deviation / peak = {', '.join(f'{d:.2e}' for d in dev)}")
    clipped_share = float(np.mean(np.abs(np.array(loop["commanded"], float)[0]) > limit))
    print(f"saturated loop: {len(t)} samples, input clipped in {100 * clipped_share:.1f} % of them; worst {worst:.2e} (tolerance {TOLERANCE:g})")
    if clipped_share == 0.0:
        print("saturated loop: the input never saturated: this case no longer tests saturation")
        return 1
    return 0 if worst <= TOLERANCE else 1


if __name__ == "__main__":
    sys.exit(main())
