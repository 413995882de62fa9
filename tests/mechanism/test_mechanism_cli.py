"""The `mechfit check` verb on steps files."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from mechfit.cli import main

ROOT = Path(__file__).resolve().parents[2]
MECH_FILES = sorted((ROOT / "mechanisms").rglob("*.mech"))
JSON_KEYS = {"species", "steps", "constants", "intermediates", "conservation_laws", "cycles",
             "deficiency", "warnings"}


def test_there_are_at_least_12_classic_files():
    assert len(list((ROOT / "mechanisms" / "classic").glob("*.mech"))) >= 12


@pytest.mark.parametrize("path", MECH_FILES, ids=lambda p: p.name)
def test_check_works_on_every_shipped_file(path, capsys):
    assert main(["check", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert JSON_KEYS <= set(data)
    if path.parent.name == "classic":
        assert "# Source:" in path.read_text(), "each classic file names its published source"


def test_check_text_summary(capsys):
    assert main(["check", str(ROOT / "mechanisms/classic/michaelis_menten.mech")]) == 0
    out = capsys.readouterr().out
    assert "intermediates: E, ES" in out
    assert "E + ES = const" in out
    assert "deficiency: 0" in out


def test_check_json_contract(capsys):
    main(["check", str(ROOT / "mechanisms/classic/triangle_cycle.mech"), "--json"])
    data = json.loads(capsys.readouterr().out)
    assert data["species"] == ["A", "B", "C"]
    assert [s["label"] for s in data["steps"]] == ["ab", "bc", "ca"]
    assert [c["name"] for c in data["constants"]] == ["k1", "k_1", "k2", "k_2", "k3", "k_3"]
    assert data["cycles"] == [{"steps": {"ab": 1, "bc": 1, "ca": 1},
                               "condition": "k1*k2*k3 = k_1*k_2*k_3"}]
    assert data["deficiency"] == 0 and data["weakly_reversible"] is True
    assert data["conservation_laws"] == [{"weights": {"A": 1, "B": 1, "C": 1},
                                          "text": "A + B + C", "nonnegative": True}]


def test_bad_file_exits_2_without_traceback(tmp_path):
    bad = tmp_path / "bad.mech"
    bad.write_text("A -> B @ k1\nA + B => C\n")
    proc = subprocess.run([sys.executable, "-m", "mechfit", "check", str(bad)],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert f"{bad}:2:7: unknown arrow '=>'" in proc.stderr
    assert proc.stdout == ""


def test_missing_file_exits_2(tmp_path, capsys):
    assert main(["check", str(tmp_path / "nope.mech")]) == 2
    assert "file not found" in capsys.readouterr().err
