"""docs/ranking.md documents every key of Ranking.summary(), and the package's docstring
examples run."""

import doctest
import importlib
import pkgutil
from pathlib import Path

import arviz as az
import numpy as np
import pytest
from scipy.stats import norm

import mechfit.compare
from mechfit.compare import Candidate, rank_candidates

ROOT = Path(__file__).resolve().parents[2]


def _ranking():
    # constant-level data in two runs; candidates: the right level and a level off by 2 sigma
    rng = np.random.default_rng(0)
    y = rng.normal(1.0, 0.1, 24)
    runs = ["a"] * 12 + ["b"] * 12
    out = []
    for name, offset in (("right", 0.0), ("off", 0.2)):
        mu = rng.normal(y.mean() + offset, 0.1 / np.sqrt(24), (4, 300))
        loglik = norm.logpdf(y, mu[..., None], 0.1)
        out.append(Candidate(name, "full", az.from_dict(posterior={"mu": mu},
                                                        log_likelihood={"y": loglik}),
                             "y", runs, float(norm.logpdf(y, y.mean() + offset, 0.1).sum()),
                             1, 24, {"a": (y - y.mean() - offset)[:12],
                                     "b": (y - y.mean() - offset)[12:]},
                             approximation_deviation=0.01, approximation_threshold=0.05))
    return rank_candidates(out)


def test_every_summary_key_is_documented():
    doc = (ROOT / "docs" / "ranking.md").read_text(encoding="utf-8")
    summary = _ranking().summary()
    row = summary["candidates"][0]
    residual = row["residuals"]
    series = next(iter(residual["series"].values()))
    keys = (set(summary) | set(row) | set(residual) | set(series) | set(series["runs_test"])
            | set(row["approximation"]))
    missing = sorted(k for k in keys if f"`{k}`" not in doc)
    assert not missing, f"docs/ranking.md does not document {missing}"
    assert summary["candidates"][0]["name"] == "right"
    # a level 2 sigma off leaves residuals mostly of one sign in both runs
    assert summary["candidates"][1]["verdict"] == "fails to describe the data"
    assert summary["candidates"][1]["structured_residuals"]


@pytest.mark.parametrize("name", sorted(m.name for m in pkgutil.iter_modules(
    mechfit.compare.__path__)))
def test_docstring_examples_run(name):
    module = importlib.import_module(f"mechfit.compare.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0
