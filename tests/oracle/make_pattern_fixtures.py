#!/usr/bin/env python3
"""Generate tests/fixtures/patterns.json: reference values for Polewright's pole patterns.

Usage:
    python3 tests/oracle/make_pattern_fixtures.py [--out DIR] [--check]

Without --check the fixture is (re)written into DIR (default: tests/fixtures).  With
--check it is regenerated into a temporary directory and every number is compared
with the committed file; the script prints ``fixtures: 1 files, M numbers compared,
K mismatches`` and exits 1 if K > 0 (same tolerance policy as make_fixtures.py:
1e-9 times the largest magnitude in each numeric field).

Only the standard library, numpy and scipy are used, as general-purpose oracles:
scipy.signal.bessel(N, 1, analog=True, norm=..., output="zpk") and
scipy.signal.buttap(N) for the Bessel and Butterworth poles, numpy.roots for the ITAE
polynomials, closed-form step responses (partial fractions with numpy, or
scipy.special.gammainc for the repeated poles of the binomial pattern) with
scipy.optimize.brentq for settling and rise instants and half-power frequencies,
and scipy.integrate.quad for the ITAE cost.  Nothing is random.  The Rust module
(crate/core/src/patterns/) uses none of these methods: it simulates a cascade
realisation with the matrix exponential and bisects, so agreement is a real check.
"""

from __future__ import annotations

import os  # noqa: F401

import blas_env  # noqa: E402,F401  (before numpy: one thread, a fixed OpenBLAS kernel set)

import json  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.integrate  # noqa: E402
import scipy.optimize  # noqa: E402
import scipy.signal  # noqa: E402
import scipy.special  # noqa: E402

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

# Shared serialisation and comparison helpers (same conventions and the same --check
# tolerance as the other fixtures).
from make_fixtures import check_fixtures, fixture_cli, cvec, fnum, sort_complex, write_json  # noqa: E402

REPO_TESTS = HERE.parent
DEFAULT_OUT = REPO_TESTS / "fixtures"
FNAME = "patterns.json"
GENERATOR = "tests/oracle/make_pattern_fixtures.py"

BANDS = [0.01, 0.02, 0.05]
RISE_LEVELS = (0.1, 0.9)
BESSEL_ORDERS = list(range(1, 13))
BUTTERWORTH_ORDERS = list(range(1, 11))
BINOMIAL_ORDERS = list(range(1, 9))
DAMPINGS = [0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 1.0 / math.sqrt(2.0), 0.8, 0.9]

GRAHAM_LATHROP = ("D. Graham, R. C. Lathrop, 'The synthesis of optimum transient response: "
                  "criteria and standard forms', Trans. AIEE 72(II):273-288, 1953 "
                  "(ITAE standard-form coefficients, omega0 = 1; from memory)")
# Ascending coefficients a0 .. an, omega0 = 1 (from memory, as in the Rust module).
ITAE = {
    1: [1.0, 1.0],
    2: [1.0, 1.4, 1.0],
    3: [1.0, 2.15, 1.75, 1.0],
    4: [1.0, 2.7, 3.4, 2.1, 1.0],
    5: [1.0, 3.4, 5.5, 5.0, 2.8, 1.0],
    6: [1.0, 3.95, 7.45, 8.6, 6.6, 3.25, 1.0],
}

CONVENTIONS = {
    "polynomials": "coefficient lists are ascending: [a0, a1, ..., an], monic (an = 1)",
    "poles": "lists of [re, im], sorted by (re, im)",
    "transfer_function": "every pattern is used as the all-pole H(s) = p(0)/p(s), unit DC gain",
    "settling_time": "last instant t with |y(t) - 1| > band for the unit-step response y "
                     "(final value 1); one value per entry of the header's bands, in order; "
                     "found by scanning a 400001-point grid over 80/min(-Re p) seconds and "
                     "scipy.optimize.brentq inside the last interval",
    "half_power_frequency": "lowest omega > 0 with |H(j omega)|^2 = 1/2 (brentq after a "
                            "geometric scan from 1e-3 min|p|)",
    "rise_time": "10 %-90 % rise time of the unit-step response (first crossings, brentq)",
    "overshoot": "max(0, max_t y(t) - 1), maximised with scipy.optimize.minimize_scalar "
                 "around the largest sample of a dense grid",
    "itae_cost": "integral over [0, horizon] of t |1 - y(t)| dt by scipy.integrate.quad "
                 "(split at every sign change of 1 - y found on a dense grid)",
    "bessel": "coefficients from the definition (2n-k)!/(2^(n-k) k! (n-k)!) in exact "
              "integers; scipy_delay/scipy_mag/scipy_phase = scipy.signal.bessel(n, 1, "
              "analog=True, norm='delay'|'mag'|'phase', output='zpk') poles; "
              "settling_time_delay and half_power_frequency_delay refer to the delay "
              "(unit DC group delay) normalisation",
    "butterworth": "poles = scipy.signal.buttap(n)",
    "itae": "poles = numpy.roots of the recalled coefficients (omega0 = 1)",
    "binomial": "(s + 1)^n; step response y = gammainc(n, t) (regularised lower "
                "incomplete gamma), independent of partial fractions",
    "second_order": "1/(s^2 + 2 zeta s + 1) (omega_n = 1); overshoot measured from the "
                    "closed-form response, not from the exp formula, which is stored "
                    "separately as overshoot_formula",
}


