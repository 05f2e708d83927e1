#!/usr/bin/env python3
"""Live check: pole sensitivity and the uncertainty cloud of `polewright design` against numpy
and scipy.

Usage:
    python3 tests/oracle/check_robustness.py [--cli target/release/polewright]

Designs with illustrative data; every figure is recomputed here from the result's gain:
- pole sensitivity: the closed loop A - B K is rebuilt with numpy; each eigenvalue's condition
  number ||x|| ||y|| / |y^H x| comes from scipy.linalg.eig(left=True, right=True) (Wilkinson,
  The Algebraic Eigenvalue Problem, 1965), and dlambda/dp from a central difference of
  numpy.linalg.eigvals of A(p +- h) - B K, h = 1e-6. Agreement: 1e-6 relative for the condition
  numbers; 1e-5 of the largest derivative for each derivative (the difference's own rounding
  error is about eps |lambda| / h = 1e-10 absolute).
- the uncertainty cloud: the sampling rule is documented (SplitMix64, Steele, Lea & Flood,
  OOPSLA 2014; uniform entries; Box-Muller normal matrices scaled to a uniform fraction of the
  norm bound, column by column); it is reimplemented here, every perturbed closed loop's poles
  are computed with numpy, and the count of stable samples must be equal, the worst decay rate
  and damping agree to 1e-9 and every sampled pole to 1e-8 (relative to the loop's size).
Exit status 1 on any failure.
"""

from __future__ import annotations

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import argparse  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import scipy.linalg  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
MASK = (1 << 64) - 1

SENSITIVITY = {"plant": {"a": [[0, 1, 0], [-2, -0.3, 1], [0, 0, -4]], "b": [[0, 0], [1, 0.4], [0, 1]]},
               "feedback": {"poles": ["-1.5±2j", -3]},
               "robustness": {"sensitivity_entry": "A 2 1"}}

CLOUD = {"plant": {"a": [[0, 1], [-3, -0.2]], "b": [[0], [2]]},
         "feedback": {"poles": ["-0.6±1.1j"]},
         "robustness": {"uncertainty": {"entries": "A 2 1 60%\nA 2 2 90%\nB 30%", "samples": 400, "seed": 11}}}


