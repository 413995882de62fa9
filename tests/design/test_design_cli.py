"""``mechfit design`` on a results folder built from constructed posterior draws.

The folder has the layout ``mechfit rank`` writes (ranking.json, candidates/<folder>/
{posterior.nc, mechanism.mech}); the draws are invented around k1 = 0.02 1/s (first
order) and a second-order constant with the same half-life at 1 mM (see
test_design_simulated.py for the theory and its source).
"""

import json
import re
from pathlib import Path

import arviz
import numpy as np
import pytest

from mechfit.cli import main
from mechfit.design.predict import load_candidates
from mechfit.design.suggestions import design_suggestions
from mechfit.errors import MechfitError

DOCS = Path(__file__).resolve().parents[2] / "docs" / "design.md"
FIRST = "decay: A -> P @ k\n"
SECOND = "decay: 2 A -> P @ k\n"


@pytest.fixture(scope="module")
def folders(tmp_path_factory):
    root = tmp_path_factory.mktemp("design")
    rng = np.random.default_rng(5)
    t = np.linspace(0.0, 150.0, 16)
    (root / "r1.csv").write_text("time,A\n" + "".join(
        f"{x:.6g},{np.exp(-0.02 * x):.6g}\n" for x in t))
    (root / "study.toml").write_text(
        'title = "invented data for a design test"\n'
        'units = { concentration = "mM", time = "s", temperature = "degC" }\n'
        'temperature = 25\n\n[observable.A]\nkind = "concentration"\nsigma = 0.01\n\n'
        '[[run]]\nname = "r1"\ninitial = { A = 1.0 }\ntable = "r1.csv"\n')
    results = root / "results"
    k2 = 0.02 / np.log(2.0) / 2e-3
    entries = []
    for name, text, k, weight in (("first", FIRST, 0.02, 0.6), ("second", SECOND, k2, 0.2),
                                  ("third", FIRST, 0.03, 0.0)):
        sub = results / "candidates" / f"{name}__full"
        sub.mkdir(parents=True)
        (sub / "mechanism.mech").write_text(text)
        draws = k * rng.normal(1.0, 0.01, (2, 60))
        arviz.from_dict(posterior={"k": draws}).to_netcdf(str(sub / "posterior.nc"))
        entries.append({"name": name, "variant": "full", "folder": f"{name}__full",
                        "weight": weight})
    (results / "ranking.json").write_text(json.dumps({
        "candidates": entries,
        "leading_set": [{"name": "first", "variant": "full"},
                        {"name": "second", "variant": "full"}]}))
    return root / "study.toml", results


def test_leading_set_and_renormalised_weights(folders):
    _, results = folders
    chosen = load_candidates(results, draws=50)
    assert [c.name for c in chosen] == ["first", "second"]
    assert np.allclose([c.weight for c in chosen], [0.75, 0.25])
    assert chosen[0].n_draws == 50
    three = load_candidates(results, count=3, draws=10)
    assert [c.name for c in three] == ["first", "second", "third"]
    assert np.allclose([c.weight for c in three], [0.75, 0.25, 0.0])
    equal = load_candidates(results, count=3, draws=10, weighting="equal")
    assert np.allclose([c.weight for c in equal], 1 / 3)


def test_one_positive_stacking_weight_falls_back_to_equal_weights(folders, tmp_path):
    import shutil

    _, results = folders
    copy = tmp_path / "results"
    shutil.copytree(results / "candidates", copy / "candidates")
    ranking = json.loads((results / "ranking.json").read_text())
    for c, w in zip(ranking["candidates"], (1.0, 0.0, 0.0), strict=True):
        c["weight"] = w
    (copy / "ranking.json").write_text(json.dumps(ranking))
    chosen = load_candidates(copy, count=2, draws=10)
    assert np.allclose([c.weight for c in chosen], [0.5, 0.5])


def test_json_keys_are_documented_and_results_are_kept(folders, capsys):
    study, results = folders
    ranking = (results / "ranking.json").read_text()
    args = ["design", str(study), "--results", str(results), "--vary", "A=0.01:100",
            "--sobol", "8", "--draws", "40", "--json"]
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    documented = set(re.findall(r"^\| `([a-z_]+)` \|", DOCS.read_text(), flags=re.M))
    assert set(data) <= documented and {"proposals", "design_suggestions"} <= set(data)
    proposal = data["proposals"][0]
    assert not 0.1 < proposal["values"]["A"] < 10.0 and proposal["score"] > 0
    curves = {c["candidate"]: c["observables"]["A"] for c in proposal["curves"]}
    assert set(curves) == {"first [full]", "second [full]"}
    for c in curves.values():
        assert all(lo <= m <= hi for lo, m, hi in zip(c["low"], c["median"], c["high"],
                                                      strict=True))
    assert any("Next run 1" in s for s in data["design_suggestions"])
    assert json.loads((results / "design.json").read_text())["proposals"][0]["values"] == \
        proposal["values"]
    assert (results / "ranking.json").read_text() == ranking
    assert design_suggestions(results) == data["design_suggestions"]
    # a second design refuses to replace design.json without --overwrite
    assert main(args) == 2
    assert "--overwrite" in capsys.readouterr().err
    assert main(args + ["--overwrite", "--mode", "precision"]) == 0
    assert json.loads(capsys.readouterr().out)["mode"] == "precision"


@pytest.mark.parametrize("vary, message", [
    (["A=5:1"], "upper limit must exceed"),
    (["A=x:1"], "is not a number"),
    (["A"], "expected NAME=LOW:HIGH"),
    (["points=2:9"], "give points as a list"),
    (["Z=1:10"], "not a species of the candidates"),
    ([], "no design variables"),
])
def test_bad_vary_gives_exit_2_and_a_clear_message(folders, capsys, vary, message):
    study, results = folders
    args = ["design", str(study), "--results", str(results), "--overwrite"]
    for v in vary:
        args += ["--vary", v]
    assert main(args) == 2
    assert message in capsys.readouterr().err


def test_bad_measure_and_missing_results(folders, capsys, tmp_path):
    study, results = folders
    base = ["design", str(study), "--vary", "A=0.1:10", "--overwrite"]
    assert main(base + ["--results", str(results), "--measure", "B=0.1"]) == 2
    assert "not an observable" in capsys.readouterr().err
    assert main(base + ["--results", str(results), "--measure", "A=-1"]) == 2
    assert "positive standard deviation" in capsys.readouterr().err
    assert main(base + ["--results", str(tmp_path)]) == 2
    assert "no ranking.json" in capsys.readouterr().err


@pytest.mark.parametrize("vary, message", [
    ("duration=0:100", "run length must be > 0"),
    ("temperature=-300:20", "below absolute zero"),
])
def test_impossible_conditions_are_refused(folders, capsys, vary, message):
    study, results = folders
    assert main(["design", str(study), "--results", str(results), "--overwrite",
                 "--vary", vary]) == 2
    assert message in capsys.readouterr().err


def test_text_output_names_the_run_and_the_file(folders, capsys):
    study, results = folders
    assert main(["design", str(study), "--results", str(results), "--vary", "A=0.01:100",
                 "--sobol", "8", "--draws", "20", "--overwrite"]) == 0
    out = capsys.readouterr().out
    assert "proposed run 1: A = " in out and "first [full]" in out and "second [full]" in out
    assert "process-safety" in out and f"written: {results / 'design.json'}" in out


def test_a_broken_design_file_is_reported(tmp_path):
    (tmp_path / "design.json").write_text("{}")
    with pytest.raises(MechfitError, match="not a design written by mechfit design"):
        design_suggestions(tmp_path)
