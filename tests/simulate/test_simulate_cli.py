"""The ``mechfit simulate`` verb."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np

from mechfit.cli import main

ROOT = Path(__file__).resolve().parents[2]
ENZYME = str(ROOT / "mechanisms" / "classic" / "michaelis_menten.mech")


def test_table_has_time_and_every_species(capsys):
    code = main(["simulate", ENZYME, "--full", "--set", "k1=10,k_1=1,k2=2",
                 "--initial", "E=0.01,S=1", "--until", "60", "--points", "5"])
    out = capsys.readouterr().out
    assert code == 0
    lines = [ln for ln in out.splitlines() if not ln.startswith("#")]
    assert lines[0].split() == ["time", "E", "S", "ES", "P"]
    assert len(lines) == 6
    assert "caution" in out


def test_csv_and_json_agree_with_the_api(tmp_path, capsys):
    target = tmp_path / "run.csv"
    code = main(["simulate", ENZYME, "--steady", "ES", "--set", "k1=10,k_1=1,k2=2",
                 "--initial", "E=0.01,S=1", "--until", "30", "--points", "4",
                 "--csv", str(target), "--json"])
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    assert data["model"] == "qssa:ES"
    rows = list(csv.reader(target.open()))
    assert rows[0] == ["time", "E", "S", "ES", "P"]
    s = [float(r[2]) for r in rows[1:]]
    assert np.allclose(s, data["concentrations"]["S"], rtol=1e-9)
    # S + ES + P stays at [S]0 = 1 in the steady-state model too
    total = np.add(np.add(data["concentrations"]["S"], data["concentrations"]["ES"]),
                   data["concentrations"]["P"])
    assert np.allclose(total[1:], 1.0, rtol=1e-2)
    # never overwrites
    assert main(["simulate", ENZYME, "--set", "k1=10,k_1=1,k2=2", "--until", "1",
                 "--csv", str(target)]) == 2
    assert "does not overwrite" in capsys.readouterr().err


def test_bad_input_exits_2_with_message(capsys):
    assert main(["simulate", ENZYME, "--set", "k1=10,k2=2", "--until", "5"]) == 2
    assert "no value for parameter(s) k_1" in capsys.readouterr().err
    assert main(["simulate", ENZYME, "--set", "k1=ten", "--until", "5"]) == 2
    assert "expected a number" in capsys.readouterr().err
    assert main(["simulate", ENZYME, "--set", "k1=1,k_1=1,k2=1", "--initial", "Q=1",
                 "--until", "5"]) == 2
    assert "unknown species Q" in capsys.readouterr().err


def test_failed_integration_exits_1(tmp_path, capsys):
    steps = tmp_path / "blowup.mech"
    steps.write_text("X -> 2 X @ rate = k*[X]^2\n")
    code = main(["simulate", str(steps), "--set", "k=1", "--initial", "X=1", "--until", "5"])
    assert code == 1
    assert "blowup.mech" in capsys.readouterr().err
