"""``mechfit derive``: the JSON contract, directives as defaults, exit codes."""

from __future__ import annotations

import json

import pytest
import sympy

from mechfit.cli import main
from mechfit.derive import derive_rate_law, steady_state_model
from mechfit.mechanism import parse_mechanism
from mechfit.mechanism.symbols import concentration, initial_concentration, rate_constant

ENZYME = """# enzyme with a directive (invented example)
bind: E + S <=> ES @ k1, k_1
cat: ES -> E + P @ k2
steady: ES
"""

CHARGED = """# proton-catalysed isomerisation with charged species (invented example)
prot: A + H+ <=> AH+ @ k1, k_1
turn: AH+ -> B + H+ @ k2
"""


@pytest.fixture
def enzyme_file(tmp_path):
    p = tmp_path / "enzyme.mech"
    p.write_text(ENZYME)
    return str(p)


def run_json(capsys, *argv):
    code = main(["derive", *argv, "--json"])
    out = capsys.readouterr().out
    return code, json.loads(out)


def test_json_keys_and_parsable_rate(capsys, enzyme_file):
    code, data = run_json(capsys, enzyme_file)
    assert code == 0
    for key in ("rate", "latex", "lumped", "orders", "assumptions", "variant"):
        assert key in data
    assert data["variant"] == "qssa:ES"  # the file's directive is the default
    # the rate parses with sympy's own parser; names map back through "names"
    parsed = sympy.sympify(data["rate"])
    back = {sympy.Symbol(safe): sympy.Symbol(orig) for safe, orig in data["names"].items()}
    parsed = parsed.xreplace(back)
    k1, km1, k2, e0, s = sympy.symbols("k1 k_1 k2 E__0 S")
    published = k2 * e0 * s / ((km1 + k2) / k1 + s)
    assert sympy.simplify(parsed - published) == 0
    assert data["orders"]["S"] == {"low": 1, "high": 0}
    assert set(data["lumped"]) == {"a1", "b1"}
    assert all(isinstance(a, str) for a in data["assumptions"])
    assert data["latex"].startswith(r"\frac{d[\mathrm{P}]}{dt} = ")


def test_options_override_directives(capsys, enzyme_file):
    code, data = run_json(capsys, enzyme_file, "--fast", "bind")
    assert code == 0 and data["variant"] == "qssa:ES+preeq:bind"
    code, data = run_json(capsys, enzyme_file, "--steady", "none", "--fast", "bind")
    assert code == 0 and data["variant"] == "preeq:bind"
    code, data = run_json(capsys, enzyme_file, "--steady", "none")
    assert code == 0 and data["variant"] == "full"
    code, data = run_json(capsys, enzyme_file, "--rds", "cat", "--for", "S")
    assert code == 0 and data["variant"] == "rds:cat" and data["quantity"] == "-d[S]/dt"


def test_charged_species_get_safe_names(capsys, tmp_path):
    p = tmp_path / "charged.mech"
    p.write_text(CHARGED)
    code, data = run_json(capsys, str(p), "--for", "B")
    assert code == 0
    parsed = sympy.sympify(data["rate"])
    assert {s.name for s in parsed.free_symbols} <= set(data["names"])
    assert data["names"]["H_p__0"] == "H+__0"  # [H+]0, the total acid
    # same law as the library gives, after mapping names back
    law = derive_rate_law(steady_state_model(parse_mechanism(CHARGED)), "B")
    back = {sympy.Symbol(s): sympy.Symbol(o, positive=True) for s, o in data["names"].items()}
    assert sympy.simplify(parsed.xreplace(back) - law.rate) == 0
    expected = (rate_constant("k1") * rate_constant("k2") * concentration("A")
                * initial_concentration("H+"))
    assert sympy.simplify(sympy.fraction(sympy.together(law.rate))[0] - expected) == 0


def test_text_and_latex_output(capsys, enzyme_file):
    code = main(["derive", enzyme_file, "--latex"])
    out = capsys.readouterr().out
    assert code == 0
    assert "d[P]/dt = " in out and "latex:" in out and "caution:" in out
    assert "[S]: 1, 0" in out


def test_all_variants_json(capsys, enzyme_file):
    code, data = run_json(capsys, enzyme_file, "--variants")
    assert code == 0
    names = [v["variant"] for v in data["variants"]]
    assert names[:3] == ["full", "qssa:all", "preeq:bind"]
    assert {s["variant"] for s in data["skipped"]} >= {"rds:cat"}


@pytest.mark.parametrize("argv, message", [
    (["--steady", "S"], "'S' is not an intermediate"),
    (["--fast", "cat"], "one-way"),
    (["--steady", "Q"], "unknown species 'Q'"),
    (["--for", "Q"], "unknown species 'Q'"),
    (["--fast", "nope"], "unknown step 'nope'"),
    (["--variant", "qssa:ES", "--rds", "cat"], "cannot be combined"),
    (["--variant", "sideways"], "unknown variant name"),
    (["--for", "ES"], "eliminated in variant"),
])
def test_bad_requests_exit_2(capsys, enzyme_file, argv, message):
    code = main(["derive", enzyme_file, *argv])
    err = capsys.readouterr().err
    assert code == 2
    assert message in err
    assert "Traceback" not in err


def test_missing_file_exits_2(capsys, tmp_path):
    code = main(["derive", str(tmp_path / "absent.mech")])
    assert code == 2
    assert "absent.mech" in capsys.readouterr().err
