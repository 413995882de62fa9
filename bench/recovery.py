"""Recovery: does the ranking put the true demo candidate first?

Each demo candidate in turn is the truth: synthetic studies are simulated from it with
the demo's run design (scripts/make_demo_study.py, the same runs, sampling times and
noise), one per seed; all candidates are ranked on each; the script prints how often the
truth comes first, how often it has the highest elpd_loo (the order before the
one-standard-error rule, for comparison), how often it is in the leading set (best or not
distinguishable), and the coverage of its parameters' 90% intervals. Targets: truth first
in >= 90% of studies; coverage between 85% and 95%.

The true parameters of the candidates other than the demo's truth are set below
(invented values that give curves of the demo's time scale).

    python bench/recovery.py [--seeds 10] [--first-seed 1] [--truths saturation,direct]
                             [--max-steps 3000]
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import mechfit
from mechfit.infer.summaries import posterior_values
from mechfit.pipeline import FitSettings, RankSettings, rank_study
from mechfit.study import load_study

ROOT = Path(__file__).resolve().parents[1]
spec = importlib.util.spec_from_file_location("make_demo", ROOT / "scripts" / "make_demo_study.py")
make_demo = importlib.util.module_from_spec(spec)
spec.loader.exec_module(make_demo)

#: invented true parameters per candidate: k at 30 degC (mol, L, s) and Ea (J/mol)
TRUTHS = {
    "saturation": make_demo.TRUE_PARAMETERS,
    "direct": {"k1": (30.0, 45e3)},
    "background": {"k1": (25.0, 45e3), "k0": (0.004, 60e3)},
    "deactivation": {"k1": (40.0, 45e3), "kd": (2e-4, 70e3)},
    "reservoir": {"k1": (40.0, 45e3), "k3": (20.0, 30e3), "k_3": (0.5, 50e3)},
}


def study_folder(truth: str, seed: int, where: Path) -> Path:
    mech = mechfit.load_mechanism(ROOT / "mechanisms" / "demo" / f"{truth}.mech")
    folder = where / f"{truth}-{seed}"
    folder.mkdir()
    for name, text in make_demo.make_tables(mech, TRUTHS[truth], seed).items():
        (folder / name).write_text(text)
    (folder / "study.toml").write_text(make_demo.study_text(seed, truth))
    return folder


def coverage(outcome, truth: str, level: float = 0.90) -> tuple[int, int]:
    values = posterior_values(outcome.idata)
    inside = total = 0
    for const, (k_ref, ea) in TRUTHS[truth].items():
        for name, true in ((const, k_ref), (f"Ea_{const}", ea)):
            if name not in values:
                continue
            draws = np.asarray(values[name]).ravel()
            lo, hi = np.quantile(draws, [(1 - level) / 2, (1 + level) / 2])
            inside += int(lo <= true <= hi)
            total += 1
    return inside, total


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=10)
    parser.add_argument("--first-seed", type=int, default=1,
                        help="first seed (to add studies to an earlier run)")
    parser.add_argument("--truths", default=",".join(TRUTHS))
    parser.add_argument("--max-steps", type=int, default=3000)
    parser.add_argument("--starts", type=int, default=8)
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args(argv)
    candidates = [mechfit.load_mechanism(p) for p in sorted((ROOT / "mechanisms" / "demo")
                                                             .glob("*.mech"))]
    settings = RankSettings(fit=FitSettings(starts=args.starts, max_steps=args.max_steps),
                            workers=args.workers, exact_refits=False)
    rows = []
    start = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        for truth in args.truths.split(","):
            first = highest = leading = inside = total = 0
            for seed in range(args.first_seed, args.first_seed + args.seeds):
                study = load_study(study_folder(truth, seed, Path(tmp)) / "study.toml")
                result = rank_study(study, candidates, settings)
                best = result.ranking.candidates[0]
                first += best.name == truth
                top = max(result.ranking.candidates, key=lambda c: c.loo.elpd)
                highest += top.name == truth
                leading += any(c.name == truth for c in result.ranking.leading_set)
                i, n = coverage(result.outcome(truth, "full"), truth)
                inside, total = inside + i, total + n
                print(f"  truth {truth}, seed {seed}: first = {best.name}, highest elpd_loo = "
                      f"{top.name}", flush=True)
            rows.append((truth, first, highest, leading, args.seeds, inside, total))
    print(f"\n{'truth':14}{'first':>8}{'highest':>9}{'leading':>9}{'studies':>9}"
          f"{'90% coverage':>14}")
    for truth, first, highest, leading, n, inside, total in rows:
        print(f"{truth:14}{first:>8}{highest:>9}{leading:>9}{n:>9}"
              f"{inside / max(total, 1):>14.2f}")
    studies = max(sum(r[4] for r in rows), 1)
    firsts = sum(r[1] for r in rows) / studies
    highests = sum(r[2] for r in rows) / studies
    cover = sum(r[5] for r in rows) / max(sum(r[6] for r in rows), 1)
    print(f"\n{'':24}{'target':>12}{'measured':>10}")
    print(f"{'truth first':24}{'>= 0.90':>12}{firsts:>10.2f}")
    print(f"{'(highest elpd_loo)':24}{'':>12}{highests:>10.2f}")
    print(f"{'90% interval coverage':24}{'0.85-0.95':>12}{cover:>10.2f}")
    print(f"({time.perf_counter() - start:.0f} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
