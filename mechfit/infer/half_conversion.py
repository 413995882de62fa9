"""Half-lives under the conditions of each run: the time to half conversion.

For a mechanism (rather than one elementary step) the half-life a chemist asks for is
the time for the *limiting reactant* of a run to fall to half its initial
concentration under that run's conditions (its temperature and initial
concentrations). The limiting reactant is the species the run starts with (a given
initial concentration above zero) that it consumes (the best fit leaves less than
99.9 % of it at the end of the run) with the lowest initial concentration; the forms
of a catalyst (free and bound, see :func:`mechfit.derive.steady_state.catalyst_laws`),
which is given back, never are.

Each posterior draw (up to ``draws`` of them, evenly spaced) is simulated on a grid of
``points`` times from 0 to ``horizon`` times the run's last measurement, and the
first crossing of half the initial concentration is found by linear interpolation
between grid points. When some draws do not reach half conversion within the
horizon, the summary is left out and the fraction that does is reported instead
(``reached`` in the summary): an extrapolation that far outside the measured times
would not be honest.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: multiple of a run's last measured time searched for half conversion
HORIZON = 4.0
#: times per run in the search grid
POINTS = 400
#: fraction of the initial concentration left that counts as "not consumed"
UNCONSUMED = 0.999


@dataclass(frozen=True)
class HalfConversion:
    """Time to half conversion of a run's limiting reactant, over the posterior."""

    run: str
    species: str
    median: float | None
    hdi_low: float | None
    hdi_high: float | None
    reached: float
    horizon: float

    def summary(self) -> dict:
        return {"run": self.run, "species": self.species, "median": self.median,
                "hdi_low": self.hdi_low, "hdi_high": self.hdi_high, "unit": "s",
                "reached": self.reached, "horizon": self.horizon}

    def text(self) -> str:
        if self.median is None:
            return (f"t1/2 of {self.species} in run {self.run}: only {100 * self.reached:.0f} % "
                    f"of the draws reach half conversion within {self.horizon:.4g} s")
        return (f"t1/2 of {self.species} in run {self.run}: {self.median:.4g} s "
                f"(95 % HDI {self.hdi_low:.4g} to {self.hdi_high:.4g})")


def first_crossing(grid: np.ndarray, values: np.ndarray, level: np.ndarray) -> np.ndarray:
    """First time each row of ``values`` (rows, G) falls to ``level`` (rows,), else inf.

    Examples
    --------
    >>> t = np.linspace(0.0, 4.0, 401)
    >>> c = np.exp(-t)[None, :]
    >>> round(float(first_crossing(t, c, np.array([0.5]))[0]), 3)   # ln 2
    0.693
    """
    below = values <= level[:, None]
    hit = below.any(axis=1)
    j = np.argmax(below, axis=1)
    out = np.full(values.shape[0], np.inf)
    rows = np.flatnonzero(hit & (j > 0))
    a, b = values[rows, j[rows] - 1], values[rows, j[rows]]
    frac = (a - level[rows]) / np.where(a > b, a - b, 1.0)
    out[rows] = grid[j[rows] - 1] + frac * (grid[j[rows]] - grid[j[rows] - 1])
    out[np.flatnonzero(hit & (j == 0))] = grid[0]
    return out


def half_conversion_times(problem, best_u: np.ndarray, draws_u: np.ndarray, *,
                          mechanism=None, draws: int = 200, points: int = POINTS,
                          horizon: float = HORIZON) -> list[HalfConversion]:
    """Time to half conversion of each run's limiting reactant (see the module docs).

    Parameters
    ----------
    problem
        The :class:`~mechfit.infer.study_model.StudyProblem` of the fit.
    best_u
        Free vector of the best fit (picks the limiting reactant).
    draws_u
        Posterior draws of the free vector, (n, q).
    mechanism
        The fitted mechanism: the forms of its catalysts (bound forms included) are
        never the limiting reactant.
    """
    from mechfit.derive.steady_state import catalyst_laws
    from mechfit.infer.summaries import summarise_draws

    if problem.concentrations is None:
        return []
    runs = problem.observations.run_names
    ends = np.array([problem.observations.time[problem.observations.run == r].max()
                     for r in range(len(runs))])
    grid = np.linspace(0.0, 1.0, points)[None, :] * (horizon * ends)[:, None]
    params = problem.parameters
    conc, solved, initial = problem.concentrations(params.natural(np.atleast_2d(best_u)),
                                                   grid)
    species = problem.simulator.species
    catalyst = {name for law in catalyst_laws(mechanism) for name in law} \
        if mechanism is not None else set()
    limiting = []
    for r in range(len(runs)):
        start, end = initial[r, 0], conc[r, 0, np.searchsorted(grid[r], ends[r])]
        consumed = [j for j in range(len(species)) if species[j] not in catalyst
                    and start[j] > 0 and end[j] < UNCONSUMED * start[j]]
        limiting.append(min(consumed, key=lambda j: start[j]) if consumed and solved[r, 0]
                        else None)
    pick = np.linspace(0, len(draws_u) - 1, min(draws, len(draws_u))).astype(int)
    conc, solved, initial = problem.concentrations(params.natural(draws_u[pick]), grid)
    out = []
    for r, j in enumerate(limiting):
        if j is None:
            continue
        c = conc[r, :, :, j]
        ok = solved[r] & np.all(np.isfinite(c), axis=1)
        c, c0 = c[ok], initial[r, ok, j]
        if c.shape[0] == 0:
            continue
        t = first_crossing(grid[r], c, 0.5 * c0)
        reached = float(np.mean(np.isfinite(t)))
        if reached < 1.0:
            out.append(HalfConversion(runs[r], species[j], None, None, None, reached,
                                      float(grid[r, -1])))
            continue
        s = summarise_draws(f"t_half_{runs[r]}", t, unit="s")
        out.append(HalfConversion(runs[r], species[j], float(s.median), float(s.hdi_low),
                                  float(s.hdi_high), 1.0, float(grid[r, -1])))
    return out
