"""Benchmark: derivation time of rate laws (mechfit.derive) against a plain sympy baseline.

Run:  /work/venv/bin/python bench/derive.py [--repeat N]

Cases
-----
* every ``.mech`` file under ``mechanisms/``: all variants and their rate laws;
* ``cycle8``: a generated catalytic cycle with 8 catalyst forms (8 intermediates),
  ``E0 + S <=> E1 <=> ... <=> E7 -> E0 + P``, steady state on all of them;
* ``chain8``: a generated open chain with 8 intermediates,
  ``A <=> X1 <=> ... <=> X8 -> P`` plus a side reaction ``X4 + B -> Q``.

Baseline: the same reduced model by the textbook route in plain sympy:
``sympy.solve`` on the steady-state equations (with the conservation law), then
``sympy.cancel`` of every remaining ODE after substitution. It is given a cap
(``--cap`` seconds, run in a subprocess) so the benchmark ends. mechfit's rate-law
stage (lumped parameters, orders) has no plain-sympy counterpart and is shown on
its own.
Figures are medians over the repeats. Target (issue 3): ``cycle8`` <= 10 s.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import statistics
import time
from pathlib import Path

import sympy

from mechfit import load_mechanism, parse_mechanism
from mechfit.derive import derive_rate_law, derive_variants, mass_action_model, steady_state_model
from mechfit.mechanism import symbols

ROOT = Path(__file__).resolve().parents[1]


def cycle_text(n: int) -> str:
    lines = ["bind: E0 + S <=> E1 @ k1, k_1"]
    for i in range(1, n - 1):
        lines.append(f"s{i + 1}: E{i} <=> E{i + 1} @ k{i + 1}, k_{i + 1}")
    lines.append(f"out: E{n - 1} -> E0 + P @ k{n}")
    return "\n".join(lines) + "\n"


def chain_text(n: int) -> str:
    lines = ["in: A <=> X1 @ k1, k_1"]
    for i in range(1, n):
        lines.append(f"s{i + 1}: X{i} <=> X{i + 1} @ k{i + 1}, k_{i + 1}")
    lines.append(f"out: X{n} -> P @ k{n + 1}")
    lines.append(f"side: X{n // 2} + B -> Q @ ks")
    return "\n".join(lines) + "\n"


def mechfit_times(text: str, product: str) -> tuple[float, float]:
    """Seconds for the reduced model, and for the rate law (lumping, orders) on top."""
    mech = parse_mechanism(text)
    start = time.perf_counter()
    model = steady_state_model(mech)
    middle = time.perf_counter()
    law = derive_rate_law(model, product)
    end = time.perf_counter()
    assert law.closed_form
    return middle - start, end - middle


def _baseline(text: str, queue) -> None:
    """The same reduced model in plain sympy: solve, substitute, cancel every ODE."""
    mech = parse_mechanism(text)
    from mechfit.derive.steady_state import _eliminated, eliminable_species

    forms, laws = _eliminated(mech, set(eliminable_species(mech)))
    odes = dict(zip(mech.species, mass_action_model(mech).rhs, strict=True))
    u = [symbols.concentration(s) for s in forms]
    eqs = [odes[s] for s in forms]
    if laws:
        eqs = eqs[1:] + [sum(symbols.concentration(s) - symbols.initial_concentration(s)
                             for s in laws[0])]
    start = time.perf_counter()
    sol = sympy.solve(eqs, u, dict=True)[0]
    for s in mech.species:
        if s not in forms:
            sympy.cancel(odes[s].xreplace(sol))
    queue.put(time.perf_counter() - start)


def baseline_time(text: str, cap: float) -> float | None:
    ctx = mp.get_context("fork")
    queue = ctx.Queue()
    proc = ctx.Process(target=_baseline, args=(text, queue))
    proc.start()
    proc.join(cap)
    if proc.is_alive():
        proc.terminate()
        proc.join()
        return None
    return queue.get() if not queue.empty() else None


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--cap", type=float, default=120.0, help="seconds allowed to the baseline")
    args = ap.parse_args()

    print("classic and demo files: all variants with their rate laws (median of "
          f"{args.repeat})")
    print(f"{'file':45s} {'variants':>8s} {'seconds':>8s}")
    for path in sorted((ROOT / "mechanisms").rglob("*.mech")):
        times = []
        for _ in range(args.repeat):
            start = time.perf_counter()
            mech = load_mechanism(path)
            models = derive_variants(mech)
            for m in models:
                derive_rate_law(m)
            times.append(time.perf_counter() - start)
        print(f"{str(path.relative_to(ROOT)):45s} {len(models):8d} "
              f"{statistics.median(times):8.2f}")

    print()
    print(f"steady state on 8 intermediates (median of {args.repeat}; baseline capped at "
          f"{args.cap:g} s)")
    print("model: the reduced ODE model (eliminated species and every remaining ODE);")
    print("law: rate law of P on top (simplification, lumped parameters, orders)")
    print(f"{'case':8s} {'baseline model s':>17s} {'mechfit model s':>16s} {'ratio':>6s} "
          f"{'mechfit law s':>14s} {'mechfit total s':>16s}")
    for name, text in (("cycle8", cycle_text(8)), ("chain8", chain_text(8))):
        runs = [mechfit_times(text, "P") for _ in range(args.repeat)]
        model = statistics.median(r[0] for r in runs)
        law = statistics.median(r[1] for r in runs)
        total = statistics.median(r[0] + r[1] for r in runs)
        base_runs = [baseline_time(text, args.cap) for _ in range(args.repeat)]
        if any(b is None for b in base_runs):
            shown, ratio = f">{args.cap:g}", f">{args.cap / model:.1f}"
        else:
            b = statistics.median(base_runs)
            shown, ratio = f"{b:.2f}", f"{b / model:.1f}"
        print(f"{name:8s} {shown:>17s} {model:16.2f} {ratio:>6s} {law:14.2f} {total:16.2f}")
    print("ratio = baseline / mechfit for the model; target: mechfit total <= 10 s")


if __name__ == "__main__":
    main()
