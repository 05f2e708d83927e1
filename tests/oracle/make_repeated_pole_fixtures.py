#!/usr/bin/env python3
"""Generate tests/fixtures/repeated_poles.json: state feedback with poles repeated beyond rank B.

Usage:
    python3 tests/oracle/make_repeated_pole_fixtures.py [--out DIR] [--check]

Two outside references for each seeded plant (seed = CRC-32 of the case name):
- numpy.poly of the requested poles: the characteristic polynomial the closed loop A - B K must
  have (the Rust test evaluates it at A - B K, Cayley-Hamilton, and at the companion check);
- with one input the gain is unique, and it is computed here in 60-digit arithmetic (mpmath)
  by Ackermann's formula, k' = e_n' C^-1 p(A) with C = [b, Ab, ..., A^(n-1) b] (Ackermann, 1972;
  numerically poor in floating point, which is why Polewright never uses it, but exact enough
  at 60 digits for the plants here, whose controllability matrices have condition numbers
  below 1e8; the condition number is stored so the test can scale its tolerance).

Cases: one input, n = 2..7, a real pole repeated n times, a real pole repeated n - 1 times with
one other, a complex pair repeated twice (n >= 4), deadbeat (every pole at 0) on discrete-time
plants scaled to have eigenvalues outside the unit circle; two inputs, n = 3..6, a real pole
repeated n times (Cayley-Hamilton only: the gain is not unique).
--check regenerates into a temporary folder and compares every number with the committed file
(the shared driver of make_fixtures.py).
"""

from __future__ import annotations

import blas_env  # noqa: F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import mpmath  # noqa: E402
import numpy as np  # noqa: E402

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

from make_fixtures import fixture_cli, mat, seed_of, write_json  # noqa: E402

DEFAULT_OUT = HERE.parent / "fixtures"
GENERATOR = "tests/oracle/make_repeated_pole_fixtures.py"
FNAME = "repeated_poles.json"
DIGITS = 60


def ackermann_mp(a: np.ndarray, b: np.ndarray, coeffs: np.ndarray) -> list:
    """k' = e_n' C^-1 p(A) in mpmath at DIGITS digits; coeffs are numpy.poly's (monic, highest first)."""
    n = a.shape[0]
    with mpmath.workdps(DIGITS):
        am = mpmath.matrix(a.tolist())
        bm = mpmath.matrix(b.reshape(n, 1).tolist())
        cols = [bm]
        for _ in range(n - 1):
            cols.append(am * cols[-1])
        c = mpmath.matrix(n, n)
        for j, col in enumerate(cols):
            for i in range(n):
                c[i, j] = col[i]
        p = mpmath.zeros(n, n)
        power = mpmath.eye(n)
        for coef in reversed([mpmath.mpf(float(x)) for x in coeffs]):
            p += coef * power
            power = power * am
        en = mpmath.zeros(1, n)
        en[0, n - 1] = 1
        k = en * mpmath.inverse(c) * p
        return [float(k[0, j]) for j in range(n)]


def controllability_condition(a: np.ndarray, b: np.ndarray) -> float:
    n = a.shape[0]
    cols = [b]
    for _ in range(n - 1):
        cols.append(a @ cols[-1])
    return float(np.linalg.cond(np.hstack(cols)))


def poles_json(poles) -> list:
    return [[float(np.real(z)), float(np.imag(z))] for z in poles]


def plant(name: str, n: int, m: int, domain: str):
    rng = np.random.default_rng(seed_of(name))
    a = rng.standard_normal((n, n))
    if domain == "discrete":
        a *= 1.2 / max(abs(np.linalg.eigvals(a)))
    b = rng.standard_normal((n, m))
    return rng, a, b


def case(name: str, n: int, m: int, domain: str, poles) -> dict:
    _, a, b = plant(name, n, m, domain)
    coeffs = np.real(np.poly(np.array(poles, dtype=complex)))
    out = {"name": name, "domain": domain, "n": n, "m": m, "a": mat(a), "b": mat(b),
           "poles": poles_json(poles), "numpy_poly": [float(x) for x in coeffs]}
    if m == 1:
        out["mpmath_gain"] = ackermann_mp(a, b[:, 0], coeffs)
        out["controllability_condition"] = controllability_condition(a, b)
    return out


def build() -> dict:
    cases = []
    for n in range(2, 8):
        cases.append(case(f"si-all-n{n}", n, 1, "continuous", [-1.5] * n))
        cases.append(case(f"si-all-but-one-n{n}", n, 1, "continuous", [-2.0] * (n - 1) + [-0.7]))
        cases.append(case(f"si-deadbeat-n{n}", n, 1, "discrete", [0.0] * n))
        if n >= 4:
            pair = [complex(-1, 1.5), complex(-1, -1.5)] * 2
            cases.append(case(f"si-pair-twice-n{n}", n, 1, "continuous", pair + [-3.0 - j for j in range(n - 4)]))
    for n in range(3, 7):
        cases.append(case(f"mi-all-n{n}", n, 2, "continuous", [-1.0] * n))
        cases.append(case(f"mi-deadbeat-n{n}", n, 2, "discrete", [0.0] * n))
    return {"generator": GENERATOR, "numpy": np.__version__, "mpmath": mpmath.__version__,
            "conventions": "u = -K x; numpy_poly = numpy.poly(poles), highest power first; mpmath_gain by Ackermann's formula at 60 digits",
            "cases": cases}


def generate(out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    write_json(out / FNAME, build())


def main(argv=None) -> int:
    return fixture_cli(__doc__.splitlines()[0], DEFAULT_OUT, generate, [FNAME], argv)


if __name__ == "__main__":
    sys.exit(main())
