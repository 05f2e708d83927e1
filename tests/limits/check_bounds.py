#!/usr/bin/env python3
"""Bounded input and output of the `polewright` command line (not an oracle: a limits check).

Each case runs the release binary as a separate process under GNU time, which reads the
process's peak resident memory from the operating system (wait4's rusage, in KiB):

1. a 9 MB design file is refused before it is read (exit 2, the limit named; its size comes
   from the file system);
2. 9 MB on standard input is refused after one byte more than the limit (exit 2);
3. the longest digital loop the design rules allow (50,000 samples) of a 4-state plant with an
   observer, integral action and a load step completes within the stated memory bound, and
   one sample more is refused with the limit named.

Bounds (stated in the README): 8 MiB for a refused file, 16 MiB for refused standard input
(the 8 MiB read plus the program), 50 MiB for the longest allowed loop.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
BINARY = REPO / "target" / "release" / "polewright"
TIME = "/usr/bin/time" if Path("/usr/bin/time").exists() else None
MIB = 1024


def run(args, stdin_bytes=None):
    """Peak resident memory (KiB), exit code and standard error of one process.

    GNU time starts it and reports its peak resident set (wait4's rusage of that child). Time
    itself is small, so the figure is the program's own: a child forked straight from this
    interpreter would count the interpreter's memory, which the kernel carries over a fork."""
    with tempfile.TemporaryDirectory() as tmp:
        report = Path(tmp) / "rss"
        proc = subprocess.run([TIME, "-f", "%M", "-o", str(report), str(BINARY), *args], input=stdin_bytes or b"", capture_output=True, timeout=300)
        return int(report.read_text().strip().splitlines()[-1]), proc.returncode, proc.stderr.decode(errors="replace")


def digital_loop(samples: int) -> dict:
    doc = json.loads((REPO / "examples" / "belt-axis-digital.json").read_text())
    doc["simulation"]["duration"] = samples * doc["implementation"]["sample_time"]
    return doc


def main() -> int:
    if TIME is None:
        print("GNU time (/usr/bin/time, Debian package 'time') is needed: .ci/setup installs it", file=sys.stderr)
        return 2
    if not BINARY.exists():
        print(f"{BINARY} missing: cargo build --release -p polewright --bin polewright", file=sys.stderr)
        return 2
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        big = Path(tmp) / "big.json"
        big.write_bytes(b" " * 9_000_000)
        rss, code, err = run(["design", str(big)])
        print(f"9 MB file: exit {code}, peak {rss / MIB:.1f} MiB: {err.strip()[:120]}")
        if code != 2 or "8388608 bytes" not in err or rss > 8 * MIB:
            failures.append("the 9 MB file was not refused before reading within 8 MiB")
        rss, code, err = run(["design", "-"], b" " * 9_000_000)
        print(f"9 MB on standard input: exit {code}, peak {rss / MIB:.1f} MiB: {err.strip()[:120]}")
        if code != 2 or "8388608 bytes" not in err or rss > 16 * MIB:
            failures.append("9 MB on standard input was not refused within 16 MiB")
        for samples, want in [(50_000, 0), (50_001, 2)]:
            path = Path(tmp) / f"loop{samples}.json"
            path.write_text(json.dumps(digital_loop(samples)))
            rss, code, err = run(["design", str(path)])
            print(f"digital loop of {samples} samples: exit {code}, peak {rss / MIB:.1f} MiB {err.strip()[:140]}")
            if code != want:
                failures.append(f"{samples} samples: exit {code}, expected {want}: {err.strip()[:200]}")
            if want == 0 and rss > 50 * MIB:
                failures.append(f"{samples} samples took {rss / MIB:.1f} MiB (bound 50 MiB)")
            if want == 2 and "50000" not in err.replace(",", "").replace(" ", ""):
                failures.append(f"the refusal of {samples} samples does not name the limit: {err.strip()[:200]}")
    for f in failures:
        print("FAIL", f)
    print(f"bounds: 4 cases, {len(failures)} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
