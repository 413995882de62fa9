"""Deviation of reduced variants from the full model, against known validity conditions."""

from mechfit import parse_mechanism
from mechfit.derive import derive_variant
from mechfit.simulate import deviation_from_full

MM = parse_mechanism("bind: E + S <=> ES @ k1, k_1\nturn: ES -> E + P @ k2")
K = {"k1": 100.0, "k_1": 1.0, "k2": 10.0}


def test_steady_state_holds_when_enzyme_is_scarce_and_fails_when_it_is_not():
    """The steady-state approximation of Michaelis-Menten kinetics needs E0 << S0 + Km
    (L. A. Segel and M. Slemrod, SIAM Rev. 31 (1989) 446, eq. 3.9; recalled from memory)."""
    qssa = derive_variant(MM, "qssa:all")
    scarce, _ = deviation_from_full(qssa, K, {"E": 1e-3, "S": 1.0}, 5.0)
    plenty, species = deviation_from_full(qssa, K, {"E": 1.0, "S": 1.0}, 5.0)
    assert scarce < 0.01
    assert plenty > 0.05 and species in MM.species


def test_full_model_deviates_from_itself_by_nothing():
    full = derive_variant(MM, "full")
    dev, _ = deviation_from_full(full, K, {"E": 0.1, "S": 1.0}, 5.0)
    assert dev < 1e-9
