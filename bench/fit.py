"""Benchmark: maximum likelihood plus posterior on the demo study, mechfit against a baseline.

Workload: the demo study shipped in ``mechfit/demo`` (INVENTED data: 11 runs, 254
points) and its true mechanism ``saturation`` (variant ``full``, Arrhenius laws: 8
model parameters plus one noise level).

* mechfit: the study model of :mod:`mechfit.infer.study_model` -- every parameter set x
  run solved in one batched ``Simulator.solve`` call, Jacobian from the simulator's
  sensitivities (and, as a second row, from batched central differences).
* baseline (what a chemist writes by hand, in the style of ``bench/simulate.py``): for
  every parameter set and every run, ``scipy.integrate.solve_ivp(method="LSODA")`` with
  a sympy-lambdified right-hand side and Jacobian in Python loops; the observables,
  temperature laws, likelihood and the fitting procedure are the same.

Both drive the same procedure: multi-start maximum likelihood (``--starts`` design
points, ``--local`` local searches) and then emcee for a fixed budget of ``--steps``
steps (the default walkers, 2q + 2). Printed side by side: wall times (median of
``--repeats`` for the likelihood timing), likelihood evaluations (parameter sets) per
second in batches of 36, and the ratio; the two optima must agree. Then mechfit's whole
procedure as ``mechfit fit`` runs it (to convergence), with the time the baseline would
need for as many evaluations at its measured rate (projected, and labelled so: running
it takes hours).

Run: ``/work/venv/bin/python bench/fit.py [--starts 4] [--local 1] [--steps 30]`` (the
baseline side dominates: tens of minutes on a shared 2-core machine)
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import numpy as np
import sympy
from scipy.integrate import solve_ivp

from mechfit import load_mechanism
from mechfit.derive import derive_variant
from mechfit.infer import (
    Likelihood,
    ModelFunction,
    SamplingSettings,
    maximum_likelihood,
    sample_posterior,
)
from mechfit.infer.fit import fit_study
from mechfit.infer.study_model import study_problem
from mechfit.mechanism import symbols
from mechfit.study import load_study

DEMO = Path(__file__).resolve().parents[1] / "mechfit" / "demo"
RTOL = 1e-6   # the study model's default (mechfit.infer.study_model.study_problem)
ATOL = 1e-13  # 1e-4 rtol x the demo's largest initial concentration (~1 mM)


def baseline_model(study, kinetic_model, problem) -> ModelFunction:
    """The hand-written likelihood's model: solve_ivp(LSODA) loops over sets and runs."""
    mech = kinetic_model.mechanism
    ys = [symbols.concentration(s) for s in kinetic_model.state]
    ks = [symbols.rate_constant(p) for p in kinetic_model.parameters]
    rhs = sympy.lambdify((ys, ks), list(kinetic_model.rhs), "numpy")
    jac = sympy.lambdify((ys, ks), kinetic_model.jacobian(), "numpy")
    species = mech.species
    names = problem.model.parameter_names
    col = {n: i for i, n in enumerate(names)}
    laws = problem.laws
    obs = problem.observations
    functions = {}
    from mechfit.infer.study_model import _observable_function

    for o in study.observables.values():
        if o.name in obs.observable_names:
            functions[o.name] = _observable_function(o, species)[:2]

    def predict(x):
        out = np.empty((x.shape[0], obs.n))
        for i, row in enumerate(x):
            start = 0
            for run in study.runs:
                k = [float(laws[p].rate_constant({q: row[col[q]] for q in
                                                  laws[p].parameter_names}, run.temperature))
                     for p in kinetic_model.parameters]
                y0 = [run.initial.get(s, 0.0) for s in kinetic_model.state]
                sol = solve_ivp(lambda _t, y, k=k: rhs(y, k), (0.0, run.times[-1]), y0,
                                method="LSODA", t_eval=run.times, rtol=RTOL, atol=ATOL,
                                jac=lambda _t, y, k=k: jac(y, k))
                if not sol.success:
                    out[i] = np.nan
                    break
                conc = sol.y.T
                for name, series in run.series.items():
                    function, args = functions[name]
                    vals = [conc[series.index, kinetic_model.state.index(species[a])]
                            if kind == "concentration" else
                            run.initial.get(species[a], 0.0) if kind == "initial"
                            else row[col[a]] for kind, a in args]
                    n = len(series)
                    out[i, start:start + n] = np.broadcast_to(function(*vals), (n,))
                    start += n
        return out

    return ModelFunction(names, predict)


