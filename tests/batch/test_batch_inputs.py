"""``mechfit batch`` refuses bad input up front (exit 2, the file named), and the store key
follows the study's content."""

import pytest

from mechfit.batch.evaluation import study_content
from mechfit.cli import main
from mechfit.study import load_study

STUDY = ('title = "Decay of A (invented data for a test)"\n'
         'units = { concentration = "mM", time = "s", temperature = "degC" }\n'
         'temperature = 25\n\n[observable.A]\nkind = "concentration"\nsigma = 0.01\n\n'
         '[[run]]\nname = "r1"\ninitial = { A = 1.0 }\ntable = "r1.csv"\n')
TABLE = "time,A\n0,1.0\n10,0.82\n20,0.67\n40,0.45\n"


@pytest.fixture
def folder(tmp_path):
    (tmp_path / "study.toml").write_text(STUDY)
    (tmp_path / "r1.csv").write_text(TABLE)
    (tmp_path / "good.mech").write_text("decay: A -> P @ k\n")
    (tmp_path / "broken.mech").write_text("decay: A -> P @ k\nA + -> P @ k2\n")
    (tmp_path / "other.mech").write_text("decay: B -> P @ k\n")
    return tmp_path


def run_cli(folder, *args):
    return main(["batch", str(folder / "study.toml"), *args,
                 "--store", str(folder / "s.sqlite")])


def test_a_malformed_scheme_is_bad_input_naming_the_file_and_line(folder, capsys):
    assert run_cli(folder, str(folder / "good.mech"), str(folder / "broken.mech")) == 2
    err = capsys.readouterr().err
    assert "broken.mech:2" in err and "Traceback" not in err
    assert not (folder / "s.sqlite").exists()  # nothing was started


def test_a_scheme_that_does_not_match_the_study_is_bad_input(folder, capsys):
    assert run_cli(folder, str(folder / "other.mech")) == 2
    assert "Traceback" not in capsys.readouterr().err


def test_option_errors(folder, capsys):
    good = str(folder / "good.mech")
    assert run_cli(folder, good, "--max-extras", "1") == 2
    assert "--max-extras needs --extras" in capsys.readouterr().err
    assert run_cli(folder, good, good) == 2
    assert "two schemes share a name: good" in capsys.readouterr().err
    assert run_cli(folder, good, "--cluster", "remote:2") == 2
    assert "expected 'local:N'" in capsys.readouterr().err


def test_store_key_content_follows_the_data_not_the_path(folder, tmp_path_factory):
    before = study_content(load_study(folder / "study.toml"))
    moved = tmp_path_factory.mktemp("moved")
    for name in ("study.toml", "r1.csv"):
        (moved / name).write_text((folder / name).read_text())
    assert study_content(load_study(moved / "study.toml")) == before
    (folder / "r1.csv").write_text(TABLE.replace("0.67", "0.68"))
    assert study_content(load_study(folder / "study.toml")) != before
