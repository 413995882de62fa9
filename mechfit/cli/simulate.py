"""``mechfit simulate``: concentrations against time for one set of rate constants."""

from __future__ import annotations

import csv
import io
import json
import sys
from pathlib import Path

import numpy as np

from mechfit.derive import mass_action_model, reduced_model
from mechfit.errors import IntegrationFailure, MechfitError
from mechfit.mechanism import load_mechanism
from mechfit.simulate import Simulator

NAME = "simulate"
HELP = "simulate a steps file: concentrations of every species against time"
EXAMPLE = """Without --steady/--fast the file's 'steady:' and 'fast:' directives choose the
model; '--steady none --fast none' (or --full) simulates plain mass action.
Concentrations and times are in whatever units the rate constants use.

example:
  mechfit simulate mechanisms/classic/michaelis_menten.mech --full \\
      --set k1=10,k_1=1,k2=2 --initial E=0.01,S=1 --until 60 --points 13
  mechfit simulate enzyme.mech --set k1=10,k_1=1,k2=2 --initial E=0.01,S=1 \\
      --until 60 --steady ES --csv enzyme_qssa.csv
"""

CAUTION = ("Simulated concentrations hold only for this mechanism, these constants and these "
           "conditions; do not extrapolate them to other scales or use them for thermal-safety "
           "decisions without validation and review under local codes and licensed "
           "process-safety practice.")


def add_arguments(p) -> None:
    p.add_argument("file", help="a steps file (.mech)")
    p.add_argument("--set", dest="values", metavar="k1=..,k2=..", default="",
                   help="rate constants and law parameters (fixed values in the file are "
                        "used for names not given)")
    p.add_argument("--initial", metavar="A=..,B=..", default="",
                   help="initial concentrations (species not given start at 0)")
    p.add_argument("--until", type=float, required=True, metavar="T",
                   help="the last output time")
    p.add_argument("--points", type=int, default=101, metavar="N",
                   help="number of equally spaced output times from 0 to T (default 101)")
    p.add_argument("--steady", metavar="X,Y",
                   help="species in steady state ('none' clears the file's directive)")
    p.add_argument("--fast", metavar="STEP",
                   help="labels of steps at equilibrium ('none' clears the file's directive)")
    p.add_argument("--full", action="store_true",
                   help="plain mass action, ignoring the file's directives")
    p.add_argument("--rtol", type=float, default=1e-8, help="relative tolerance (1e-8)")
    p.add_argument("--csv", metavar="FILE", help="write the table to FILE (never overwritten)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def _assignments(text: str, option: str) -> dict[str, float]:
    out: dict[str, float] = {}
    for item in (t.strip() for t in text.split(",")):
        if not item:
            continue
        name, eq, value = item.partition("=")
        name = name.strip()
        if not eq or not name:
            raise MechfitError(f"{option}: expected NAME=VALUE, got {item!r}")
        try:
            out[name] = float(value)
        except ValueError:
            raise MechfitError(f"{option}: {name}: expected a number, got {value.strip()!r}") \
                from None
    return out


def _items(text: str | None) -> list[str] | None:
    if text is None:
        return None
    items = [t.strip() for t in text.split(",") if t.strip()]
    return [] if items == ["none"] else items


def _model(mech, args):
    steady, fast = _items(args.steady), _items(args.fast)
    if args.full:
        if steady or fast:
            raise MechfitError("--full cannot be combined with --steady or --fast")
        return mass_action_model(mech)
    steady = list(mech.steady) if steady is None else steady
    fast = list(mech.fast) if fast is None else fast
    if not steady and not fast:
        return mass_action_model(mech)
    return reduced_model(mech, steady=steady, fast=fast)


def run(args) -> int:
    if not args.until > 0:
        raise MechfitError(f"--until: expected a positive time, got {args.until}")
    if args.points < 2:
        raise MechfitError(f"--points: expected at least 2, got {args.points}")
    if not 0 < args.rtol < 1:
        raise MechfitError(f"--rtol: expected a number between 0 and 1, got {args.rtol}")
    if args.csv and Path(args.csv).exists():
        raise MechfitError(f"--csv: {args.csv} exists; mechfit does not overwrite results "
                           "(choose another name or remove it)")
    mech = load_mechanism(args.file)
    model = _model(mech, args)
    sim = Simulator(model, rtol=args.rtol)
    try:
        k = sim.parameter_vector(_assignments(args.values, "--set"))
        y0 = sim.initial_vector(_assignments(args.initial, "--initial"))
    except MechfitError as err:
        raise MechfitError(f"{args.file}: {err}") from None
    times = np.linspace(0.0, args.until, args.points)
    res = sim.solve(times, y0, k)
    if not res.ok[0]:
        raise IntegrationFailure(f"{args.file}: model {model.name}: {res.reason[0]}")
    table = res.concentrations[0]
    header = ["time", *sim.species]
    rows = [[f"{t:.10g}", *(f"{v:.10g}" for v in row)] for t, row in zip(times, table,
                                                                          strict=True)]
    if args.csv:
        with open(args.csv, "x", newline="") as fh:
            writer = csv.writer(fh)
            writer.writerow(header)
            writer.writerows(rows)
    if args.json:
        out = {
            "file": args.file, "model": model.name,
            "parameters": dict(zip(sim.parameters, map(float, k), strict=True)),
            "initial": dict(zip(sim.species, map(float, y0), strict=True)),
            "time": times.tolist(),
            "concentrations": {s: table[:, i].tolist() for i, s in enumerate(sim.species)},
            "steps": int(res.steps[0]), "method": res.method[0], "rtol": args.rtol,
            "csv": args.csv, "caution": CAUTION,
        }
        json.dump(out, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    print(f"# {args.file}: model {model.name}, {res.method[0]}, {res.steps[0]} steps, "
          f"rtol {args.rtol:g}")
    if args.csv:
        print(f"# wrote {len(rows)} rows to {args.csv}")
    else:
        buf = io.StringIO()
        widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(header)]
        buf.write("  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True)) + "\n")
        for r in rows:
            buf.write("  ".join(v.rjust(w) for v, w in zip(r, widths, strict=True)) + "\n")
        sys.stdout.write(buf.getvalue())
    print(f"# caution: {CAUTION}")
    return 0