def timed(function, repeats):
    times = []
    value = None
    for _ in range(repeats):
        began = time.perf_counter()
        value = function()
        times.append(time.perf_counter() - began)
    return statistics.median(times), value


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--starts", type=int, default=4)
    ap.add_argument("--local", type=int, default=1)
    ap.add_argument("--steps", type=int, default=30)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--budget", type=int, default=10000,
                    help="sampler budget of mechfit's run to convergence")
    args = ap.parse_args()
    study = load_study(DEMO / "study.toml")
    model = derive_variant(load_mechanism(DEMO / "saturation.mech"), "full")
    problem = study_problem(study, model)
    sides = {
        "mechfit": problem.model,
        "mechfit-fd": ModelFunction(problem.model.parameter_names, problem.model.predict),
        "baseline": baseline_model(study, model, problem),
    }
    rows = {}
    truth = {"k1": 2.0, "Ea_k1": 35e3, "k_1": 0.08, "Ea_k_1": 55e3, "k2": 0.6, "Ea_k2": 50e3,
             "eps_Prod": 2.5, "base": 0.015, "sigma_Prod": 4e-4}
    for label, function in sides.items():
        lik = Likelihood(function, problem.observations, problem.parameters, problem.errors)
        u = lik.parameters.free_vector(truth)
        batch = u + 1e-3 * np.random.default_rng(0).standard_normal((36, u.size))
        lik.log_likelihood(batch[:2])                       # compile / warm up
        t_batch, _ = timed(lambda lik=lik, batch=batch: lik.log_likelihood(batch),
                           args.repeats)
        began = time.perf_counter()
        fit = maximum_likelihood(lik, starts=args.starts, local=args.local, tolerance=1e-10)
        t_fit = time.perf_counter() - began
        settings = SamplingSettings(min_steps=args.steps, max_steps=args.steps)
        began = time.perf_counter()
        post = sample_posterior(lik, fit.u, fit.covariance_free, settings)
        t_post = time.perf_counter() - began
        rows[label] = dict(per_second=36 / t_batch, fit=t_fit, ll=fit.log_likelihood_max,
                           post=t_post, post_rate=post.evaluations / t_post,
                           k2=fit.values["k2"], walkers=post.draws.shape[0])
        print(f"  {label}: done", flush=True)
    # mechfit's whole procedure as `mechfit fit` runs it, to convergence
    began = time.perf_counter()
    full = fit_study(study, model, starts=16, local=3,
                     settings=SamplingSettings(max_steps=args.budget))
    t_full = time.perf_counter() - began
    evaluations = full.posterior.evaluations
    base = rows["baseline"]
    print(f"\ndemo study, true mechanism 'saturation' (full), {problem.observations.n} points, "
          f"{len(study.runs)} runs; MLE {args.starts} starts / {args.local} local; "
          f"posterior {args.steps} steps x {rows['mechfit']['walkers']} walkers "
          f"(same budget on every side); rtol {RTOL:g}\n")
    print(f"{'':34}{'baseline':>12}{'mechfit':>12}{'mechfit-fd':>12}{'ratio':>9}")
    for key, label, fmt in (("per_second", "likelihood evaluations / s", "{:12.1f}"),
                            ("fit", "maximum likelihood wall time, s", "{:12.2f}"),
                            ("post", "posterior wall time, s", "{:12.2f}"),
                            ("post_rate", "posterior evaluations / s", "{:12.1f}"),
                            ("ll", "maximum log-likelihood", "{:12.4f}"),
                            ("k2", "k2 at the optimum, 1/(M s)", "{:12.6f}")):
        m = rows["mechfit"][key]
        ratio = (m / base[key] if key in ("per_second", "post_rate")
                 else base[key] / m if key in ("fit", "post") else float("nan"))
        print(f"{label:34}" + fmt.format(base[key]) + fmt.format(m)
              + fmt.format(rows["mechfit-fd"][key])
              + (f"{ratio:9.1f}x" if np.isfinite(ratio) else ""))
    print("\nratio: mechfit speed-up over the baseline (median likelihood timing of "
          f"{args.repeats} repeats; single runs for the fit and the posterior)")
    projected = evaluations / base["post_rate"]
    print(f"\nmechfit's whole procedure to convergence (fit_study: 16 starts / 3 local, "
          f"sampler budget {args.budget} steps): {t_full:.1f} s wall; "
          f"{full.posterior.statement()}")
    print(f"  its {evaluations} posterior evaluations would take the baseline about "
          f"{projected / 60:.0f} min at the baseline's measured {base['post_rate']:.1f} "
          f"evaluations/s (projected, not run)")


if __name__ == "__main__":
    main()
