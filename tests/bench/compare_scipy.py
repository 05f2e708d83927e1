#!/usr/bin/env python3
"""Benchmark Polewright's pole placement against scipy.signal.place_poles (method "YT").

Usage:
    python3 tests/bench/compare_scipy.py [--bench-binary PATH] [--quick] [--out FILE]

The script builds seeded plants, writes them to a temporary case file
``{"cases": [{"name", "a", "b", "poles": [[re, im], ...]}]}``, runs
``PATH CASEFILE`` (default PATH: target/release/polewright-bench under the repo
root), times scipy on the same cases and prints a Markdown table.  The table and
the raw numbers are also written to tests/bench/last_run.json (or --out).

Contract of the bench binary: it reads CASEFILE and prints one JSON object per
line on stdout:
    {"name": ..., "seconds": median seconds per placement, "repeats": k,
     "max_rel_error": x, "eigenvector_condition": x, "iterations": k,
     "error": null or "message"}

Plants: A = R / sqrt(n) with R standard normal (spectrum roughly in the unit disc),
B standard normal, from numpy.random.default_rng with a per-plant seed.  Targets:
  realistic  open-loop spectrum mirrored into the left half-plane and shifted:
             lam -> -|Re lam| - 0.5 + i Im lam
  clustered  conjugate pairs drawn uniformly in the upper half of the disc of
             radius 0.2 about -1 (Im >= 0.01), plus one real pole there if n is odd
The error and conditioning measures are computed here by numpy for both programs from their
gains (never from either program's report): max over requested poles of
|lam_achieved - lam_req| / max(1, |lam_req|) after a one-to-one matching (as in
tests/oracle/make_fixtures.py), and the 2-norm condition number of numpy's eigenvector matrix
of A - B K with unit 2-norm columns.  BLAS is pinned to one thread for both sides' fairness
(scipy here; the binary is expected to be single-threaded).
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
             "BLIS_NUM_THREADS", "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
import zlib  # noqa: E402
from pathlib import Path  # noqa: E402

HERE = Path(__file__).resolve().parent
REPO = HERE.parent.parent
sys.path.insert(0, str(REPO / "tests" / "oracle"))

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.signal  # noqa: E402

from make_fixtures import (  # noqa: E402
    PLACE_MAXITER, PLACE_METHOD, PLACE_RTOL, cvec, mat, match_poles, normalised_columns,
)

DEFAULT_BINARY = Path("target") / "release" / "polewright-bench"
BUILD_HINT = "cargo build --release -p polewright --bin polewright-bench"

FULL_NS = [4, 10, 20, 40, 100]
QUICK_NS = [4, 10, 20]
MS = [1, 2, 4, 5]
KINDS = ["realistic", "clustered"]


def seed_of(name: str) -> int:
    return zlib.crc32(("bench:" + name).encode("utf-8"))


def scipy_repeats(n: int, quick: bool) -> int:
    if quick:
        return 3 if n <= 10 else 1
    if n <= 10:
        return 7
    if n <= 20:
        return 5
    if n <= 40:
        return 3
    return 1


def realistic_poles(a):
    lam = np.linalg.eigvals(a)
    p = -np.abs(lam.real) - 0.5 + 1j * lam.imag
    # eigvals of a real matrix returns exact conjugate pairs; keep the real ones real
    p[lam.imag == 0] = p[lam.imag == 0].real
    return p


def clustered_poles(rng, n, centre=-1.0, radius=0.2, min_im=0.01):
    out = []
    while len(out) < 2 * (n // 2):
        x, y = rng.uniform(-1.0, 1.0), rng.uniform(0.0, 1.0)
        if x * x + y * y > 1.0 or radius * y < min_im:
            continue
        z = complex(centre + radius * x, radius * y)
        out.extend([z, z.conjugate()])
    if n % 2:
        out.append(complex(centre + radius * rng.uniform(-1.0, 1.0), 0.0))
    return np.array(out, dtype=complex)


def build_cases(ns):
    cases, skipped = [], []
    for n in ns:
        for m in MS:
            if m >= n:
                continue
            if m == 1 and n >= 20:
                skipped.append(f"n={n}, m=1: single-input placement skipped for n >= 20 "
                               "(the unique gain is too ill-conditioned to compare)")
                continue
            plant = f"n{n}-m{m}"
            rng = np.random.default_rng(seed_of(plant))
            a = rng.standard_normal((n, n)) / math.sqrt(n)
            b = rng.standard_normal((n, m))
            targets = {"realistic": realistic_poles(a), "clustered": clustered_poles(rng, n)}
            for kind in KINDS:
                cases.append({"name": f"{plant}-{kind}", "n": n, "m": m, "kind": kind,
                              "a": a, "b": b, "poles": targets[kind]})
    return cases, skipped


def run_scipy(case, repeats):
    a, b, poles = case["a"], case["b"], case["poles"]
    p = poles.real if np.all(poles.imag == 0) else poles
    times = []
    res = None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            for _ in range(repeats):
                t0 = time.perf_counter()
                res = scipy.signal.place_poles(a, b, p, method=PLACE_METHOD,
                                               maxiter=PLACE_MAXITER, rtol=PLACE_RTOL)
                times.append(time.perf_counter() - t0)
    except Exception as exc:  # report, do not abort the whole benchmark
        return {"seconds": None, "repeats": len(times), "max_rel_error": None,
                "eigenvector_condition": None, "iterations": None,
                "error": f"{type(exc).__name__}: {exc}"}
    k = np.asarray(res.gain_matrix, dtype=float)
    err, kappa = judge(a, b, k, poles)
    it = None if (isinstance(res.nb_iter, float) and math.isnan(res.nb_iter)) else int(res.nb_iter)
    return {"seconds": statistics.median(times), "repeats": repeats, "max_rel_error": err,
            "eigenvector_condition": kappa, "iterations": it, "error": None}


def judge(a, b, k, poles):
    """Both programs' gains judged the same way, by numpy, from the gain alone: the eigenvalues
    of A - B K matched one-to-one to the request (the largest relative error), and kappa_2 of
    numpy's unit-column eigenvectors of A - B K."""
    lam, x = np.linalg.eig(a - b @ k)
    err = float(np.max(match_poles(lam, poles)))
    kappa = float(np.linalg.cond(normalised_columns(x)))
    return err, kappa


