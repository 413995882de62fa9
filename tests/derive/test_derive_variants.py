"""Variant enumeration with stable names, and every shipped mechanism file."""

from __future__ import annotations

from pathlib import Path

import pytest

from mechfit import load_mechanism, parse_mechanism
from mechfit.derive import (
    DerivationError,
    derive_rate_law,
    derive_variant,
    derive_variants,
    variant_requests,
)

ROOT = Path(__file__).resolve().parents[2]
FILES = sorted((ROOT / "mechanisms").rglob("*.mech"))

INHIBITED = """bind: E + S <=> ES @ k1, k_1
cat: ES -> E + P @ k2
inh: E + I <=> EI @ k3, k_3
"""


def test_names_are_stable_and_rebuildable():
    m = parse_mechanism(INHIBITED)
    skipped: list = []
    names = [v.name for v in derive_variants(m, skipped=skipped)]
    assert names == [v.name for v in derive_variants(parse_mechanism(INHIBITED))]
    assert names == ["full", "qssa:all", "preeq:bind"]
    # a dead-end inhibitor is at equilibrium in the steady state anyway: the same model
    assert ("preeq:inh", "same as qssa:all") in skipped
    for name in names:
        rebuilt = derive_variant(m, name)
        assert rebuilt.name == name
        assert rebuilt.state == next(v for v in derive_variants(m) if v.name == name).state


def test_groups_of_independent_intermediates():
    # two separate intermediates give one single-group variant each
    m = parse_mechanism("A -> X @ k1\nX -> B @ k2\nB -> Y @ k3\nY -> C @ k4")
    names = [name for name, _ in variant_requests(m)]
    assert names == ["full", "qssa:all", "qssa:X", "qssa:B", "qssa:Y"]


def test_directive_variant_is_listed():
    m = parse_mechanism("A <=> X @ k1, k_1\nX -> B @ k2\nB <=> Y @ k3, k_3\nY -> C @ k4\n"
                        "steady: X\nfast: 3\n")
    skipped: list = []
    names = [v.name for v in derive_variants(m, skipped=skipped)]
    assert "qssa:X+preeq:3" in [name for name, _ in variant_requests(m)]
    # X in steady state with step 3 at equilibrium is exactly "step 1 rate-determining"
    assert ("qssa:X+preeq:3", "same as rds:1") in skipped
    assert names == ["full", "qssa:all", "preeq:1", "preeq:3", "rds:1", "rds:2", "rds:3"]


def test_off_cycle_catalyst_reservoir():
    # a catalyst parked off-cycle: free catalyst [Cat] = [Cat]0/(1 + K[Sub]), the
    # total a run condition (common practice for off-cycle equilibria)
    m = parse_mechanism("turn: Cat + Sub -> Cat + Prod @ k1\npark: Cat + Sub <=> Off @ k3, k_3")
    law = derive_rate_law(derive_variant(m, "preeq:park"), "Prod")
    assert law.orders["Sub"] == (1, 0)
    assert law.orders["Cat__0"] == (1, 1)


def test_unknown_variant_name():
    with pytest.raises(DerivationError, match="unknown variant name"):
        derive_variant(parse_mechanism(INHIBITED), "qssa")


def test_shipped_mechanisms_exist():
    assert FILES, "no .mech files under mechanisms/"


@pytest.mark.parametrize("path", FILES, ids=[str(p.relative_to(ROOT)) for p in FILES])
def test_every_variant_of_every_shipped_file_derives(path):
    mech = load_mechanism(path)
    skipped: list = []
    models = derive_variants(mech, skipped=skipped)
    assert models and models[0].name == "full"
    names = [m.name for m in models]
    assert len(set(names)) == len(names)
    for model in models:
        # each variant yields a rate law for some species of its state
        law = derive_rate_law(model)
        assert law.species in model.state
        if law.closed_form:
            assert law.summary()["rate"]
    for name, reason in skipped:
        assert name and reason  # every left-out candidate says why


@pytest.mark.parametrize("path", FILES, ids=[str(p.relative_to(ROOT)) for p in FILES])
def test_command_derives_every_shipped_file(path, capsys):
    import json

    from mechfit.cli import main
    from mechfit.derive import variant_name
    assert main(["derive", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    mech = load_mechanism(path)
    if mech.steady or mech.fast:  # the file's directives are the default
        assert data["variant"] == variant_name(mech, mech.steady, mech.fast)
    else:  # else steady state on everything, or the full model where that fails
        has_all = any(v.name == "qssa:all" for v in derive_variants(mech))
        assert data["variant"] == ("qssa:all" if has_all else "full")
    assert "rate" in data and "orders" in data


def test_split_variant_list_keeps_commas_inside_names():
    from mechfit.derive import split_variant_list
    assert split_variant_list("full,qssa:Br,H, preeq:init,rds:prop") == [
        "full", "qssa:Br,H", "preeq:init", "rds:prop"]
    m = parse_mechanism("A -> X @ k1\nX -> B @ k2\nB -> Y @ k3\nY -> C @ k4")
    names = [v.name for v in derive_variants(m)]
    assert split_variant_list(",".join(names)) == names
