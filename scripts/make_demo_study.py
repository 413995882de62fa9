"""Make the demo study of mechfit: invented data from a known ("true") mechanism.

THE DATA ARE INVENTED. The scenario is made up for the demo: an organocatalysed
thia-Michael addition of a thiol (Nu) to an invented enone, "corvenone" (Sub),
giving the adduct Prod, with catalyst Cat. No real compound, measurement or
laboratory is meant.

The truth
---------
Mechanism ``saturation`` (``mechanisms/demo/saturation.mech``)::

    bind:   Cat + Sub <=> CatSub        @ k1, k_1
    attack: CatSub + Nu -> Cat + Prod   @ k2

Arrhenius with reference temperature T_ref = 303.15 K (30 degC), k in mol, L, s:

==========  ===================  ==========
constant    k at T_ref           Ea, kJ/mol
==========  ===================  ==========
k1          2.0 L/(mol s)        35
k_1         0.08 1/s             55
k2          0.6 L/(mol s)        50
==========  ===================  ==========

Observables: ``Prod`` by HPLC aliquots (mM, Gaussian noise sd 0.4 mM, fitted in
the study) and ``A405``, the absorbance at 405 nm in a 1 cm cell,
``A405 = eps_Sub*[Sub] + eps_Prod*[Prod] + base`` with eps_Sub = 15 L/mol
(calibrated, fixed in the study), eps_Prod = 2.5 L/mol and base = 0.015 (both
fitted), noise sd 0.004 (known, given in the study). Noise seed :data:`SEED`.

Eleven runs at 20, 30 and 40 degC with catalyst 1-4 mM, enone 20-100 mM and thiol
30-300 mM; each run lasts until about 85% of its limiting reagent is used up.

Simulation: the full mass-action ODEs built from the mechanism's order matrices,
integrated with ``scipy.integrate.solve_ivp`` (Radau, rtol 1e-10, atol 1e-14); it
does not use mechfit's own simulator.

Usage::

    python scripts/make_demo_study.py            # rewrite mechfit/demo/
    python scripts/make_demo_study.py --check    # verify mechfit/demo/ is up to date

The candidate mechanisms live in ``mechanisms/demo/`` (the one source) and are
copied into ``mechfit/demo/`` so that an installed mechfit finds them.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

from mechfit.mechanism import load_mechanism, order_matrices
from mechfit.study.temperature import arrhenius

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ROOT / "mechanisms" / "demo"
PACKAGE = ROOT / "mechfit" / "demo"

#: the noise seed (numpy.random.default_rng)
SEED = 20261201
#: the mechanism the data come from
TRUE_MECHANISM = "saturation"
#: reference temperature of the Arrhenius laws, K
REFERENCE_K = 303.15
#: rate constant -> (k at T_ref in mol, L, s; Ea in J/mol)
TRUE_PARAMETERS = {"k1": (2.0, 35e3), "k_1": (0.08, 55e3), "k2": (0.6, 50e3)}
#: Beer-Lambert parameters of A405 (L/mol for a 1 cm cell, and a baseline)
EPS_SUB, EPS_PROD, BASE = 15.0, 2.5, 0.015
#: noise standard deviations: Prod in mM, A405 in absorbance units
SIGMA_PROD_MM, SIGMA_A405 = 0.4, 0.004

#: name, temperature degC, initial mM (Cat, Sub, Nu), observables
RUNS = [
    ("r01", 30, (2.0, 50.0, 100.0), ("Prod",)),
    ("r02", 30, (2.0, 20.0, 100.0), ("Prod",)),
    ("r03", 30, (2.0, 100.0, 100.0), ("A405",)),
    ("r04", 30, (2.0, 50.0, 30.0), ("Prod",)),
    ("r05", 30, (2.0, 50.0, 300.0), ("Prod", "A405")),
    ("r06", 30, (4.0, 50.0, 100.0), ("Prod",)),
    ("r07", 20, (2.0, 50.0, 100.0), ("Prod", "A405")),
    ("r08", 20, (3.0, 80.0, 200.0), ("Prod",)),
    ("r09", 40, (2.0, 50.0, 100.0), ("Prod", "A405")),
    ("r10", 40, (1.0, 30.0, 60.0), ("A405",)),
    ("r11", 40, (2.0, 100.0, 200.0), ("A405",)),
]

#: fractions of the run length at which HPLC aliquots are taken (16 points)
HPLC_FRACTIONS = (0.04, 0.08, 0.12, 0.17, 0.22, 0.28, 0.34, 0.40, 0.47, 0.54, 0.61,
                  0.68, 0.76, 0.84, 0.92, 1.0)
#: number of UV-Vis readings per run, evenly spaced from t = 0
UV_POINTS = 21

HEADER = ("# INVENTED DATA for the mechfit demo; not measurements. Made by "
          "scripts/make_demo_study.py (true mechanism '{mech}', seed {seed}).")


def mass_action(mechanism, constants: dict[str, float]):
    """Right-hand side and Jacobian of the mass-action ODEs of ``mechanism``."""
    reactants, products = order_matrices(mechanism)
    stoich = products - reactants
    k = np.array([r.constant.factor * constants[r.constant.name]
                  for r in mechanism.reactions()])

    def rates(c):
        return k * np.prod(np.maximum(c, 0.0)[:, None] ** reactants, axis=0)

    def rhs(_t, c):
        return stoich @ rates(c)

    def jac(_t, c):
        c = np.maximum(c, 0.0)
        n = len(c)
        powers = c[:, None] ** reactants  # species x reactions
        others = np.broadcast_to(powers, (n, n, len(k))).copy()
        others[np.arange(n), np.arange(n), :] = 1.0  # leave out species i itself
        lowered = np.where(reactants > 0, c[:, None] ** np.maximum(reactants - 1, 0), 0.0)
        d = k * reactants * lowered * others.prod(axis=1)  # d rate_j / d c_i
        return stoich @ d.T

    return rhs, jac


def simulate(mechanism, constants, initial: dict[str, float], times, *, rtol=1e-10):
    """Concentrations (mol/L), species x times, from a tight Radau integration."""
    rhs, jac = mass_action(mechanism, constants)
    c0 = np.array([initial.get(s, 0.0) for s in mechanism.species])
    sol = solve_ivp(rhs, (0.0, float(times[-1])), c0, method="Radau", t_eval=times,
                    jac=jac, rtol=rtol, atol=rtol * 1e-4)
    if not sol.success:
        raise RuntimeError(sol.message)
    return sol.y


def run_length_min(mechanism, constants, initial) -> float:
    """Minutes until 85% of the limiting reagent is used (5-min steps, 10-300 min)."""
    limiting = min(initial["Sub"], initial["Nu"])
    grid = np.arange(5.0, 305.0, 5.0)
    y = simulate(mechanism, constants, initial, grid * 60.0, rtol=1e-7)
    prod = y[mechanism.species.index("Prod")]
    done = np.flatnonzero(prod >= 0.85 * limiting)
    return float(grid[done[0]]) if len(done) else 300.0


def make_tables(mechanism, parameters, seed: int) -> dict[str, str]:
    """Table file name -> CSV text, for every run of :data:`RUNS`."""
    rng = np.random.default_rng(seed)
    out = {}
    i_sub, i_prod = mechanism.species.index("Sub"), mechanism.species.index("Prod")
    for name, celsius, (cat, sub, nu), observed in RUNS:
        kelvin = celsius + 273.15
        constants = {c: float(arrhenius(kr, ea, kelvin, REFERENCE_K))
                     for c, (kr, ea) in parameters.items()}
        initial = {"Cat": cat * 1e-3, "Sub": sub * 1e-3, "Nu": nu * 1e-3}
        length = run_length_min(mechanism, constants, initial)
        hplc = np.round(np.array(HPLC_FRACTIONS) * length, 1) if "Prod" in observed else []
        uv = np.round(np.linspace(0.0, length, UV_POINTS), 1) if "A405" in observed else []
        times = np.unique(np.concatenate([np.asarray(hplc), np.asarray(uv)]))
        y = simulate(mechanism, constants, initial, times * 60.0)
        rows = []
        for k, t in enumerate(times):
            cells = [f"{t:.1f}"]
            if "Prod" in observed:
                if t in hplc:
                    value = y[i_prod, k] * 1e3 + rng.normal(0.0, SIGMA_PROD_MM)
                    if value < 0:
                        raise RuntimeError(f"{name}: a negative product concentration; "
                                           "move the first aliquot later")
                    cells.append(f"{value:.2f}")
                else:
                    cells.append("")
            if "A405" in observed:
                if t in uv:
                    a = (EPS_SUB * y[i_sub, k] + EPS_PROD * y[i_prod, k] + BASE
                         + rng.normal(0.0, SIGMA_A405))
                    cells.append(f"{a:.4f}")
                else:
                    cells.append("")
            rows.append(", ".join(cells))
        head = ["time / min"] + [{"Prod": "Prod / mM", "A405": "A405"}[o] for o in observed]
        text = (HEADER.format(mech=mechanism.name, seed=seed) + "\n"
                + f"# run {name}: {celsius} degC; Cat {cat:g} mM, Sub {sub:g} mM, "
                  f"Nu {nu:g} mM\n"
                + ", ".join(head) + "\n" + "\n".join(rows) + "\n")
        out[f"{name}.csv"] = text
    return out


def study_text(seed: int, mechanism_name: str) -> str:
    """The demo study file."""
    runs = []
    for name, celsius, (cat, sub, nu), _ in RUNS:
        runs.append(f'[[run]]\nname = "{name}"\ntemperature = {celsius}\n'
                    f"initial = {{ Cat = {cat:g}, Sub = {sub:g}, Nu = {nu:g} }}\n"
                    f'table = "{name}.csv"\n')
    return f'''# The mechfit demo study. THE DATA ARE INVENTED: an invented scenario with
# invented compounds, simulated by scripts/make_demo_study.py (true mechanism
# '{mechanism_name}', noise seed {seed}); see that script for the true parameters.
title = "Organocatalysed thia-Michael addition to corvenone (invented example)"
note = "Invented data for the mechfit demo: 11 runs at 20, 30 and 40 degC; HPLC and UV-Vis."
units = {{ concentration = "mM", time = "min", temperature = "degC", energy = "kJ/mol" }}

[temperature_law]
default = "arrhenius"
reference = 30          # degC: k1, k_1, ... are rate constants at 30 degC

[observable.Prod]       # adduct by HPLC of quenched aliquots
kind = "concentration"
unit = "mM"
sigma = "fit"

[observable.A405]       # absorbance at 405 nm, 1 cm cell (path folded into eps, L/mol)
kind = "expression"
expression = "eps_Sub*[Sub] + eps_Prod*[Prod] + base"
unit = "1"
fixed = {{ eps_Sub = {EPS_SUB:g} }}   # from a calibration line of the pure enone
fitted = ["eps_Prod", "base"]
sigma = {SIGMA_A405:g}          # known from repeated blank readings

[prior]
eps_Prod = {{ distribution = "uniform", low = 0, high = 50, unit = "L/mol" }}
base = {{ distribution = "normal", mean = 0, sd = 0.1 }}

''' + "\n".join(runs)


def truth_text(seed: int) -> str:
    lines = ["# The truth behind the INVENTED demo data (scripts/make_demo_study.py).",
             f'mechanism = "{TRUE_MECHANISM}"', f"seed = {seed}",
             f"reference_temperature_K = {REFERENCE_K}", "",
             "[rate_constants]  # k at the reference temperature (mol, L, s), Ea in J/mol"]
    for c, (kr, ea) in TRUE_PARAMETERS.items():
        lines.append(f"{c} = {{ k_ref = {kr!r}, Ea = {ea!r} }}")
    lines += ["", "[observables]",
              f"eps_Sub = {EPS_SUB!r}", f"eps_Prod = {EPS_PROD!r}", f"base = {BASE!r}",
              f"sigma_Prod = {SIGMA_PROD_MM * 1e-3!r}  # mol/L",
              f"sigma_A405 = {SIGMA_A405!r}", ""]
    return "\n".join(lines)


def generate(seed: int = SEED) -> dict[str, str]:
    """Every generated file of ``mechfit/demo/`` (name -> text)."""
    mechanism = load_mechanism(SOURCE / f"{TRUE_MECHANISM}.mech")
    files = make_tables(mechanism, TRUE_PARAMETERS, seed)
    files["study.toml"] = study_text(seed, TRUE_MECHANISM)
    files["truth.toml"] = truth_text(seed)
    for mech in sorted(SOURCE.glob("*.mech")):
        files[mech.name] = mech.read_text(encoding="utf-8")
    return files


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--check", action="store_true",
                        help="compare with mechfit/demo/ instead of writing")
    parser.add_argument("--seed", type=int, default=SEED)
    parser.add_argument("--out", type=Path, default=PACKAGE,
                        help="folder to write (default mechfit/demo/)")
    args = parser.parse_args(argv)
    files = generate(args.seed)
    if args.check:
        stale = [n for n, text in files.items()
                 if not (args.out / n).is_file()
                 or (args.out / n).read_text(encoding="utf-8") != text]
        for n in stale:
            print(f"out of date: {args.out / n}")
        return 1 if stale else 0
    args.out.mkdir(parents=True, exist_ok=True)
    for name, text in files.items():
        (args.out / name).write_text(text, encoding="utf-8")
    for old in args.out.glob("*.mech"):
        if old.name not in files:
            old.unlink()
    print(f"wrote {len(files)} files to {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