# ----------------------------------------------------------------------------
# step responses and figures
# ----------------------------------------------------------------------------

def partial_fraction_step(poles):
    """y(t) = 1 + sum_i r_i exp(p_i t) for distinct poles (H = prod(-p)/prod(s - p))."""
    p = np.asarray(poles, dtype=complex)
    gain = np.prod(-p)
    res = np.array([gain / (pi * np.prod([pi - pj for j, pj in enumerate(p) if j != i]))
                    for i, pi in enumerate(p)])

    def y(t):
        t = np.asarray(t, dtype=float)
        return 1.0 + np.real(np.sum(res[:, None] * np.exp(np.outer(p, np.atleast_1d(t))),
                                    axis=0)).reshape(t.shape)
    y0 = float(y(np.array(0.0)))
    assert abs(y0) < 1e-9, f"partial fractions lose accuracy: y(0) = {y0}"
    return y


def binomial_step(n):
    return lambda t: scipy.special.gammainc(n, np.asarray(t, dtype=float))


def scalar(f):
    return lambda t: float(f(np.array(float(t))))


def settling_time(y, slowest, band):
    horizon = 80.0 / slowest
    t = np.linspace(0.0, horizon, 400001)
    err = np.abs(y(t) - 1.0) - band
    outside = np.nonzero(err > 0.0)[0]
    i = int(outside[-1])
    assert i + 1 < t.size and t[i + 1] < 0.5 * horizon, "not settled in the horizon"
    f = scalar(lambda s: np.abs(y(s) - 1.0) - band)
    return scipy.optimize.brentq(f, t[i], t[i + 1], xtol=1e-15, rtol=4 * np.finfo(float).eps)


def first_crossing(y, level, t_end):
    t = np.linspace(0.0, t_end, 200001)
    v = y(t)
    i = int(np.nonzero(v >= level)[0][0])
    f = scalar(lambda s: y(s) - level)
    return scipy.optimize.brentq(f, t[i - 1], t[i], xtol=1e-15, rtol=4 * np.finfo(float).eps)


def rise_time(y, t_end):
    return first_crossing(y, RISE_LEVELS[1], t_end) - first_crossing(y, RISE_LEVELS[0], t_end)


def overshoot(y, t_end):
    t = np.linspace(0.0, t_end, 200001)
    v = y(t)
    i = int(np.argmax(v))
    if v[i] <= 1.0:
        return 0.0
    lo, hi = t[max(i - 1, 0)], t[min(i + 1, t.size - 1)]
    r = scipy.optimize.minimize_scalar(lambda s: -float(y(np.array(s))), bounds=(lo, hi),
                                       method="bounded", options={"xatol": 1e-12})
    return max(0.0, -r.fun - 1.0, v[i] - 1.0)


def half_power_frequency(poles):
    p = np.asarray(poles, dtype=complex)

    def g(w):
        return float(np.sum(2.0 * (np.log(np.abs(p)) - np.log(np.abs(1j * w - p)))) + math.log(2.0))
    w = 1e-3 * float(np.min(np.abs(p)))
    while g(w * 1.01) > 0.0:
        w *= 1.01
    return scipy.optimize.brentq(g, w, w * 1.01, xtol=1e-15, rtol=4 * np.finfo(float).eps)


def itae_cost(y, horizon):
    t = np.linspace(0.0, horizon, 200001)
    e = 1.0 - y(t)
    cuts = [0.0]
    for i in np.nonzero(np.sign(e[1:]) != np.sign(e[:-1]))[0]:
        cuts.append(scipy.optimize.brentq(scalar(lambda s: 1.0 - y(s)), t[i], t[i + 1]))
    cuts.append(horizon)
    total = 0.0
    for a, b in zip(cuts[:-1], cuts[1:]):
        val, _ = scipy.integrate.quad(lambda s: s * abs(1.0 - float(y(np.array(s)))), a, b,
                                      epsabs=1e-13, epsrel=1e-12, limit=200)
        total += val
    return total


def slowest_rate(poles):
    return float(np.min(-np.real(np.asarray(poles, dtype=complex))))


# ----------------------------------------------------------------------------
# cases
# ----------------------------------------------------------------------------

def bessel_coefficients(n):
    return [math.factorial(2 * n - k) // (2 ** (n - k) * math.factorial(k) * math.factorial(n - k))
            for k in range(n + 1)]


