#!/usr/bin/env python3
"""Whole `polewright design` processes against scipy's place_poles, and growth with n.

Usage:
    python3 tests/bench/whole_process.py [--binary PATH] [--sizes 10,20,...] [--record]

For each size the script builds the seeded plants of compare_scipy.py (A = R/sqrt(n), B
standard normal, the "realistic" targets: the open-loop spectrum mirrored into the left
half-plane and shifted by 0.5), writes one design document per plant and times the whole
process `polewright design FILE` (start, parse, analyse, place, simulate the free response,
write the result JSON) as the operating system sees it: wall time and peak resident memory
(getrusage of the child). scipy.signal.place_poles (method "YT") is timed on the same plants
in this run up to n = 100 (beyond, it takes minutes). Both programs' pole errors and
eigenvector conditions are computed here by numpy from the gains (not taken from either
program's report): eigenvalues of A - B K matched one-to-one to the request, and
kappa_2 of the eigenvector matrix with unit columns.

--record appends one line to tests/bench/log.jsonl (date, machine, commit, figures); the
README quotes only figures the log holds. This is a benchmark, not a test: it asserts
nothing about speed.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import datetime  # noqa: E402
import json  # noqa: E402
import platform  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.optimize  # noqa: E402
import scipy.signal  # noqa: E402

HERE = Path(__file__).resolve().parent
REPO = HERE.parent.parent

# (family, n, m): random plants against scipy, then the growth table on modal plants.
DEFAULT_SIZES = [("random", 10, 3), ("random", 20, 3), ("random", 40, 4), ("random", 50, 4), ("random", 100, 4),
                 ("modal", 10, 4), ("modal", 20, 4), ("modal", 50, 4), ("modal", 100, 4), ("modal", 200, 4), ("modal", 300, 4), ("modal", 500, 4)]
SCIPY_LIMIT = 100


def plant(n: int, m: int, seed: int):
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((n, n)) / np.sqrt(n)
    b = rng.standard_normal((n, m))
    lam = np.linalg.eigvals(a)
    target = -np.abs(lam.real) - 0.5 + 1j * lam.imag
    # Exact conjugate pairs (eigvals gives them up to rounding).
    poles = []
    for z in target:
        if z.imag > 1e-12:
            poles.append(complex(z.real, z.imag))
    reals = [float(z.real) for z in target if abs(z.imag) <= 1e-12]
    full = reals + [p for z in poles for p in (z, z.conjugate())]
    return a, b, reals, poles, np.array(full)


def modal_plant(n: int, m: int):
    """A flexible structure in modal form (invented, illustrative): n/2 modes with damping 0.02
    and frequencies 1, 1.5, 2, ... rad/s, m actuators with mode-shape values sin(0.7 (i+1)(j+1));
    the targets keep each frequency and raise the damping to 0.05 (a well-conditioned request)."""
    k = n // 2
    a = np.zeros((n, n))
    b = np.zeros((n, m))
    pairs = []
    for i in range(k):
        w = 1 + 0.5 * i
        a[2 * i, 2 * i + 1] = 1
        a[2 * i + 1, 2 * i] = -w * w
        a[2 * i + 1, 2 * i + 1] = -2 * 0.02 * w
        b[2 * i + 1] = [np.sin(0.7 * (i + 1) * (j + 1)) for j in range(m)]
        pairs.append(complex(-0.05 * w, w * np.sqrt(1 - 0.05**2)))
    full = np.array([p for z in pairs for p in (z, z.conjugate())])
    return a, b, [], pairs, full


def document(a, b, reals, pairs) -> dict:
    poles = [float(r) for r in reals] + [f"{float(z.real)!r}±{float(z.imag)!r}j" for z in pairs]
    return {"format": "polewright.design", "version": 1, "comment": "benchmark plant (seeded, illustrative)",
            "plant": {"a": a.tolist(), "b": b.tolist()}, "feedback": {"poles": poles}}


def judged(a, b, k, wanted):
    """Pole error (relative, matched one-to-one) and kappa_2 of unit-column eigenvectors, by numpy."""
    lam, x = np.linalg.eig(a - b @ k)
    cost = np.abs(lam[:, None] - wanted[None, :]) / np.maximum(1.0, np.abs(wanted[None, :]))
    rows, cols = scipy.optimize.linear_sum_assignment(cost)
    err = float(cost[rows, cols].max())
    xn = x / np.linalg.norm(x, axis=0)
    s = np.linalg.svd(xn, compute_uv=False)
    return err, float(s[0] / s[-1]) if s[-1] > 0 else float("inf")


def time_polewright(binary: Path, path: Path, repeats: int, timeout: float):
    """Median wall time of `repeats` whole processes started from here, and the peak resident
    memory (KiB) of one more run under GNU time (a child forked from this interpreter would
    count the interpreter's own memory, which the kernel carries over a fork)."""
    walls, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        proc = subprocess.run([str(binary), "design", str(path)], capture_output=True, timeout=timeout)
        walls.append(time.perf_counter() - t0)
        out = (proc.returncode, proc.stdout, proc.stderr)
    peak = float("nan")
    if Path("/usr/bin/time").exists():
        with tempfile.TemporaryDirectory() as tmp:
            report = Path(tmp) / "rss"
            subprocess.run(["/usr/bin/time", "-f", "%M", "-o", str(report), str(binary), "design", str(path)], capture_output=True, timeout=timeout)
            peak = float(report.read_text().strip().splitlines()[-1])
    return statistics.median(walls), peak, out


def time_scipy(a, b, full, repeats: int):
    times, res = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = scipy.signal.place_poles(a, b, full, method="YT", maxiter=30)
        times.append(time.perf_counter() - t0)
    return statistics.median(times), res.gain_matrix


def machine() -> dict:
    cpu = "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return {"cpu": cpu, "cores": os.cpu_count(), "memory_gib": round(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30), "os": f"{platform.system()} {platform.release()}"}


def commit() -> str:
    try:
        rev = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=REPO, capture_output=True, text=True).stdout.strip()
        dirty = subprocess.run(["git", "status", "--porcelain", "--untracked-files=no"], cwd=REPO, capture_output=True, text=True).stdout.strip()
        return rev + ("+changes" if dirty else "")
    except OSError:
        return "unknown"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--binary", type=Path, default=REPO / "target" / "release" / "polewright")
    ap.add_argument("--sizes", default=None, help="family:n:m triples, e.g. random:20:3,modal:200:4")
    ap.add_argument("--plants", type=int, default=3, help="seeded plants per size (default 3)")
    ap.add_argument("--record", action="store_true", help="append the figures to tests/bench/log.jsonl")
    args = ap.parse_args(argv)
    sizes = DEFAULT_SIZES if not args.sizes else [(t.split(":")[0], int(t.split(":")[1]), int(t.split(":")[2])) for t in args.sizes.split(",")]
    if not args.binary.exists():
        print(f"{args.binary} not found: cargo build --release -p polewright --bin polewright", file=sys.stderr)
        return 2
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for family, n, m in sizes:
            for p in range(args.plants if family == "random" else 1):
                seed = 1000 * n + 10 * m + p
                a, b, reals, pairs, full = plant(n, m, seed) if family == "random" else modal_plant(n, m)
                path = Path(tmp) / f"{family}_{n}_{m}_{p}.json"
                path.write_text(json.dumps(document(a, b, reals, pairs)))
                repeats = 7 if n <= 100 else 1
                wall, peak_kib, (rc, body, err) = time_polewright(args.binary, path, repeats, timeout=600)
                row = {"family": family, "n": n, "m": m, "seed": seed if family == "random" else None, "process_ms": wall * 1e3, "peak_rss_mib": peak_kib / 1024, "exit": rc}
                if rc == 0:
                    result = json.loads(body)
                    k = np.array(result["feedback"]["gain"], dtype=float)
                    row["sweeps"] = result["feedback"].get("iterations")
                    row["error"], row["kappa"] = judged(a, b, k, full)
                else:
                    row["message"] = err.decode(errors="replace").strip()[:300]
                if family == "random" and n <= SCIPY_LIMIT:
                    s_time, s_gain = time_scipy(a, b, full, 3 if n <= 40 else 1)
                    row["scipy_ms"] = s_time * 1e3
                    row["scipy_error"], row["scipy_kappa"] = judged(a, b, s_gain, full)
                    row["speed_ratio"] = row["scipy_ms"] / row["process_ms"]
                rows.append(row)
                ratio = f"  scipy {row['scipy_ms']:9.1f} ms  ratio {row['speed_ratio']:6.1f}" if "scipy_ms" in row else ""
                judged_text = f"  sweeps {row.get('sweeps')}  error {row['error']:.2e} (scipy {row.get('scipy_error', float('nan')):.2e})  kappa {row['kappa']:.3g} (scipy {row.get('scipy_kappa', float('nan')):.3g})" if rc == 0 else f"  exit {rc}: {row.get('message', '')}"
                print(f"{family:6s} n {n:4d} m {m}  plant {p}: process {wall * 1e3:9.1f} ms  peak {peak_kib / 1024:7.1f} MiB{ratio}{judged_text}", flush=True)
    if args.record:
        entry = {"date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"), "benchmark": "whole_process",
                 "commit": commit(), "machine": machine(), "scipy": scipy.__version__, "numpy": np.__version__, "rows": rows}
        with open(HERE / "log.jsonl", "a", encoding="utf-8") as f:
            f.write(json.dumps(entry) + "\n")
        print("appended to tests/bench/log.jsonl")
    return 0


if __name__ == "__main__":
    sys.exit(main())