def run_binary(binary: Path, cases, timeout):
    doc = {"cases": [{"name": c["name"], "a": mat(c["a"]), "b": mat(c["b"]),
                      "poles": cvec(c["poles"])} for c in cases]}
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "cases.json"
        path.write_text(json.dumps(doc), encoding="utf-8")
        try:
            proc = subprocess.run([str(binary), str(path)], capture_output=True, text=True,
                                  timeout=timeout)
        except subprocess.TimeoutExpired:
            sys.exit(f"error: {binary} did not finish within {timeout} s")
    if proc.returncode != 0:
        sys.stderr.write(proc.stderr)
        sys.exit(f"error: {binary} exited with status {proc.returncode}")
    results, junk = {}, 0
    for line in proc.stdout.splitlines():
        line = line.strip()
        if not line:
            continue
        try:
            obj = json.loads(line)
        except json.JSONDecodeError:
            junk += 1
            continue
        if isinstance(obj, dict) and "name" in obj:
            results[obj["name"]] = obj
        else:
            junk += 1
    if junk:
        print(f"warning: ignored {junk} line(s) of the bench binary's output that were not "
              "result objects", file=sys.stderr)
    return results


def fmt_ms(s):
    return "—" if s is None else f"{1e3 * s:.3g}"


def fmt_e(x):
    return "—" if x is None else f"{x:.2e}"


def fmt_ratio(x):
    return "—" if x is None else f"{x:.3g}"


def ratio(num, den):
    if num is None or den is None or not den:
        return None
    return num / den


def num_or_none(x):
    return x if isinstance(x, (int, float)) and not isinstance(x, bool) and \
        math.isfinite(x) else None


