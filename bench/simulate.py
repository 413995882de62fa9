"""Benchmark: mechfit's batched simulator against the hand-written scipy baseline.

Baseline (what a chemist writes by hand): for every parameter set and every run,
``scipy.integrate.solve_ivp(method="LSODA")`` with a sympy-lambdified right-hand
side and Jacobian, in Python loops. mechfit: one ``Simulator.solve`` call for all
systems. Same rtol/atol on both sides; the answers must agree within 1e-6 relative
(|a - b| <= 1e-6 * max(|b|, atol/rtol), i.e. relative above the concentration where
the tolerance turns absolute).

Workload per mechanism: 32 parameter sets x 12 runs x 50 output times (invented
constants and initial concentrations, seeded). Figures are medians of repeats, in
microseconds per run-solve (one run under one parameter set).

Also measured (unless --skip-startup): the build of the compiled simulation library
at install, and the start-up of fresh processes. A non-editable copy of mechfit is
laid out in a temporary folder (the package's files copied as an install lays them
out) and the library is built into it with ``setup.py build_ext`` (the step of
``pip install .`` that compiles; timed, wall and CPU). Then three fresh processes
each import mechfit and run a first mass-action solve and a first general solve
with sensitivities (wall and CPU seconds). There is no compile at run time: the
first process and the later ones do the same work.

Run:  .venv/bin/python bench/simulate.py [--repeats 3] [--skip-startup]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import sympy
from scipy.integrate import solve_ivp

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from mechfit import load_mechanism  # noqa: E402
from mechfit.derive import mass_action_model  # noqa: E402
from mechfit.mechanism import symbols  # noqa: E402
from mechfit.simulate import Simulator  # noqa: E402

RTOL, ATOL = 1e-9, 1e-14
N_SETS, N_RUNS, N_TIMES = 32, 12, 50
AGREEMENT = 1e-6

#: invented nominal constants, initial-concentration ranges and time spans
SETTINGS = {
    "michaelis_menten": dict(k={"k1": 1e2, "k_1": 10.0, "k2": 5.0},
                             initial={"E": (0.01, 0.05), "S": (0.5, 5.0)}, until=200.0),
    "h2_br2_chain": dict(k={"k1": 1e-3, "k2": 10.0, "k3": 1e4, "k4": 1e3, "k5": 1e7},
                         initial={"H2": (0.5, 2.0), "Br2": (0.5, 2.0)}, until=2000.0),
}


def _demo_candidate() -> tuple[str, Path] | None:
    """The largest demo candidate (most species, then most reactions)."""
    files = sorted((ROOT / "mechanisms" / "demo").glob("*.mech"))
    if not files:
        return None
    best = max(files, key=lambda f: (len(load_mechanism(f).species),
                                     len(load_mechanism(f).reactions()), f.name))
    return best.stem, best


def _workload(name: str, path: Path, rng: np.random.Generator):
    mech = load_mechanism(path)
    setting = SETTINGS.get(name)
    if setting is None:        # a demo candidate: generic invented settings
        reactants = {s for r in mech.reactions() if r.direction == "forward"
                     for s, _ in r.reactants}
        produced = {s for r in mech.reactions() for s, _ in r.products}
        starts = [s for s in mech.species if s in reactants and (s not in produced
                                                                 or s.startswith("Cat"))]
        setting = dict(k={p: 2.0 for p in mech.parameters},
                       initial={s: ((0.005, 0.02) if s.startswith("Cat") else (0.2, 1.0))
                                for s in starts}, until=500.0)
    sim = Simulator(mech, rtol=RTOL, atol=ATOL)
    nominal = np.array([setting["k"][p] for p in sim.parameters])
    sets = nominal * np.exp(rng.normal(0.0, 0.2, (N_SETS, len(nominal))))
    runs = np.zeros((N_RUNS, len(sim.species)))
    for s, (lo, hi) in setting["initial"].items():
        runs[:, sim.species.index(s)] = rng.uniform(lo, hi, N_RUNS)
    times = np.linspace(0.0, setting["until"], N_TIMES)
    return mech, sim, sets, runs, times


def _baseline(mech, sets, runs, times) -> tuple[float, np.ndarray]:
    """solve_ivp(LSODA) with lambdified rhs and Jacobian, Python loops."""
    model = mass_action_model(mech)
    ys = [symbols.concentration(s) for s in model.state]
    ks = [symbols.rate_constant(p) for p in model.parameters]
    rhs = sympy.lambdify((ys, ks), list(model.rhs), "numpy")
    jac = sympy.lambdify((ys, ks), model.jacobian(), "numpy")
    out = np.zeros((len(sets), len(runs), len(times), len(ys)))
    start, cpu = time.perf_counter(), time.process_time()
    for i, k in enumerate(sets):
        for j, y0 in enumerate(runs):
            sol = solve_ivp(lambda _t, y, k=k: rhs(y, k), (0.0, times[-1]), y0,
                            method="LSODA", t_eval=times, rtol=RTOL, atol=ATOL,
                            jac=lambda _t, y, k=k: jac(y, k))
            if not sol.success:
                raise RuntimeError(f"baseline failed: {sol.message}")
            out[i, j] = sol.y.T
    return time.perf_counter() - start, time.process_time() - cpu, out


def _mechfit(sim, sets, runs, times) -> tuple[float, np.ndarray]:
    k = np.repeat(sets, len(runs), axis=0)
    y0 = np.tile(runs, (len(sets), 1))
    start, cpu = time.perf_counter(), time.process_time()
    res = sim.solve(times, y0, k)
    elapsed, cpu = time.perf_counter() - start, time.process_time() - cpu
    if not res.ok.all():
        raise RuntimeError(f"mechfit failed: {res.summary()}")
    return elapsed, cpu, res.concentrations.reshape(len(sets), len(runs), len(times), -1)


def benchmark(repeats: int) -> list[dict]:
    rng = np.random.default_rng(20261201)
    cases = [("michaelis_menten", ROOT / "mechanisms" / "classic" / "michaelis_menten.mech"),
             ("h2_br2_chain", ROOT / "mechanisms" / "classic" / "h2_br2_chain.mech")]
    demo = _demo_candidate()
    if demo:
        cases.append(demo)
    rows = []
    n = N_SETS * N_RUNS
    for name, path in cases:
        mech, sim, sets, runs, times = _workload(name, path, rng)
        _mechfit(sim, sets[:1], runs[:1], times)        # a first call, not timed
        base_wall, base_cpu, ours_wall, ours_cpu = [], [], [], []
        for _ in range(repeats):
            t_base, c_base, ref = _baseline(mech, sets, runs, times)
            t_ours, c_ours, got = _mechfit(sim, sets, runs, times)
            base_wall.append(t_base / n * 1e6)
            base_cpu.append(c_base / n * 1e6)
            ours_wall.append(t_ours / n * 1e6)
            ours_cpu.append(c_ours / n * 1e6)
        floor = ATOL / RTOL
        rel = np.abs(got - ref) / np.maximum(np.abs(ref), floor)
        base, ours = statistics.median(base_wall), statistics.median(ours_wall)
        bcpu, ocpu = statistics.median(base_cpu), statistics.median(ours_cpu)
        rows.append(dict(mechanism=f"{path.parent.name}/{path.name}",
                         species=len(mech.species), reactions=len(mech.reactions()),
                         baseline_us=base, mechfit_us=ours, ratio=base / ours,
                         baseline_cpu_us=bcpu, mechfit_cpu_us=ocpu, cpu_ratio=bcpu / ocpu,
                         max_relative_difference=float(rel.max()),
                         agree=bool(rel.max() <= AGREEMENT)))
    return rows


STARTUP_SCRIPT = r"""
import json, sys, time
w0, c0 = time.perf_counter(), time.process_time()
import numpy as np
import mechfit
from mechfit import parse_mechanism
from mechfit.derive import reduced_model
from mechfit.simulate import Simulator
w1, c1 = time.perf_counter(), time.process_time()
mech = parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2")
sim = Simulator(mech, rtol=1e-8)
sim.solve(np.linspace(0, 10, 50), np.array([0.01, 1.0, 0, 0]), np.array([1e2, 10.0, 5.0]))
w2, c2 = time.perf_counter(), time.process_time()
red = Simulator(reduced_model(mech, steady=["ES"]), rtol=1e-8)
red.solve(np.linspace(0, 10, 50), np.array([0.01, 1.0, 0, 0]), np.array([1e2, 10.0, 5.0]),
          sensitivities=True)
