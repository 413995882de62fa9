"""Design choices whose answers are known from theory (closed-form candidate models).

The criterion is that of G. E. P. Box and W. J. Hill, Technometrics 9 (1967) 57. The
expected answers: a saturating and a linear rate law agree at low substrate and can only
be told apart where saturation shows, at high substrate (common practice in enzyme
kinetics; e.g. A. Cornish-Bowden, Fundamentals of Enzyme Kinetics, 4th ed. 2012, ch. 2);
first- and second-order decays fitted at one initial concentration are told apart by
changing the initial concentration widely, since only the second-order half-life depends
on it (P. Atkins and J. de Paula, Physical Chemistry, 9th ed. 2010, table 21.3; recalled
from memory).
"""

import numpy as np

from mechfit.design.criteria import box_hill, d_optimal
from mechfit.design.search import greedy_runs, search
from mechfit.design.space import DesignSpace

RNG = np.random.default_rng(7)
TIMES = np.linspace(0.0, 10.0, 11)


def saturating(S0, draws):
    vmax, km = draws[:, :1], draws[:, 1:2]
    return vmax * S0 / (km + S0)


def linear(S0, draws):
    return draws[:, :1] * S0


def test_saturation_is_discriminated_at_high_substrate():
    # both candidates describe the low-substrate data: vmax/km = k = 0.2
    sat = np.column_stack([RNG.normal(1.0, 0.02, 200), RNG.normal(5.0, 0.1, 200)])
    lin = RNG.normal(0.2, 0.004, (200, 1))
    space = DesignSpace.parse(["S=0.1:100"])

    def criterion(d):
        return box_hill([saturating(d["S"], sat), linear(d["S"], lin)], noise=0.02)

    best = search(criterion, space, n_initial=32, seed=3)[0]
    assert best.values["S"] > 50.0  # far above Km = 5
    assert criterion({"S": 0.2}) < 0.01 * best.score


def first_order(A0, k):
    return A0 * np.exp(-k[:, None] * TIMES[None, :])


def second_order(A0, k):
    return A0 / (1.0 + k[:, None] * A0 * TIMES[None, :])


def test_first_against_second_order_leads_far_from_the_studied_concentration():
    # fitted at A0 = 1: equal half-lives, ln2/k1 = 1/(k2*A0)
    k1 = RNG.normal(0.3, 0.003, 200)
    k2 = RNG.normal(0.3 / np.log(2.0), 0.003, 200)
    space = DesignSpace.parse(["A=0.01:100"])

    def criterion(d):
        # relative noise of 2 %: compare shapes, not sizes
        a, b = first_order(d["A"], k1), second_order(d["A"], k2)
        return box_hill([a, b], noise=0.02 * d["A"])

    best = search(criterion, space, n_initial=32, seed=5)[0]
    assert not 0.1 < best.values["A"] < 10.0
    assert best.score > 10 * criterion({"A": 1.0})


def test_identical_candidates_give_about_zero():
    k = RNG.normal(0.3, 0.003, (2, 400))
    value = box_hill([first_order(1.0, k[0]), first_order(1.0, k[1])], noise=0.01)
    reference = box_hill([first_order(1.0, k[0]), second_order(1.0, k[1] / np.log(2.0))],
                         noise=0.01)
    assert value < 1e-3 * reference
    same = first_order(1.0, k[0])
    assert box_hill([same, same], noise=0.01) == 0.0


def test_greedy_second_run_adds_information():
    k1 = RNG.normal(0.3, 0.003, 100)
    k2 = RNG.normal(0.3 / np.log(2.0), 0.003, 100)
    space = DesignSpace.parse(["A=0.01:100"])

    def of_set(designs):
        a = np.hstack([first_order(d["A"], k1) / d["A"] for d in designs])
        b = np.hstack([second_order(d["A"], k2) / d["A"] for d in designs])
        return box_hill([a, b], noise=0.02)

    runs = greedy_runs(of_set, space, 2, n_initial=16, seed=1)
    assert len(runs) == 2 and runs[1].score >= runs[0].score


def test_d_optimal_prefers_informative_times():
    """For y = A exp(-k t), the information on ln k is largest near t = 1/k (Atkinson, Donev
    and Tobias, Optimum Experimental Designs, 2007, ch. 17; recalled from memory)."""
    k = 0.5

    def jac(t):
        t = np.atleast_1d(t)
        y = np.exp(-k * t)
        return np.column_stack([y, -k * t * y])  # d/d ln A, d/d ln k

    early = d_optimal(jac([0.0, 0.1]), 0.01)
    spread = d_optimal(jac([0.0, 2.0]), 0.01)
    assert spread > early
    assert np.isfinite(d_optimal(jac([1.0]), 0.01, prior_information=np.eye(2)))