def finite_or_none(x):
    """Deep copy with non-finite floats replaced by None (strict JSON)."""
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: finite_or_none(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [finite_or_none(v) for v in x]
    return x


def display_path(p: Path) -> str:
    try:
        return str(p.resolve().relative_to(REPO))
    except ValueError:
        return p.name


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--bench-binary", type=Path, default=None,
                    help=f"bench executable (default: {DEFAULT_BINARY} under the repo root)")
    ap.add_argument("--quick", action="store_true",
                    help="smoke run: n in {4, 10, 20}, fewer repeats (well under 30 s of scipy)")
    ap.add_argument("--out", type=Path, default=HERE / "last_run.json",
                    help="where to write the JSON dump (default: tests/bench/last_run.json)")
    ap.add_argument("--record", action="store_true",
                    help="also append the run (date, machine, commit, table) to tests/bench/log.jsonl")
    args = ap.parse_args(argv)

    binary = args.bench_binary if args.bench_binary is not None else REPO / DEFAULT_BINARY
    if not binary.is_file() or not os.access(binary, os.X_OK):
        sys.exit(f"error: bench binary {binary} not found or not executable; build it with\n"
                 f"    {BUILD_HINT}\n(or pass --bench-binary PATH)")

    ns = QUICK_NS if args.quick else FULL_NS
    cases, skipped = build_cases(ns)
    for s in skipped:
        print(f"skipped: {s}")

    t0 = time.perf_counter()
    pw = run_binary(binary, cases, timeout=120 if args.quick else 900)
    t_bin = time.perf_counter() - t0

    rows = []
    t0 = time.perf_counter()
    for c in cases:
        sp = run_scipy(c, scipy_repeats(c["n"], args.quick))
        got = pw.get(c["name"])
        if got is None:
            got = {"error": "no result line from the bench binary"}
        p_err = got.get("error")
        p_sec = num_or_none(got.get("seconds")) if not p_err else None
        p_e = p_k = None
        if not p_err:
            if got.get("gain") is None:
                p_err = got["error"] = "the bench binary printed no gain"
            else:
                # Judged here from the printed gain, as scipy's is (never the binary's own figures).
                p_e, p_k = judge(c["a"], c["b"], np.asarray(got["gain"], dtype=float), c["poles"])
                got["judged_max_rel_error"], got["judged_eigenvector_condition"] = p_e, p_k
        rows.append({
            "name": c["name"], "n": c["n"], "m": c["m"], "kind": c["kind"],
            "scipy": sp,
            "polewright": got,
            "speed_ratio_scipy_over_polewright": ratio(sp["seconds"], p_sec),
            "kappa_ratio_polewright_over_scipy": ratio(p_k, sp["eigenvector_condition"]),
            "_p": (p_sec, p_e, p_k, p_err),
        })
    t_scipy = time.perf_counter() - t0

    head = ("| n | m | target | scipy ms | polewright ms | speed ratio (scipy/pw) | "
            "scipy error | polewright error | scipy κ₂(X) | polewright κ₂(X) | "
            "κ ratio (pw/scipy) |")
    lines = [head, "|" + "---|" * 11]
    for r in rows:
        sp = r["scipy"]
        p_sec, p_e, p_k, p_err = r.pop("_p")
        s_ms = fmt_ms(sp["seconds"]) if not sp["error"] else "error"
        p_ms = fmt_ms(p_sec) if not p_err else "error"
        lines.append(
            f"| {r['n']} | {r['m']} | {r['kind']} | {s_ms} | {p_ms} | "
            f"{fmt_ratio(r['speed_ratio_scipy_over_polewright'])} | "
            f"{fmt_e(sp['max_rel_error'])} | {fmt_e(p_e)} | "
            f"{fmt_e(sp['eigenvector_condition'])} | {fmt_e(p_k)} | "
            f"{fmt_ratio(r['kappa_ratio_polewright_over_scipy'])} |")
    errors = [f"{r['name']}: scipy: {r['scipy']['error']}" for r in rows if r["scipy"]["error"]]
    errors += [f"{r['name']}: polewright: {r['polewright'].get('error')}"
               for r in rows if r["polewright"].get("error")]
    table = "\n".join(lines)
    print(table)
    for e in errors:
        print(f"error: {e}")
    print(f"\nscipy {scipy.__version__} / numpy {np.__version__}, method={PLACE_METHOD}, "
          f"maxiter={PLACE_MAXITER}, rtol={PLACE_RTOL}; bench binary wall time {t_bin:.1f} s, "
          f"scipy wall time {t_scipy:.1f} s")

    dump = {
        "generator": "tests/bench/compare_scipy.py",
        "numpy": np.__version__, "scipy": scipy.__version__,
        "place_poles": {"method": PLACE_METHOD, "maxiter": PLACE_MAXITER, "rtol": PLACE_RTOL},
        "quick": args.quick, "bench_binary": display_path(binary),
        "skipped": skipped, "errors": errors,
        "wall_seconds": {"bench_binary": t_bin, "scipy": t_scipy},
        "table_markdown": table,
        "rows": rows,
    }
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(finite_or_none(dump), indent=1, allow_nan=False) + "\n", encoding="utf-8")
    print(f"wrote {display_path(args.out)}")
    if args.record:
        import datetime
        import platform
        rev = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=REPO, capture_output=True, text=True).stdout.strip()
        dirty = subprocess.run(["git", "status", "--porcelain", "--untracked-files=no"], cwd=REPO, capture_output=True, text=True).stdout.strip()
        entry = {"date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"), "benchmark": "placement_vs_scipy",
                 "commit": rev + ("+changes" if dirty else ""), "machine": {"cpu": platform.processor() or platform.machine(), "cores": os.cpu_count(), "os": f"{platform.system()} {platform.release()}"},
                 "quick": args.quick, "scipy": scipy.__version__, "numpy": np.__version__, "table_markdown": table}
        with open(HERE / "log.jsonl", "a", encoding="utf-8") as f:
            f.write(json.dumps(entry) + "\n")
        print("appended to tests/bench/log.jsonl")
    if not pw:
        print(f"error: the bench binary {display_path(binary)} printed no result lines "
              "(is it up to date? rebuild with: " + BUILD_HINT + ")", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
