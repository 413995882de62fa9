"""The whole job on a small invented study: rank, JSON contract, report, no overwriting."""

import json
import subprocess
import sys

import numpy as np
import pytest

from mechfit.cli import main

FIRST = "decay: A -> P @ k\n"
SECOND = "decay: 2 A -> P @ k\n"
KEYS = {"name", "variant", "n_parameters", "log_likelihood_max", "aicc", "bic", "elpd_loo",
        "elpd_loo_se", "weight", "verdict"}


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    """Invented data: first-order decay of A (k = 0.02 1/s) at three initial concentrations,
    noise 0.01 mM, seed 3 (made up for this test)."""
    folder = tmp_path_factory.mktemp("study")
    rng = np.random.default_rng(3)
    t = np.linspace(0.0, 150.0, 16)
    runs = []
    for i, a0 in enumerate([1.0, 2.0, 4.0], start=1):
        a = a0 * np.exp(-0.02 * t) + rng.normal(0.0, 0.01, t.size)
        (folder / f"r{i}.csv").write_text("time,A\n" + "".join(
            f"{x:.6g},{y:.6g}\n" for x, y in zip(t, a, strict=True)))
        runs.append(f'[[run]]\nname = "r{i}"\ninitial = {{ A = {a0} }}\ntable = "r{i}.csv"\n')
    (folder / "study.toml").write_text(
        'title = "Decay of A (invented data for a test)"\n'
        'units = { concentration = "mM", time = "s", temperature = "degC" }\n'
        "temperature = 25\n\n[observable.A]\nkind = \"concentration\"\nsigma = 0.01\n\n"
        + "\n".join(runs))
    (folder / "first.mech").write_text(FIRST)
    (folder / "second.mech").write_text(SECOND)
    return folder


FAST = ["--starts", "4", "--max-steps", "1500", "--workers", "1"]


@pytest.fixture(scope="module")
def ranked(study, tmp_path_factory):
    out = tmp_path_factory.mktemp("results") / "rank1"
    proc = subprocess.run([sys.executable, "-m", "mechfit", "rank", str(study / "study.toml"),
                           str(study / "first.mech"), str(study / "second.mech"),
                           "--out", str(out), "--json", *FAST],
                          capture_output=True, text=True, timeout=900)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return out, json.loads(proc.stdout)


def test_rank_json_contract_and_the_truth_first(ranked):
    _out, data = ranked
    cands = data["candidates"]
    assert [c["name"] for c in cands] == ["first", "second"]
    for c in cands:
        assert KEYS <= set(c)
    assert cands[0]["verdict"] == "best supported"
    assert cands[1]["verdict"] in {"clearly worse", "fails to describe the data"}
    assert cands[0]["elpd_loo"] > cands[1]["elpd_loo"]


def test_rank_writes_results_and_a_self_contained_report(ranked):
    out, _data = ranked
    for name in ("ranking.json", "ranking.md", "report.html", "report.md", "report.json"):
        assert (out / name).is_file(), name
    sub = out / "candidates" / "first__full"
    assert (sub / "posterior.nc").is_file() and (sub / "fit.json").is_file()
    html = (out / "report.html").read_text()
    assert "https://" not in html and "<script src" not in html
    assert "process-safety" in html


def test_report_rebuilds_from_the_folder_and_never_overwrites(ranked, tmp_path, capsys):
    out, _data = ranked
    assert main(["report", str(out)]) == 2  # a report is there already
    err = capsys.readouterr().err
    assert "already holds a report" in err and "--overwrite" in err
    assert main(["report", str(out), "--out", str(tmp_path / "again")]) == 0
    assert (tmp_path / "again" / "report.html").is_file()


def test_rank_refuses_a_folder_with_results(ranked, study, capsys):
    out, _data = ranked
    code = main(["rank", str(study / "study.toml"), str(study / "first.mech"), "--out",
                 str(out), *FAST])
    assert code == 2
    assert "holds results already" in capsys.readouterr().err


def test_rank_needs_mechanisms(study, capsys):
    assert main(["rank", str(study / "study.toml")]) == 2
    assert "give one or more candidate mechanism files" in capsys.readouterr().err


def test_exact_refit_agrees_with_the_psis_estimate_of_a_well_behaved_run(study):
    """log p(y_run | other runs) by refitting without the run, against PSIS on run sums
    (Vehtari, Gelman & Gabry 2017, sec. 2.1: both estimate the same quantity; PSIS is
    reliable when its Pareto k is small)."""
    import mechfit
    from mechfit.compare.run_loo import leave_one_run_out
    from mechfit.pipeline import FitSettings, evaluate_candidate
    from mechfit.pipeline.ranking_run import _held_out_density

    s = mechfit.load_study(study / "study.toml")
    fast = FitSettings(starts=4, max_steps=1500)
    outcome = evaluate_candidate(s, mechfit.load_mechanism(study / "first.mech"), "full", fast)
    assert outcome.ok, outcome.reason
    psis = leave_one_run_out(outcome.idata, "y", outcome.point_runs)
    i = list(psis.labels).index("r2")
    exact = _held_out_density(s, outcome, "r2", fast)
    assert np.isfinite(exact)
    if psis.pareto_k[i] < 0.7:
        assert abs(exact - psis.pointwise[i]) < 3.0
