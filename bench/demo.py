"""Wall time of `mechfit demo` on this machine: a first run and later runs.

Targets (issue: ranking and the demo): <= 120 s (stretch 60 s), and <= 180 s for the
first run after an install. The demo is run as a user runs it, in a subprocess. Nothing
is compiled at run time (the simulator's C code is compiled when mechfit is installed),
so the first run differs from later ones only by what the operating system and Python
cache (files read from disk, byte-code written beside the sources of a fresh install).
Prints target and measured time side by side with their ratio, and the median of the
later runs.

    python bench/demo.py [--repeats 1] [-- extra demo options]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def run_demo(extra: list[str]) -> float:
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo"
        start = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "mechfit", "demo", "--out", str(out),
                               *extra], capture_output=True, text=True)
        seconds = time.perf_counter() - start
        if proc.returncode != 0:
            sys.exit(f"mechfit demo failed ({proc.returncode}):\n{proc.stderr[-2000:]}")
        first = next((line for line in proc.stdout.splitlines() if line.startswith("1 ")), "")
        print(f"    first: {first.strip()[:90]}")
    return seconds


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=1, help="later runs (median)")
    parser.add_argument("extra", nargs="*", help="options passed to mechfit demo")
    args = parser.parse_args(argv)
    print("first run:")
    first = run_demo(args.extra)
    later = []
    for i in range(args.repeats):
        print(f"later run {i + 1}:")
        later.append(run_demo(args.extra))
    w = statistics.median(later) if later else first
    print(f"\n{'':24}{'target s':>10}{'measured s':>12}{'ratio':>8}")
    print(f"{'demo, first run':24}{180:>10}{first:>12.1f}{first / 180:>8.2f}")
    print(f"{'demo, later (median)':24}{120:>10}{w:>12.1f}{w / 120:>8.2f}")
    print(f"{'demo, later, stretch':24}{60:>10}{w:>12.1f}{w / 60:>8.2f}")
    print(f"(load average now: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