def design(cli, body):
    doc = {"format": "polewright.design", "version": 3, **body}
    out = subprocess.run([str(cli), "design", "-"], input=json.dumps(doc), capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise RuntimeError(out.stderr.strip())
    return json.loads(out.stdout)


def match(ours, theirs):
    """Largest distance from each of our values to the nearest unused one of theirs."""
    left = list(theirs)
    worst = 0.0
    for z in ours:
        k = min(range(len(left)), key=lambda i: abs(left[i] - z))
        worst = max(worst, abs(left[k] - z))
        left.pop(k)
    return worst


def check_sensitivity(cli):
    r = design(cli, SENSITIVITY)
    a = np.array(SENSITIVITY["plant"]["a"], float)
    b = np.array(SENSITIVITY["plant"]["b"], float)
    k = np.array(r["feedback"]["gain"], float)
    acl = a - b @ k
    w, vl, vr = scipy.linalg.eig(acl, left=True, right=True)
    kappa = [np.linalg.norm(vl[:, i]) * np.linalg.norm(vr[:, i]) / abs(vl[:, i].conj() @ vr[:, i]) for i in range(len(w))]
    h = 1e-6
    ap, am = a.copy(), a.copy()
    ap[1, 0] += h
    am[1, 0] -= h
    lp, lm = np.linalg.eigvals(ap - b @ k), np.linalg.eigvals(am - b @ k)
    fails = []
    rows = r["pole_sensitivity"]["poles"]
    if len(rows) != len(w):
        fails.append(f"{len(rows)} rows for {len(w)} poles")
    worst_k, worst_d = 0.0, 0.0
    # The difference's rounding error is absolute (about eps |lambda| / h), so the derivatives
    # are compared relative to the largest of them.
    dscale = max(abs(x) for x in (lp - lm) / (2 * h))
    for row in rows:
        z = complex(*row["pole"])
        i = int(np.argmin(abs(w - z)))
        worst_k = max(worst_k, abs(row["condition"] - kappa[i]) / kappa[i])
        # The derivative of the eigenvalue nearest z, from the two perturbed spectra.
        zp, zm = lp[int(np.argmin(abs(lp - w[i])))], lm[int(np.argmin(abs(lm - w[i])))]
        d = (zp - zm) / (2 * h)
        ours = complex(*row["derivative"])
        worst_d = max(worst_d, abs(ours - d) / dscale)
    if worst_k > 1e-6:
        fails.append(f"condition numbers differ by {worst_k:.1e} relative")
    if worst_d > 1e-5:
        fails.append(f"derivatives differ by {worst_d:.1e} relative")
    print(f"{'ok  ' if not fails else 'FAIL'} pole sensitivity ({len(rows)} poles): condition numbers within {worst_k:.1e}, d/dA(2,1) within {worst_d:.1e} of scipy/numpy" + ("" if not fails else "; " + "; ".join(fails)))
    return not fails


class SplitMix:
    def __init__(self, seed):
        self.s = seed & MASK

    def next_u64(self):
        self.s = (self.s + 0x9E3779B97F4A7C15) & MASK
        z = self.s
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
        return z ^ (z >> 31)

    def uniform(self):
        return (self.next_u64() >> 11) / float(1 << 53)

    def normal(self):
        u = 1.0 - self.uniform()
        v = self.uniform()
        return math.sqrt(-2.0 * math.log(u)) * math.cos(2 * math.pi * v)


def check_cloud(cli):
    r = design(cli, CLOUD)
    u = r["uncertainty"]
    a = np.array(CLOUD["plant"]["a"], float)
    b = np.array(CLOUD["plant"]["b"], float)
    k = np.array(r["feedback"]["gain"], float)
    rng = SplitMix(11)
    stable, decay, damping, poles = 0, math.inf, math.inf, []
    for _ in range(400):
        pa, pb = a.copy(), b.copy()
        for (i, j, rel) in [(1, 0, 0.6), (1, 1, 0.9)]:
            x = 2.0 * rng.uniform() - 1.0
            pa[i, j] += rel * abs(pa[i, j]) * x
        g = np.zeros(b.shape)
        for j in range(b.shape[1]):          # column by column, as the program fills a matrix
            for i in range(b.shape[0]):
                g[i, j] = rng.normal()
        v = rng.uniform()
        pb = pb + g * (0.3 * np.linalg.norm(b, 2) * v / np.linalg.norm(g, 2))
        ev = np.linalg.eigvals(pa - pb @ k)
        poles.append(ev)
        if all(z.real < -1e-9 * abs(z) for z in ev):
            stable += 1
        for z in ev:
            decay = min(decay, -z.real)
            damping = min(damping, -z.real / abs(z) if abs(z) > 0 else 0.0)
    fails = []
    if u["stable"] != stable:
        fails.append(f"stable samples {u['stable']} vs {stable}")
    if abs(u["worst_decay_rate"] - decay) > 1e-9 * max(1.0, abs(decay)) or abs(u["worst_damping"] - damping) > 1e-9:
        fails.append(f"worst decay/damping {u['worst_decay_rate']}/{u['worst_damping']} vs {decay}/{damping}")
    ours = [complex(*p) for p in u["poles"]]
    # Two poles per sample for this 2-state plant: a short or empty list must fail, not pass.
    if len(ours) != 2 * 400:
        fails.append(f"{len(ours)} sampled poles reported, expected 800")
        ours = (ours + [complex(math.nan, math.nan)] * 800)[:800]
    scale = max(abs(z) for ev in poles for z in ev)
    worst = 0.0
    for s in range(400):
        worst = max(worst, match(ours[2 * s:2 * s + 2], poles[s]) / scale)
    if worst > 1e-8:
        fails.append(f"sampled poles differ by {worst:.1e}")
    print(f"{'ok  ' if not fails else 'FAIL'} uncertainty cloud (400 samples): {stable} stable ({u['stable_fraction']:.4f}), worst decay {decay:.6f}, worst damping {damping:.6f}; poles within {worst:.1e}" + ("" if not fails else "; " + "; ".join(fails)))
    return not fails


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cli", type=Path, default=ROOT / "target" / "release" / "polewright")
    args = ap.parse_args(argv)
    ok = check_sensitivity(args.cli)
    ok &= check_cloud(args.cli)
    print(f"robustness against numpy/scipy: {'no' if ok else 'some'} failures")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