w3, c3 = time.perf_counter(), time.process_time()
print(json.dumps({"import": [w1 - w0, c1 - c0], "mass_action": [w2 - w1, c2 - c1],
                  "general": [w3 - w2, c3 - c2], "location": mechfit.__file__}))
"""


def _build_copy(target: Path, work: Path) -> dict:
    """A non-editable copy of mechfit in ``target``, its compiled library built by
    ``setup.py build_ext`` (timed: wall and CPU seconds of the build)."""
    source = work / "source"
    shutil.copytree(ROOT / "mechfit", source / "mechfit",
                    ignore=shutil.ignore_patterns("__pycache__", "*.pyc", "*.so"))
    for name in ("setup.py", "pyproject.toml", "README.md"):
        shutil.copy(ROOT / name, source / name)
    shutil.copytree(source / "mechfit", target / "mechfit",
                    ignore=shutil.ignore_patterns("native"))
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run([sys.executable, "setup.py", "-q", "build_ext", "--build-lib", str(target),
                    "--build-temp", str(work / "build")], cwd=source, check=True,
                   capture_output=True, text=True)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime + after.ru_stime) - (before.ru_utime + before.ru_stime)
    return {"how": "the package's files copied as an install lays them out, the compiled "
                   "library built into them with setup.py build_ext",
            "build": [wall, cpu]}


def startup() -> dict:
    """Build time of the library, then three fresh processes (import and first solves)."""
    work = Path(tempfile.mkdtemp(prefix="mechfit-bench-"))
    target = work / "site"
    built = _build_copy(target, work)
    env = dict(os.environ)
    env["PYTHONPATH"] = str(target)
    script = work / "startup.py"
    script.write_text(STARTUP_SCRIPT)
    runs = []
    for _ in range(3):
        start = time.perf_counter()
        done = subprocess.run([sys.executable, str(script)], capture_output=True, text=True,
                              env=env, cwd=work, check=True)
        wall = time.perf_counter() - start
        runs.append({**json.loads(done.stdout.strip().splitlines()[-1]), "wall": wall})
    shutil.rmtree(work, ignore_errors=True)
    return {**built, "first": runs[0], "later": runs[1:]}


def main() -> int:
    global RTOL, ATOL
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--skip-startup", action="store_true")
    parser.add_argument("--rtol", type=float, default=RTOL)
    parser.add_argument("--atol", type=float, default=ATOL)
    args = parser.parse_args()
    RTOL, ATOL = args.rtol, args.atol
    print(f"workload: {N_SETS} parameter sets x {N_RUNS} runs x {N_TIMES} output times; "
          f"rtol {RTOL:g}, atol {ATOL:g}; median of {args.repeats} repeats")
    print("baseline: scipy solve_ivp(LSODA), sympy-lambdified rhs + Jacobian, Python loops")
    print("mechfit:  Simulator.solve, all systems in one call\n")
    rows = benchmark(args.repeats)
    print("microseconds per run-solve, wall clock and CPU (CPU is the fairer figure on a "
          "shared machine)")
    head = f"{'mechanism':30} {'sp':>3} {'rx':>3} {'baseline':>10} {'mechfit':>9} " \
           f"{'ratio':>6} | {'base CPU':>9} {'mf CPU':>8} {'ratio':>6} | {'max rel diff':>12} agree"
    print(head)
    for r in rows:
        print(f"{r['mechanism']:30} {r['species']:3d} {r['reactions']:3d} "
              f"{r['baseline_us']:10.1f} {r['mechfit_us']:9.1f} {r['ratio']:6.1f} | "
              f"{r['baseline_cpu_us']:9.1f} {r['mechfit_cpu_us']:8.1f} {r['cpu_ratio']:6.1f} | "
              f"{r['max_relative_difference']:12.2e} {'yes' if r['agree'] else 'NO'}")
    if not args.skip_startup:
        s = startup()

        def pair(v):
            return f"{v[0]:.2f} / {v[1]:.2f}"

        print("\nstart-up (wall s / CPU s; wall includes waiting for a busy machine)")
        print(f"  build of the compiled library at install ({s['how']}): "
              f"{pair(s['build'])}")
        print(f"  loaded from: {s['first']['location']}")
        for i, run in enumerate([s["first"], *s["later"]], start=1):
            print(f"  process {i}: import mechfit {pair(run['import'])}; first mass-action "
                  f"solve {pair(run['mass_action'])}; first general solve with sensitivities "
                  f"{pair(run['general'])}; whole process {run['wall']:.2f} s wall")
        first = s["first"]
        first_call = first["import"][0] + first["mass_action"][0]
        later = [r["mass_action"][0] + r["general"][0] for r in s["later"]]
        print(f"\n{'':46}{'target s':>10}{'measured s':>12}")
        print(f"{'first call, fresh process (import + solve)':46}{3.0:>10.1f}"
              f"{first_call:>12.2f}")
        print(f"{'  of which the first solve (no compile)':46}{'':>10}"
              f"{first['mass_action'][0]:>12.2f}")
        print(f"{'second process: first solves after import':46}{0.5:>10.1f}"
              f"{statistics.median(later):>12.2f}")
        print(f"{'second process: import mechfit':46}{'':>10}"
              f"{statistics.median(r['import'][0] for r in s['later']):>12.2f}")
    print(f"(load average now: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    return 0 if all(r["agree"] for r in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