def bessel_case(n):
    coeffs = bessel_coefficients(n)
    poles = {}
    for norm in ("delay", "mag", "phase"):
        _, p, _ = scipy.signal.bessel(n, 1, analog=True, norm=norm, output="zpk")
        poles[norm] = sort_complex(p)
    # Internal checks: scipy's 'delay' poles are the roots of the definition's polynomial;
    # 'mag' is at half power at 1 rad/s; 'phase' has constant coefficient 1.
    back = np.real(np.poly(poles["delay"]))[::-1]
    assert np.allclose(back, coeffs, rtol=1e-9, atol=0.0), (n, back, coeffs)
    assert abs(half_power_frequency(poles["mag"]) - 1.0) < 1e-9, n
    assert abs(np.prod(np.abs(poles["phase"])) - 1.0) < 1e-9, n
    y = partial_fraction_step(poles["delay"])
    slow = slowest_rate(poles["delay"])
    return {
        "name": f"bessel-n{n}",
        "kind": "bessel",
        "source": "definition of the reverse Bessel polynomial (Krall & Frink 1949; "
                  "Grosswald 1978; from memory); poles from scipy.signal.bessel",
        "n": n,
        "coefficients": coeffs,
        "scipy_delay": cvec(poles["delay"]),
        "scipy_mag": cvec(poles["mag"]),
        "scipy_phase": cvec(poles["phase"]),
        "half_power_frequency_delay": fnum(half_power_frequency(poles["delay"])),
        "settling_time_delay": [fnum(settling_time(y, slow, b)) for b in BANDS],
    }


def butterworth_case(n):
    _, p, _ = scipy.signal.buttap(n)
    p = sort_complex(p)
    y = partial_fraction_step(p)
    slow = slowest_rate(p)
    return {
        "name": f"butterworth-n{n}",
        "kind": "butterworth",
        "source": "scipy.signal.buttap (Butterworth analog prototype)",
        "n": n,
        "poles": cvec(p),
        "half_power_frequency": fnum(half_power_frequency(p)),
        "settling_time": [fnum(settling_time(y, slow, b)) for b in BANDS],
    }


def itae_case(n):
    coeffs = ITAE[n]
    p = sort_complex(np.roots(coeffs[::-1]))
    y = partial_fraction_step(p)
    slow = slowest_rate(p)
    horizon = 40.0
    return {
        "name": f"itae-n{n}",
        "kind": "itae",
        "source": GRAHAM_LATHROP + "; poles by numpy.roots",
        "n": n,
        "coefficients": [fnum(c) for c in coeffs],
        "poles": cvec(p),
        "half_power_frequency": fnum(half_power_frequency(p)),
        "settling_time": [fnum(settling_time(y, slow, b)) for b in BANDS],
        "overshoot": fnum(overshoot(y, horizon)),
        "itae_horizon": horizon,
        "itae_cost": fnum(itae_cost(y, horizon)),
    }


def binomial_case(n):
    y = binomial_step(n)
    return {
        "name": f"binomial-n{n}",
        "kind": "binomial",
        "source": "(s + 1)^n; step response gammainc(n, t) (closed form, common practice)",
        "n": n,
        "half_power_frequency": fnum(half_power_frequency([-1.0] * n)),
        "half_power_closed_form": fnum(math.sqrt(2.0 ** (1.0 / n) - 1.0)),
        "settling_time": [fnum(settling_time(y, 1.0, b)) for b in BANDS],
    }


def second_order_case(zeta):
    wd = math.sqrt(1.0 - zeta * zeta)
    p = [complex(-zeta, wd), complex(-zeta, -wd)]

    def y(t):
        t = np.asarray(t, dtype=float)
        return 1.0 - np.exp(-zeta * t) * (np.cos(wd * t) + zeta / wd * np.sin(wd * t))
    t_end = 4.0 * math.pi / wd
    return {
        "name": f"second-order-zeta{zeta:.6f}",
        "kind": "second_order",
        "source": "closed-form step response of 1/(s^2 + 2 zeta s + 1) (common practice)",
        "n": 2,
        "damping": fnum(zeta),
        "poles": cvec(sort_complex(p)),
        "overshoot": fnum(overshoot(y, t_end)),
        "overshoot_formula": fnum(math.exp(-math.pi * zeta / wd)),
        "rise_time": fnum(rise_time(y, t_end)),
        "half_power_frequency": fnum(half_power_frequency(p)),
        "settling_time": [fnum(settling_time(y, zeta, b)) for b in BANDS],
    }


def build() -> dict:
    cases = []
    cases += [bessel_case(n) for n in BESSEL_ORDERS]
    cases += [butterworth_case(n) for n in BUTTERWORTH_ORDERS]
    cases += [itae_case(n) for n in ITAE]
    cases += [binomial_case(n) for n in BINOMIAL_ORDERS]
    cases += [second_order_case(z) for z in DAMPINGS]
    return {
        "generator": GENERATOR,
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "bands": BANDS,
        "rise_levels": list(RISE_LEVELS),
        "conventions": CONVENTIONS,
        "cases": cases,
    }


# ----------------------------------------------------------------------------
# driver and --check
# ----------------------------------------------------------------------------

def generate(out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    write_json(out / FNAME, build())


def check(committed: Path) -> int:
    return check_fixtures(committed, generate, [FNAME])


def main(argv=None) -> int:
    return fixture_cli(__doc__.splitlines()[0], DEFAULT_OUT, generate, [FNAME], argv)


if __name__ == "__main__":
    sys.exit(main())
