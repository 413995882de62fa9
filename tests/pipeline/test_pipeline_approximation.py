"""The approximation check of reduced variants, measured at the best fit of a study.

Invented Michaelis-Menten studies: with the enzyme scarce ([E]0 = 1e-3 [S]0) the
steady-state approximation holds; with [E]0 = [S]0 it does not (Segel and Slemrod,
"The quasi-steady-state assumption: a case study in perturbation", SIAM Rev. 31 (1989)
446: the condition is [E]0 << [S]0 + K_M).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from mechfit import parse_mechanism
from mechfit.pipeline.evaluate import APPROXIMATION_TOLERANCE, FitSettings, evaluate_candidate
from mechfit.pipeline.ranking_run import _candidate
from mechfit.study import load_study

TEXT = "E + S <=> ES @ k1, k_1\nES -> E + P @ k2\n"
#: invented constants (M^-1 s^-1, s^-1, s^-1) and [E]0/[S]0 of the two cases, each with
#: product formed over the 30 min of the runs
SCARCE = ((1e3, 1.0, 1.0), 1e-3)       # K_M = 2 mM, [E]0 = 2 and 8 uM
EQUAL = ((10.0, 1e-3, 2e-3), 1.0)      # K_M = 0.3 mM, [E]0 = [S]0


def full_model_study(folder, constants, e0):
    """Data from the full mass-action scheme (not the reduced law) plus seeded noise."""
    rng = np.random.default_rng(3)
    runs = []
    minutes = np.linspace(0.5, 30, 15)
    for name, s0 in (("r1", 2e-3), ("r2", 8e-3)):
        def rhs(_t, y, k=constants):
            e, s, es, _p = y
            v1, v_1, v2 = k[0] * e * s, k[1] * es, k[2] * es
            return [-v1 + v_1 + v2, -v1 + v_1, v1 - v_1 - v2, v2]
        sol = solve_ivp(rhs, (0, 1800), [e0 * s0, s0, 0, 0], t_eval=60 * minutes,
                        method="LSODA", rtol=1e-10, atol=1e-15)
        p = 1e3 * sol.y[3] + 0.005 * rng.standard_normal(minutes.size)
        rows = "\n".join(f"{t:.3f}, {v:.6f}" for t, v in zip(minutes, p, strict=True))
        (folder / f"{name}.csv").write_text("time / min, P / mM\n" + rows + "\n")
        runs.append(f'[[run]]\nname = "{name}"\ntemperature = 25\n'
                    f'initial = {{ E = {e0 * s0 * 1e3}, S = {s0 * 1e3} }}\n'
                    f'table = "{name}.csv"\n')
    (folder / "study.toml").write_text(
        'title = "Michaelis-Menten, full scheme (invented data)"\n'
        'units = { concentration = "mM", time = "min", temperature = "degC" }\n'
        '[observable.P]\nkind = "concentration"\nunit = "mM"\nsigma = "fit"\n'
        + "\n".join(runs))
    return load_study(folder / "study.toml")


SETTINGS = FitSettings(starts=6, local=2, min_steps=200, chunk=200, max_steps=200)


@pytest.mark.parametrize(("case", "valid"), [(SCARCE, True), (EQUAL, False)])
def test_the_steady_state_variant_is_checked_against_the_full_scheme(tmp_path, case, valid):
    study = full_model_study(tmp_path, *case)
    outcome = evaluate_candidate(study, parse_mechanism(TEXT, name="mm"), "qssa:ES", SETTINGS)
    assert outcome.ok, outcome.reason
    a = outcome.approximation
    assert a["tolerance"] == APPROXIMATION_TOLERANCE and a["run"] in ("r1", "r2")
    assert (a["deviation"] <= APPROXIMATION_TOLERANCE) is valid, a
    candidate = _candidate(outcome)
    assert candidate.approximation_deviation == a["deviation"]
    assert outcome.summary["approximation"] == a


def test_the_full_variant_has_no_approximation_check(tmp_path):
    study = full_model_study(tmp_path, *SCARCE)
    outcome = evaluate_candidate(study, parse_mechanism(TEXT, name="mm"), "full", SETTINGS)
    assert outcome.ok and outcome.approximation == {}
    assert _candidate(outcome).approximation_deviation is None
