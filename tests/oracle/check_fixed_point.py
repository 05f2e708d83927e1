#!/usr/bin/env python3
"""Live check: the Q15/Q31 exports' own re-check against numpy.

Usage:
    python3 tests/oracle/check_fixed_point.py [--cli target/release/polewright]

For each design below, `polewright export --format json --precision q15|q31` gives the integers,
their shifts and the export's re-check (the closed-loop poles with the quantised numbers). Here
numpy rebuilds the quantised matrices from the integers alone (value = integer * 2^(shift - f),
f = 15 or 31), forms the same loops — the controller loop (the sampled plant from the double
export, augmented by the computation-delay and integrator states as documented in
crate/core/src/controller.rs, with the quantised gains) and the observer (quantised Phi, L, C)
— and computes their eigenvalues with numpy.linalg.eigvals. Every pole the export reports must
match numpy's to 1e-9 (relative to max(1, |z|)); a refused format must be refused for the
stated reason (an entry below the format's resolution). Exit status 1 on any failure.
"""

from __future__ import annotations

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import argparse  # noqa: E402
import json  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]

DESIGNS = {
    # Illustrative data of the repository's examples and tests.
    "belt-axis-digital": (ROOT / "examples" / "belt-axis-digital.json").read_text(),
    "delay-current-integral": json.dumps({
        "format": "polewright.design", "version": 3,
        "plant": {"a": [[0, 1], [-4, -0.4]], "b": [[0], [2]], "c": [[1, 0]]},
        "feedback": {"poles": ["-3±3j", -4]}, "implementation": {"sample_time": 0.02, "computation_delay": True},
        "observer": {"speed_factor": 3, "form": "current"}, "tracking": {"mode": "integral"}}),
}


def export(cli, text, precision):
    out = subprocess.run([str(cli), "export", "-", "--format", "json", "--precision", precision],
                         input=text, capture_output=True, text=True, check=False)
    return out.returncode, out.stdout, out.stderr.strip()


def dequantised(doc, name):
    m = doc["matrices"].get(name)
    if m is None:
        return None
    f = doc["fraction_bits"]
    return np.array(m["integers"], dtype=float) * 2.0 ** (m["shift"] - f)


def loops(exact, q):
    """The controller and observer loop matrices from the double export and the quantised one."""
    mats = exact["matrices"]
    get = lambda n: np.array(mats[n]["data"], dtype=float) if n in mats else None  # noqa: E731
    phi, gamma = get("Phi"), get("Gamma")
    a, b = phi, gamma
    g = dequantised(q, "K")
    n = phi.shape[0]
    if "K_u" in mats:
        m = gamma.shape[1]
        a = np.block([[phi, gamma], [np.zeros((m, n)), np.zeros((m, m))]])
        b = np.vstack([np.zeros((n, m)), np.eye(m)])
        g = np.hstack([g, dequantised(q, "K_u")])
    if "K_i" in mats:
        header = " ".join(exact["header"])
        c, d = get("C"), get("D")
        tracked = [i for i, name in enumerate(exact["outputs"]) if f"Tracked outputs (reference order): {name}" in header] or [0]
        ct = np.hstack([c[tracked, :], np.zeros((len(tracked), a.shape[0] - n))])
        dt = d[tracked, :]
        t = exact["sample_time"]
        nq = len(tracked)
        a = np.block([[a, np.zeros((a.shape[0], nq))], [-t * ct, np.eye(nq)]])
        b = np.vstack([b, -t * dt])
        g = np.hstack([g, dequantised(q, "K_i")])
    out = {"controller": a - b @ g}
    if "L" in mats:
        out["observer"] = dequantised(q, "Phi") - dequantised(q, "L") @ dequantised(q, "C")
    return out


EXPECTED_LOOPS = 6


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cli", type=Path, default=ROOT / "target" / "release" / "polewright")
    args = ap.parse_args(argv)
    failures, checked = 0, 0
    for name, text in DESIGNS.items():
        code, out, err = export(args.cli, text, "double")
        if code != 0:
            print(f"FAIL {name}: double export failed: {err}")
            failures += 1
            continue
        exact = json.loads(out)
        for precision in ("q15", "q31"):
            code, out, err = export(args.cli, text, precision)
            if code != 0:
                ok = "below the resolution" in err
                print(f"{'ok  ' if ok else 'FAIL'} {name} {precision}: refused: {err}")
                failures += 0 if ok else 1
                continue
            q = json.loads(out)
            mats = loops(exact, q)
            for check in q["recheck"]:
                ours = [complex(*p[1]) for p in check["poles"]]
                theirs = list(np.linalg.eigvals(mats[check["loop"]]))
                worst = 0.0
                for z in ours:
                    k = int(np.argmin([abs(z - w) for w in theirs]))
                    worst = max(worst, abs(z - theirs.pop(k)) / max(1.0, abs(z)))
                ok = worst <= 1e-9 and not theirs
                checked += 1
                failures += 0 if ok else 1
                print(f"{'ok  ' if ok else 'FAIL'} {name} {precision} {check['loop']}: {len(ours)} poles, worst difference from numpy {worst:.1e}; "
                      f"reported move {check['max_pole_move']:.1e}")
    print(f"fixed-point re-check against numpy: {checked} loops checked, {failures} failures")
    # The designs above give 6 re-checked loops (controller and observer at Q31 for the belt
    # axis, at Q15 and Q31 for the delayed current loop); fewer means a re-check went missing.
    if checked != EXPECTED_LOOPS:
        print(f"FAIL expected {EXPECTED_LOOPS} re-checked loops, got {checked}")
        return 1
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
