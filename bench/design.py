"""Does the proposed run widen the gap between the truth and the runner-up? (demo study)

THE DEMO DATA ARE INVENTED (see mechfit/demo). Steps:

1. rank the demo (or take a results folder of it with ``--results``);
2. ``mechfit design``'s machinery proposes one run for the leading three candidates over
   the catalyst, enone, thiol and temperature ranges below (timed: target <= 60 s);
3. the run is simulated from the true mechanism and parameters (``mechfit.demo.truth()``)
   the way the demo data were made: the mass-action ODEs from the mechanism's order
   matrices, ``scipy.integrate.solve_ivp`` (Radau, rtol 1e-10), Gaussian noise of the true
   standard deviations; mechfit's own simulator is not used;
4. the run is added to a copy of the study folder and the same candidates are ranked again;
5. the gap (elpd_loo and AICc) between the truth and the best other candidate is printed
   before and after, with a baseline: a run at the study's typical conditions
   (the median design), ranked the same way.

Usage::

    python bench/design.py --out /tmp/design-bench [--results DEMO_RESULTS] [--max-steps 600]
"""

from __future__ import annotations

import argparse
import re
import shutil
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

from mechfit.demo import candidate_paths, study_path, truth
from mechfit.design.predict import load_candidates
from mechfit.design.proposal import DesignProblem, DesignSettings, propose
from mechfit.design.space import DesignSpace
from mechfit.mechanism import load_mechanism, order_matrices
from mechfit.pipeline.evaluate import FitSettings
from mechfit.pipeline.ranking_run import RankSettings, rank_study
from mechfit.study import arrhenius, load_study

VARY = ["Cat=0.5:6", "Sub=10:200", "Nu=20:400", "temperature=15:45"]


def true_constants(temperature_k: float) -> dict[str, float]:
    t = truth()
    return {name: float(arrhenius(v["k_ref"], v["Ea"], temperature_k,
                                  t["reference_temperature_K"]))
            for name, v in t["rate_constants"].items()}


def simulate_truth(initial_m: dict[str, float], temperature_k: float, times_s: np.ndarray):
    """Concentrations (mol/L) of the true mechanism, species x times (Radau, rtol 1e-10)."""
    mech = load_mechanism(next(p for p in candidate_paths() if p.stem == truth()["mechanism"]))
    reactants, products = order_matrices(mech)
    stoich = products - reactants
    constants = true_constants(temperature_k)
    k = np.array([r.constant.factor * constants[r.constant.name] for r in mech.reactions()])

    def rhs(_t, c):
        return stoich @ (k * np.prod(np.maximum(c, 0.0)[:, None] ** reactants, axis=0))

    c0 = np.array([initial_m.get(s, 0.0) for s in mech.species])
    sol = solve_ivp(rhs, (0.0, float(times_s[-1])), c0, method="Radau", t_eval=times_s,
                    rtol=1e-10, atol=1e-14)
    if not sol.success:
        raise RuntimeError(sol.message)
    return mech.species, sol.y


def add_run(study_folder: Path, out: Path, plan, seed: int) -> Path:
    """Copy the demo study into ``out`` and add the planned run, simulated from the truth."""
    shutil.copytree(study_folder, out)
    for p in out.glob("*.mech"):
        p.unlink()
    t = truth()
    obs = t["observables"]
    times = np.asarray(plan.times)
    species, y = simulate_truth(dict(plan.initial), plan.temperature, times)
    c = dict(zip(species, y, strict=True))
    rng = np.random.default_rng(seed)
    columns = {}
    if "Prod" in plan.observables:
        columns["Prod / mM"] = 1e3 * (c["Prod"] + rng.normal(0.0, obs["sigma_Prod"],
                                                           times.size))
    if "A405" in plan.observables:
        a = obs["eps_Sub"] * c["Sub"] + obs["eps_Prod"] * c["Prod"] + obs["base"]
        columns["A405"] = a + rng.normal(0.0, obs["sigma_A405"], times.size)
    lines = ["# INVENTED DATA: simulated from the demo's true mechanism by bench/design.py",
             "time / min, " + ", ".join(columns)]
    for i, tt in enumerate(times):
        lines.append(", ".join([f"{tt / 60.0:.6g}"] + [f"{v[i]:.6g}"
                                                       for v in columns.values()]))
    (out / "r12.csv").write_text("\n".join(lines) + "\n")
    initial = ", ".join(f"{s} = {v * 1e3:.6g}" for s, v in plan.initial.items())
    with open(out / "study.toml", "a", encoding="utf-8") as handle:
        handle.write(f'\n[[run]]\nname = "r12"\ntemperature = {plan.temperature - 273.15:.6g}'
                     f"\ninitial = {{ {initial} }}\ntable = \"r12.csv\"\n")
    return out / "study.toml"


