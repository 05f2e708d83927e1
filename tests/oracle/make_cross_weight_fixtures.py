#!/usr/bin/env python3
"""Generate tests/fixtures/riccati_cross.json: LQR with a cross weight S, from scipy.

Usage:
    python3 tests/oracle/make_cross_weight_fixtures.py [--out DIR] [--check]

The cost is the integral (continuous) or sum (discrete) of x'Qx + 2x'Su + u'Ru, with the joint
weight [[Q, S], [S', R]] positive definite. The references are
scipy.linalg.solve_continuous_are(a, b, q, r, s=S) and solve_discrete_are(a, b, q, r, s=S), and
the gains K = R^-1 (B'X + S') (continuous) and (R + B'XB)^-1 (B'XA + S') (discrete), with the
control law u = -K x. Seeded random plants (seed = CRC-32 of the case name), n = 2..6,
m = 1..3; discrete plants are scaled so that some eigenvalues lie outside the unit circle.
--check regenerates into a temporary folder and compares every number with the committed file
(the shared driver of make_fixtures.py).
"""

from __future__ import annotations

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.linalg  # noqa: E402

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

from make_fixtures import check_fixtures, fixture_cli, mat, seed_of, write_json  # noqa: E402

DEFAULT_OUT = HERE.parent / "fixtures"
GENERATOR = "tests/oracle/make_cross_weight_fixtures.py"
FNAME = "riccati_cross.json"


def case(domain: str, n: int, m: int) -> dict:
    name = f"{domain}-cross-n{n}-m{m}"
    rng = np.random.default_rng(seed_of(name))
    a = rng.standard_normal((n, n))
    if domain == "discrete":
        a *= 1.1 / max(abs(np.linalg.eigvals(a)))
    b = rng.standard_normal((n, m))
    # A positive definite joint weight [[Q, S], [S', R]] = W W' + 0.1 I.
    w = rng.standard_normal((n + m, n + m))
    joint = w @ w.T + 0.1 * np.eye(n + m)
    q, s, r = joint[:n, :n], joint[:n, n:], joint[n:, n:]
    if domain == "continuous":
        x = scipy.linalg.solve_continuous_are(a, b, q, r, s=s)
        k = np.linalg.solve(r, b.T @ x + s.T)
    else:
        x = scipy.linalg.solve_discrete_are(a, b, q, r, s=s)
        k = np.linalg.solve(r + b.T @ x @ b, b.T @ x @ a + s.T)
    x = (x + x.T) / 2
    poles = np.linalg.eigvals(a - b @ k)
    stable = bool(np.all(poles.real < 0)) if domain == "continuous" else bool(np.all(abs(poles) < 1))
    return {"name": name, "domain": domain, "n": n, "m": m, "a": mat(a), "b": mat(b), "q": mat(q), "s": mat(s), "r": mat(r),
            "scipy": {"x": mat(x), "gain": mat(k), "closed_loop_stable": stable}}


def build() -> dict:
    cases = [case(d, n, m) for d in ("continuous", "discrete") for n in (2, 3, 4, 6) for m in (1, 2, 3) if m <= n]
    return {"generator": GENERATOR, "numpy": np.__version__, "scipy": scipy.__version__,
            "conventions": "u = -K x; cost x'Qx + 2x'Su + u'Ru; continuous K = R^-1 (B'X + S'), discrete K = (R + B'XB)^-1 (B'XA + S')",
            "cases": cases}


def generate(out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    write_json(out / FNAME, build())


def main(argv=None) -> int:
    return fixture_cli(__doc__.splitlines()[0], DEFAULT_OUT, generate, [FNAME], argv)


if __name__ == "__main__":
    sys.exit(main())
