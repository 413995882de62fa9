"""Wall time of `mechfit demo` on this machine, with a cold and a warm compile cache.

Targets (issue: ranking and the demo): <= 120 s with a warm cache (stretch 60 s),
<= 180 s cold. The demo is run as a user runs it, in a subprocess; the cold run points
numba at an empty cache folder (NUMBA_CACHE_DIR). Prints target and measured time side
by side with their ratio, and the median of the warm repeats.

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


def run_demo(extra: list[str], cache: str | None) -> float:
    env = dict(os.environ)
    if cache is not None:
        env["NUMBA_CACHE_DIR"] = cache
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo"
        start = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "mechfit", "demo", "--out", str(out),
                               *extra], capture_output=True, text=True, env=env)
        seconds = time.perf_counter() - start
        if proc.returncode != 0:
            sys.exit(f"mechfit demo failed ({proc.returncode}):\n{proc.stderr[-2000:]}")
        first = next((line for line in proc.stdout.splitlines() if line.startswith("1 ")), "")
        print(f"    first: {first.strip()[:90]}")
    return seconds


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=1, help="warm repeats (median)")
    parser.add_argument("extra", nargs="*", help="options passed to mechfit demo")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as cache:
        print("cold compile cache:")
        cold = run_demo(args.extra, cache)
        warm = []
        for i in range(args.repeats):
            print(f"warm compile cache, repeat {i + 1}:")
            warm.append(run_demo(args.extra, cache))
    w = statistics.median(warm)
    print(f"\n{'':24}{'target s':>10}{'measured s':>12}{'ratio':>8}")
    print(f"{'demo, cold cache':24}{180:>10}{cold:>12.1f}{cold / 180:>8.2f}")
    print(f"{'demo, warm (median)':24}{120:>10}{w:>12.1f}{w / 120:>8.2f}")
    print(f"{'demo, warm, stretch':24}{60:>10}{w:>12.1f}{w / 60:>8.2f}")
    print(f"(load average now: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
