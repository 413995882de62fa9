"""``mechfit check`` with a study file; the .mech branch keeps its behaviour."""

import json

from mechfit.cli import main
from mechfit.demo import candidate_paths, study_path
from mechfit.mechanism import analyse_network, load_mechanism


def test_check_study_json_is_one_object(capsys):
    args = ["check", str(study_path())]
    for p in candidate_paths():
        args += ["--mechanism", str(p)]
    assert main(args + ["--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["kind"] == "study"
    assert out["study"]["n_runs"] == 11
    assert [m["name"] for m in out["mechanisms"]] == [p.stem for p in candidate_paths()]
    sat = next(m for m in out["mechanisms"] if m["name"] == "saturation")
    assert sat["parameters"]["kinetic"] == ["k1", "Ea_k1", "k_1", "Ea_k_1", "k2", "Ea_k2"]
    assert sat["notes"] == []


def test_check_study_text(capsys):
    path = next(p for p in candidate_paths() if p.stem == "saturation")
    assert main(["check", str(study_path()), "--mechanism", str(path)]) == 0
    text = capsys.readouterr().out
    assert "11 runs, 254 data points" in text
    assert "mechanism saturation" in text and "ok; 9 fitted parameters" in text
    assert "units in the file: concentration mM, time min, temperature degC" in text


def test_check_mech_file_is_unchanged(capsys):
    path = candidate_paths()[0]
    assert main(["check", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out == json.loads(json.dumps(analyse_network(load_mechanism(path)).summary()))


def test_mechanism_option_needs_a_study(capsys):
    path = str(candidate_paths()[0])
    assert main(["check", path, "--mechanism", path]) == 2
    assert "--mechanism goes with a study file" in capsys.readouterr().err


def test_a_prior_no_mechanism_uses_is_an_error(tmp_path, capsys):
    text = study_path().read_text().replace(
        "[prior]\n", '[prior]\nk_2 = { distribution = "normal", mean = 1, sd = 1 }\n')
    for f in study_path().parent.glob("*.csv"):
        (tmp_path / f.name).write_text(f.read_text())
    (tmp_path / "study.toml").write_text(text)
    path = next(p for p in candidate_paths() if p.stem == "saturation")
    code = main(["check", str(tmp_path / "study.toml"), "--mechanism", str(path)])
    assert code == 2
    assert "k_2 (in temperature_law or prior) is not a parameter of any mechanism" in \
        capsys.readouterr().err
