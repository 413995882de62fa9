"""The packaged demo study: loads, validates against every candidate, is reproducible."""

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from mechfit import load_mechanism
from mechfit.demo import FOLDER, candidate_paths, study_path, truth
from mechfit.study import load_study

ROOT = Path(__file__).resolve().parents[2]
SOURCE = ROOT / "mechanisms" / "demo"
SCRIPT = ROOT / "scripts" / "make_demo_study.py"


def generator():
    spec = importlib.util.spec_from_file_location("make_demo_study", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def study():
    return load_study(study_path())


def test_demo_design(study):
    assert 10 <= len(study.runs) <= 12
    assert len(study.temperatures) >= 3
    initials = {tuple(sorted(r.initial.items())) for r in study.runs}
    assert len(initials) >= 8  # varied initial concentrations
    kinds = {o.kind for o in study.observables.values()}
    assert "expression" in kinds and "concentration" in kinds
    for run in study.runs:
        for series in run.series.values():
            assert 15 <= len(series) <= 25
    assert study.default_law == "arrhenius"
    assert study.reference_temperature == pytest.approx(303.15)


def test_demo_validates_against_every_candidate(study):
    names = [p.stem for p in candidate_paths()]
    assert len(names) >= 4 and truth()["mechanism"] in names
    for path in candidate_paths():
        mech = load_mechanism(path)
        assert study.validate_against(mech) == ()
        groups = study.parameter_names(mech)
        assert 2 <= len(groups["kinetic"]) <= 7
        assert groups["observable"] == ("eps_Prod", "base")


def test_packaged_candidates_are_copies_of_the_repository_ones():
    source = {p.name: p.read_bytes() for p in SOURCE.glob("*.mech")}
    packaged = {p.name: p.read_bytes() for p in FOLDER.glob("*.mech")}
    assert source and source == packaged


def test_every_demo_file_says_the_data_are_invented():
    files = list(FOLDER.glob("*.csv")) + list(FOLDER.glob("*.toml")) + \
        list(FOLDER.glob("*.mech")) + list(SOURCE.glob("*.mech")) + [SCRIPT]
    for path in files:
        assert "invented" in path.read_text().lower(), path


def test_demo_files_are_up_to_date_with_the_generator():
    files = generator().generate()
    for name, text in files.items():
        assert (FOLDER / name).read_text() == text, f"rerun scripts/make_demo_study.py ({name})"


def test_demo_noise_matches_the_documented_truth(study):
    """Standardised residuals against the true model: mean ~0, variance ~1."""
    gen = generator()
    t = truth()
    mech = load_mechanism(SOURCE / f"{t['mechanism']}.mech")
    obs = t["observables"]
    z = []
    for run in study.runs:
        constants = {c: float(gen.arrhenius(v["k_ref"], v["Ea"], run.temperature,
                                            t["reference_temperature_K"]))
                     for c, v in t["rate_constants"].items()}
        y = gen.simulate(mech, constants, dict(run.initial), run.times)
        sub, prod = y[mech.species.index("Sub")], y[mech.species.index("Prod")]
        for name, s in run.series.items():
            if name == "Prod":
                z.append((s.values - prod[s.index]) / obs["sigma_Prod"])
            else:
                pred = obs["eps_Sub"] * sub + obs["eps_Prod"] * prod + obs["base"]
                z.append((s.values - pred[s.index]) / obs["sigma_A405"])
    z = np.concatenate(z)
    assert len(z) == study.n_points
    # for n = 254 standard normal draws: |mean| < 4/sqrt(n) and var within ~4 sd of 1
    assert abs(z.mean()) < 4 / np.sqrt(len(z))
    assert abs(z.var() - 1) < 4 * np.sqrt(2 / len(z))
