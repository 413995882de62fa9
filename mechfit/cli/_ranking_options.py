"""Options shared by the verbs that fit candidates (``rank``, ``demo``, ``batch``)."""

from __future__ import annotations

import os


def add_budget_options(p) -> None:
    """The fitting-budget options (``--starts``, ``--max-steps``, ``--seed``)."""
    p.add_argument("--starts", type=int, default=16, help="maximum-likelihood starts")
    p.add_argument("--max-steps", type=int, default=10000,
                   help="sampling budget per walker; sampling stops earlier once it has "
                        "converged (default 10000)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")


def fit_settings_from(args):
    """The :class:`~mechfit.pipeline.FitSettings` of the options added by
    :func:`add_budget_options` (the pipeline is imported here, not when the command
    line is built, so that light verbs start quickly)."""
    from mechfit.pipeline import FitSettings

    return FitSettings(starts=args.starts, max_steps=args.max_steps, seed=args.seed)


def add_fit_options(p) -> None:
    """The options of ``rank`` and ``demo``: variants, workers, budget, refits, JSON."""
    p.add_argument("--variants", default="full",
                   help="variants per mechanism: 'full' (default), 'all', or a list such as "
                        "'full,qssa:all'")
    p.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1),
                   help="candidates fitted at once in separate processes (default: 2)")
    add_budget_options(p)
    p.add_argument("--no-refits", action="store_true",
                   help="skip exact refits for leave-one-run-out (faster, approximate)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def settings_from(args):
    from mechfit.pipeline import RankSettings

    return RankSettings(variants=args.variants, fit=fit_settings_from(args),
                        workers=max(1, args.workers), exact_refits=not args.no_refits)