def gap(summary: dict, true_name: str) -> tuple[str, float, float]:
    """(runner-up, elpd_loo(truth) - elpd_loo(runner-up), AICc(runner-up) - AICc(truth))."""
    by_name = {c["name"]: c for c in summary["candidates"]}
    truth_c = by_name[true_name]
    others = [c for c in summary["candidates"] if c["name"] != true_name and
              c.get("elpd_loo") is not None]
    runner = max(others, key=lambda c: c["elpd_loo"])
    return (runner["name"], truth_c["elpd_loo"] - runner["elpd_loo"],
            runner["aicc"] - truth_c["aicc"])


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", required=True, help="new working folder")
    parser.add_argument("--results", help="existing demo results folder (else rank first)")
    parser.add_argument("--max-steps", type=int, default=600)
    parser.add_argument("--starts", type=int, default=4)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--no-baseline", action="store_true",
                        help="skip the ranking with a run at the typical conditions")
    args = parser.parse_args(argv)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=False)
    settings = RankSettings(fit=FitSettings(starts=args.starts, max_steps=args.max_steps),
                            workers=args.workers, exact_refits=False)
    true_name = truth()["mechanism"]
    study = load_study(study_path())
    if args.results:
        results = Path(args.results)
    else:
        results = out / "before"
        start = time.perf_counter()
        mechanisms = [load_mechanism(p) for p in candidate_paths()]
        rank_study(study, mechanisms, settings).write(results)
        print(f"ranked the demo in {time.perf_counter() - start:.0f} s")
    import json
    before = json.loads((results / "ranking.json").read_text())
    candidates = load_candidates(results, count=3, draws=100)
    names = [c.name for c in candidates]
    print(f"before: runner-up {gap(before, true_name)[0]}, d elpd_loo "
          f"{gap(before, true_name)[1]:.2f}, d AICc {gap(before, true_name)[2]:.2f}")
    print("design candidates:", ", ".join(c.key for c in candidates),
          "weights", ", ".join(f"{c.weight:.2f}" for c in candidates))
    problem = DesignProblem(study, candidates, DesignSpace.parse(VARY))
    start = time.perf_counter()
    result = propose(problem, DesignSettings())
    seconds = time.perf_counter() - start
    proposal = result.proposals[0]
    print(f"design time for {len(candidates)} candidates: {seconds:.1f} s (target <= 60 s)")
    print("proposed run:", ", ".join(f"{k} = {v:.3g}" for k, v in proposal.values.items()),
          f"(Box-Hill {proposal.score:.4g}; at the typical conditions "
          f"{problem.discrimination([{}]):.4g})")
    mechanisms = [load_mechanism(p) for p in candidate_paths()
                  if p.stem in names or p.stem == true_name]
    rows = [("before (11 runs)", gap(before, true_name))]
    plans = [("+ proposed run", problem.planned_run(proposal.values))]
    if not args.no_baseline:
        plans.append(("+ typical run (baseline)", problem.planned_run({})))
    for i, (label, plan) in enumerate(plans):
        folder = re.sub(r"[^a-z]+", "-", label.strip("+ ").lower()).strip("-")
        path = add_run(study_path().parent, out / f"study-{folder}", plan, seed=12 + i)
        start = time.perf_counter()
        ranking = rank_study(load_study(path), mechanisms, settings)
        ranking.write(out / f"results-{folder}")
        rows.append((label, gap(ranking.summary(), true_name)))
        print(f"ranked {label} in {time.perf_counter() - start:.0f} s: runner-up "
              f"{rows[-1][1][0]}, d elpd_loo {rows[-1][1][1]:.2f}, d AICc {rows[-1][1][2]:.2f}",
              flush=True)
    print(f"\n{'study':<26} {'runner-up':<14} {'d elpd_loo':>11} {'d AICc':>9}")
    for label, (runner, d_elpd, d_aicc) in rows:
        print(f"{label:<26} {runner:<14} {d_elpd:11.2f} {d_aicc:9.2f}")
    print("(gap = truth better than the runner-up; larger is a clearer verdict)")
    if len(rows) == 3:
        base = rows[0][1]
        gains = [(r[1][1] - base[1], r[1][2] - base[2]) for r in rows[1:]]
        for what, i in (("d elpd_loo", 0), ("d AICc", 1)):
            ratio = gains[0][i] / gains[1][i] if gains[1][i] else float("nan")
            print(f"widening of {what}: proposed run {gains[0][i]:.2f}, typical run "
                  f"{gains[1][i]:.2f}, ratio {ratio:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
