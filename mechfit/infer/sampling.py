"""Posterior sampling with emcee's affine-invariant ensemble, run until converged or out of budget.

Foreman-Mackey, Hogg, Lang and Goodman, "emcee: The MCMC Hammer", PASP 125 (2013) 306;
Goodman and Weare, "Ensemble samplers with affine invariance", Commun. Appl. Math.
Comput. Sci. 5 (2010) 65.

The walkers start in a small ball around the maximum-likelihood point (a Gaussian of
1e-3 times the asymptotic standard deviations in the free space). The log posterior
is evaluated for all walkers in one call (``vectorize=True``).

Moves: by default (``moves="independence"``) a burn-in of differential-evolution
proposals (80 %, ter Braak, "A Markov chain Monte Carlo version of the genetic algorithm
Differential Evolution", Stat. Comput. 16 (2006) 239, with gamma = 2.38 / sqrt(2 q)) and
snooker updates (20 %, ter Braak and Vrugt, "Differential evolution Markov chain with
snooker updater and fewer chains", Stat. Comput. 18 (2008) 435), both as emcee provides
them; then a Student-t fitted to the burn-in serves as an independence
Metropolis-Hastings proposal (:mod:`mechfit.infer.independence`), tried and fitted again
until it is good enough or stops improving, then frozen and mixed with the same
differential-evolution moves for the chain that is kept. On the demo's saturation scheme
(9 free parameters) the autocorrelation time falls from about 40 steps (``moves="de"``,
differential evolution throughout; 90 for the stretch move, ``moves="stretch"``) to 3.
All work with 2 q + 2 walkers (emcee's ensemble moves need at least 2 q).

The sampler runs in chunks; after each chunk the chain is judged by
:func:`mechfit.infer.diagnostics.judge` (run length >= 50 tau, R-hat <= 1.01, bulk and
tail ESS >= 400). Split R-hat over walkers falls roughly as ``R^2 - 1 ~ 2 tau / n``
for chains of n steps, so the next check is placed where that extrapolation reaches
the threshold (at least one chunk later, at most 1.5 times the steps so far). The
sampler stops when the rules are met, or when the budget of steps is spent, and
then says plainly that it did not converge. No blobs are carried (they do not work
with ``vectorize=True``, dfm/emcee issue 516): pointwise log-likelihoods are computed
on the kept draws afterwards (:mod:`mechfit.infer.inference_data`).

:func:`sample_steps` is the work as a generator of :class:`SamplingProgress` events;
:func:`sample_posterior` is the thin runner that drives it, optionally with a
progress bar.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import numpy as np

from mechfit.errors import MechfitError
from mechfit.infer.diagnostics import ESS_MIN, RHAT_MAX, TAU_FACTOR, Convergence, judge
from mechfit.infer.errors import FitFailure
from mechfit.infer.likelihood import Likelihood


@dataclass(frozen=True)
class SamplingSettings:
    """How long and how wide to sample.

    Attributes
    ----------
    walkers
        Ensemble size (``None``: max(16, 2 q + 2) rounded up to even).
    moves
        ``"independence"`` (the default: ``adapt`` steps of differential evolution, then
        a Student-t independence proposal fitted to their second half, mixed with
        differential evolution), ``"de"`` (differential evolution with snooker updates
        throughout) or ``"stretch"`` (emcee's stretch move).
    adapt
        Burn-in steps before the independence proposal is fitted (discarded).
    chunk
        Steps between convergence checks.
    max_steps
        Budget of steps per walker.
    min_steps
        Steps before the first check.
    ball
        Width of the starting ball, in asymptotic standard deviations.
    seed
        Seed of the random generator (starting ball and moves).
    rhat_max, ess_min, tau_factor
        Convergence rules (defaults in :mod:`mechfit.infer.diagnostics`).
    report_every
        Steps between progress events.
    """

    walkers: int | None = None
    moves: str = "independence"
    adapt: int = 200
    chunk: int = 200
    max_steps: int = 20000
    min_steps: int = 300
    ball: float = 1e-3
    seed: int | None = 0
    rhat_max: float = RHAT_MAX
    ess_min: float = ESS_MIN
    tau_factor: float = TAU_FACTOR
    report_every: int = 50

    def __post_init__(self) -> None:
        for name in ("chunk", "max_steps", "min_steps", "report_every", "adapt"):
            if int(getattr(self, name)) < 1:
                raise MechfitError(f"sampling settings: {name} must be >= 1, "
                                 f"got {getattr(self, name)!r}")
        if self.walkers is not None and self.walkers < 2:
            raise MechfitError(f"sampling settings: walkers must be >= 2, got {self.walkers!r}")
        if self.moves not in MOVES:
            raise MechfitError(f"sampling settings: moves must be one of {', '.join(MOVES)}, "
                               f"got {self.moves!r}")
        if not self.ball > 0:
            raise MechfitError(f"sampling settings: ball must be > 0, got {self.ball!r}")

    def walker_count(self, q: int) -> int:
        n = self.walkers if self.walkers is not None else max(16, 2 * q + 2)
        n = max(n, 2 * q + 2, 2 if self.moves == "stretch" else 8)
        return n + (n % 2)

    def emcee_moves(self, proposal=None, trial: float = float("nan")):
        """The emcee move schedule for :attr:`moves`.

        ``proposal`` is the :class:`~mechfit.infer.independence.StudentTProposal`
        fitted during the burn-in of ``"independence"`` (before it, and without one,
        differential evolution alone). ``trial`` is the acceptance of the independence
        proposals seen on trial during the burn-in. The independence move takes 0.2 of
        the steps on trial, then 0.8 when it was accepted at least 0.2 of the time on trial
        (an accepted independence proposal is a nearly independent draw, worth tens of
        differential-evolution steps), else 0.5; one accepted less than
        ``TRIAL_USELESS`` of the time is not used at all. The rest is differential
        evolution, which carries the chain where the proposal fits badly.
        """
        import emcee

        if self.moves == "stretch":
            return None
        if proposal is not None and not trial < TRIAL_USELESS:
            from mechfit.infer.independence import IndependenceMove

            share = 0.2 if not np.isfinite(trial) else (0.8 if trial >= 0.2 else 0.5)
            rest = 1.0 - share
            return [(IndependenceMove(proposal), share),
                    (emcee.moves.DEMove(), 0.8 * rest), (emcee.moves.DESnookerMove(), 0.2 * rest)]
        return [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]


#: names of the move schedules of :class:`SamplingSettings`
MOVES = ("independence", "de", "stretch")


@dataclass
class SamplingProgress:
    """One event of :func:`sample_steps`: steps done, the budget, and a verdict after a check."""

    step: int
    budget: int
    verdict: Convergence | None = None
    posterior: Posterior | None = None


@dataclass
class Posterior:
    """A posterior sample in the free space with its diagnostics.

    Attributes
    ----------
    likelihood
        The likelihood (and, through it, the parameters) sampled.
    draws
        Kept draws of the free vector, (walkers, draws, q): burn-in removed, thinned by
        ``thin`` (at least tau_min / 2, more to keep at most :data:`MAX_KEPT_DRAWS`).
    log_posterior
        Log posterior of the kept draws, (walkers, draws).
    convergence
        The final verdict.
    burn, thin, steps
        Burn-in, thinning and total steps per walker.
    acceptance
        Acceptance fraction per walker.
    evaluations
        Log-posterior evaluations (walkers x steps).
    seconds
        Wall time of the sampling.
    restarts
        ``(step, walkers)`` of every restart of stuck walkers (see
        :func:`stuck_walkers`); the chain before the last restart is not kept.
    adapted
        Burn-in steps after which the independence proposal was frozen (0: none was).
    proposal_trial
        Acceptance of the independence proposals on the last trial of the burn-in.
    proposal_acceptance
        Fraction of the independence proposals accepted in the kept chain (NaN when
        none were used).
    """

    likelihood: Likelihood
    draws: np.ndarray
    log_posterior: np.ndarray
    convergence: Convergence
    burn: int
    thin: int
    steps: int
    acceptance: np.ndarray
    evaluations: int = 0
    seconds: float = 0.0
    settings: SamplingSettings = field(default_factory=SamplingSettings)
    restarts: tuple[tuple[int, int], ...] = ()
    adapted: int = 0
    proposal_trial: float = float("nan")
    proposal_acceptance: float = float("nan")

    @property
    def converged(self) -> bool:
        return self.convergence.converged

    @property
    def names(self) -> tuple[str, ...]:
        return self.likelihood.parameters.free_names

    def natural(self) -> np.ndarray:
        """Natural values of every parameter for the kept draws, (walkers, draws, P)."""
        c, d, q = self.draws.shape
        x = self.likelihood.parameters.natural(self.draws.reshape(c * d, q))
        return x.reshape(c, d, -1)

    def flat(self) -> np.ndarray:
        """Kept draws of ``u`` flattened to (walkers * draws, q)."""
        return self.draws.reshape(-1, self.draws.shape[-1])

    def statement(self) -> str:
        """A plain sentence on convergence."""
        v = self.convergence
        note = ""
        if self.adapted and np.isfinite(self.proposal_acceptance):
            note += (f" Independence proposals (Student-t fitted in {self.adapted} burn-in "
                     f"steps) accepted {100 * self.proposal_acceptance:.0f} % of the time.")
        elif self.adapted:
            note += (f" Independence proposals were accepted only "
                     f"{100 * self.proposal_trial:.0f} % of the time in {self.adapted} burn-in "
                     "steps and were not used.")
        if self.restarts:
            note += (" " + "; ".join(f"{w} stuck walker(s) restarted from good ones at step "
                                    f"{s}" for s, w in self.restarts)
                    + " (the chain before that was discarded).")
        if v.converged:
            return (f"converged after {self.steps} steps x {self.draws.shape[0]} walkers "
                    f"(R-hat max {v.rhat_max:.4f}, ESS min {v.ess_min:.0f})." + note)
        return (f"DID NOT CONVERGE within the budget of {self.settings.max_steps} steps: "
                + "; ".join(v.reasons) + ". Treat the intervals as unreliable." + note)


def starting_ball(likelihood: Likelihood, centre: np.ndarray, covariance: np.ndarray | None,
                  walkers: int, width: float, rng: np.random.Generator) -> np.ndarray:
    """Walker positions around ``centre`` with finite log posterior, (walkers, q)."""
    q = centre.size
    if covariance is not None and np.all(np.isfinite(np.diag(covariance))):
        sd = np.sqrt(np.clip(np.diag(covariance), 0, None))
    else:
        sd = np.zeros(q)
    # a width the centre cannot resolve (a singular Fisher information gives ~1e-18 along
    # a direction the data do not determine) would start every walker at one value
    scale = np.maximum(1.0, np.abs(centre))
    sd = np.where((sd > 1e-8 * scale) & np.isfinite(sd), sd, 1e-2 * scale)
    low, high = likelihood.parameters.free_bounds()
    span = high - low
    # a ball wider than the prior's range would pile walkers onto a bound
    sd = np.where(np.isfinite(span) & (width * sd > 0.05 * span), 0.05 * span / width, sd)
    with np.errstate(invalid="ignore"):
        inner_low = np.where(np.isfinite(low), low + 1e-12 * np.maximum(1, np.abs(low)), low)
        inner_high = np.where(np.isfinite(high), high - 1e-12 * np.maximum(1, np.abs(high)),
                              high)
    pos = np.empty((walkers, q))
    todo = np.arange(walkers)
    for _ in range(50):
        trial = centre + width * sd * rng.standard_normal((todo.size, q))
        # reflect at the bounds rather than clip: an optimum on a bound (a rate constant
        # the data cannot bound from below) must not put every walker at one value, or
        # no move could ever leave it
        trial = np.where(trial < low, 2 * low - trial, trial)
        trial = np.where(trial > high, 2 * high - trial, trial)
        trial = np.clip(trial, inner_low, inner_high)
        ok = np.isfinite(likelihood.log_posterior(trial))
        pos[todo[ok]] = trial[ok]
        todo = todo[~ok]
        if todo.size == 0:
            return pos
        width = width / 2
    raise FitFailure(f"{todo.size} of {walkers} walkers could not start near the optimum "
                     "(the log posterior is not finite there); check the priors")


def sample_steps(
    likelihood: Likelihood,
    centre: np.ndarray,
    covariance: np.ndarray | None = None,
    settings: SamplingSettings | None = None,
) -> Iterator[SamplingProgress]:
    """Run the sampler, yielding progress; the last event carries the :class:`Posterior`.

    Parameters
    ----------
    likelihood
        Its :meth:`~mechfit.infer.likelihood.Likelihood.log_posterior` is sampled.
    centre
        Free vector at the middle of the starting ball (the maximum-likelihood point).
    covariance
        Asymptotic covariance of the free vector (sets the ball's shape), or ``None``.
    settings
        See :class:`SamplingSettings`.
    """
    import time

    import emcee

    from mechfit.infer.independence import IndependenceMove, fit_proposal

    settings = settings or SamplingSettings()
    q = centre.size
    if q == 0:
        raise FitFailure("nothing to sample: every parameter is fixed or tied")
    rng = np.random.default_rng(settings.seed)
    walkers = settings.walker_count(q)
    start = starting_ball(likelihood, np.asarray(centre, float), covariance, walkers,
                          settings.ball, rng)
    sampler = emcee.EnsembleSampler(walkers, q, likelihood.log_posterior, vectorize=True,
                                    moves=settings.emcee_moves())
    sampler.random_state = np.random.RandomState(int(rng.integers(2**31))).get_state()
    names = likelihood.parameters.free_names
    state = start
    steps = 0
    budget = settings.max_steps
    began = time.perf_counter()
    verdict = None
    burn, thin = 0, 1
    # burn-in of the "independence" moves, discarded: `adapt` steps of differential
    # evolution, then trials of a Student-t fitted to the second half of the burn-in so
    # far, each trial twice as long as the one before, until the proposal is accepted
    # often enough, or neither its acceptance nor the burn-in's spread still grows, or a
    # quarter of the budget is spent
    adapt = min(settings.adapt, budget // 4)
    adapting = settings.moves == "independence" and adapt >= 20
    burned: list[np.ndarray] = []
    trial_length = max(adapt // 2, 1)
    previous_trial = float("nan")
    previous_spread = None
    adapted = 0
    proposal_trial = float("nan")
    move = None
    next_check = min(max(adapt if adapting else settings.min_steps, 1), budget)
    restarts: list[tuple[int, int]] = []
    while steps < budget:
        n = next_check - steps
        for sample in sampler.sample(state, iterations=n, progress=False):
            steps += 1
            state = sample
            if steps % settings.report_every == 0:
                yield SamplingProgress(steps, budget)
        stuck = stuck_walkers(sampler.get_log_prob(), q)
        if adapting:
            burned.append(sampler.get_chain())
            whole = np.concatenate(burned, axis=0)
            good = np.setdiff1d(np.arange(walkers), stuck)
            proposal = fit_proposal(whole[whole.shape[0] // 2:, good].reshape(-1, q))
            if stuck.size:
                state = _restart_walkers(state, stuck, rng)
                restarts.append((steps, int(stuck.size)))
            trial = move.acceptance if move is not None else float("nan")
            improving = not (trial <= TRIAL_IMPROVEMENT * previous_trial)
            # an ensemble still spreading along a poorly determined direction (walkers
            # diffuse along a ridge) gives a proposal too narrow there: go on while the
            # burn-in's spread grows
            spread = np.sqrt(np.diag(proposal.scale)) if proposal is not None else None
            spreading = (spread is not None and previous_spread is not None
                         and bool(np.any(spread > TRIAL_IMPROVEMENT * previous_spread)))
            more = (proposal is not None and steps + trial_length <= budget // 4
                    and (move is None or (trial < TRIAL_ENOUGH and (improving or spreading))))
            previous_trial, previous_spread = trial, spread
            random_state = sampler.random_state
            if proposal is None:
                adapting = False
                sampler.reset()
            else:
                schedule = settings.emcee_moves(proposal, float("nan") if more else trial)
                move = schedule[0][0] if isinstance(schedule[0][0], IndependenceMove) else None
                sampler = emcee.EnsembleSampler(walkers, q, likelihood.log_posterior,
                                                vectorize=True, moves=schedule)
                sampler.random_state = random_state
                if not more:
                    adapting = False
                    adapted = steps
                    proposal_trial = trial
            if adapting:
                next_check = min(steps + trial_length, budget)
                trial_length *= 2
            else:
                next_check = min(steps + max(settings.min_steps, 1), budget)
            continue
        if stuck.size and len(restarts) < MAX_RESTARTS and steps < budget:
            state = _restart_walkers(state, stuck, rng)
            restarts.append((steps, int(stuck.size)))
            sampler.reset()
            verdict = None
            next_check = min(steps + max(settings.min_steps, 1), budget)
            continue
        chain = sampler.get_chain()
        verdict, burn, thin = judge(names, chain, rhat_max=settings.rhat_max,
                                    ess_min=settings.ess_min, tau_factor=settings.tau_factor)
        if verdict.converged:
            yield SamplingProgress(steps, budget, verdict)
            break
        length = chain.shape[0]
        wanted = length + settings.chunk
        if np.all(np.isfinite(verdict.tau)):
            wanted = max(wanted, int(math.ceil(settings.tau_factor * np.max(verdict.tau))))
        wanted = max(wanted, _steps_for_rhat(verdict.rhat_max, settings.rhat_max, length))
        next_check = min(steps + wanted - length, budget)
        yield SamplingProgress(steps, budget, verdict)
    chain = sampler.get_chain()
    lp = sampler.get_log_prob()
    if verdict is None:  # the budget ran out before a check of the chain since a restart
        verdict, burn, thin = judge(names, chain, rhat_max=settings.rhat_max,
                                    ess_min=settings.ess_min, tau_factor=settings.tau_factor)
    # at most MAX_KEPT_DRAWS draws are kept: every later use (pointwise log-likelihoods
    # for LOO, predictive bands, summaries) costs in proportion, and gains nothing more
    thin = max(thin, math.ceil((chain.shape[0] - burn) * walkers / MAX_KEPT_DRAWS))
    draws = np.swapaxes(chain[burn::thin], 0, 1).copy()
    kept_lp = np.swapaxes(lp[burn::thin], 0, 1).copy()
    posterior = Posterior(likelihood, draws, kept_lp, verdict, burn, thin, steps,
                          np.asarray(sampler.acceptance_fraction), walkers * steps,
                          time.perf_counter() - began, settings, tuple(restarts), adapted,
                          proposal_trial, move.acceptance if move is not None else float("nan"))
    yield SamplingProgress(steps, budget, verdict, posterior)


#: restarts of stuck walkers allowed in one run (each discards the chain so far)
MAX_RESTARTS = 3
#: draws kept after burn-in and thinning, at most: 4 chains x 1000 draws, the usual
#: default of Hamiltonian samplers (common practice), is plenty for PSIS-LOO and
#: intervals; the chain is thinned further to stay below it
MAX_KEPT_DRAWS = 4000
#: the burn-in stops refitting the independence proposal once it is accepted this often
#: on trial, or once neither the acceptance nor the standard deviation of any parameter
#: in the burn-in grew by this factor since the trial before (mechfit conventions)
TRIAL_ENOUGH = 0.3
TRIAL_IMPROVEMENT = 1.2
#: below this acceptance on trial the proposal is not used (differential evolution alone)
TRIAL_USELESS = 0.05


def stuck_walkers(log_prob: np.ndarray, q: int) -> np.ndarray:
    """Walkers whose log posterior stays far below the rest of the ensemble.

    ``log_prob`` is emcee's (steps, walkers). A walker is stuck when the median of its
    log posterior over the second half of the chain lies more than ``10 + 2 q`` below
    the median of those medians. Around a mode, ``2 (lp_max - lp)`` is about
    chi-square with q degrees of freedom (common practice), so a gap that large
    (p < 1e-6 for q <= 20) means a walker parked in a region the others left, not a
    tail draw: such walkers never mix back and would enter the posterior as a false
    second mode.

    Examples
    --------
    >>> lp = np.zeros((100, 8)); lp[:, 3] = -1e5
    >>> stuck_walkers(lp, 2).tolist()
    [3]
    """
    lp = np.asarray(log_prob, dtype=float)
    if lp.shape[0] < 2 or lp.shape[1] < 3:
        return np.empty(0, dtype=int)
    half = lp[lp.shape[0] // 2:]
    med = np.median(np.where(np.isfinite(half), half, -np.inf), axis=0)
    centre = np.median(med)
    if not np.isfinite(centre):
        return np.empty(0, dtype=int)
    return np.flatnonzero(~(med >= centre - (10.0 + 2.0 * q)))


def _restart_walkers(state, stuck: np.ndarray, rng: np.random.Generator):
    """Move ``stuck`` walkers onto copies of randomly chosen good walkers.

    The jitter, 1e-3 of the good walkers' spread, keeps the ensemble of full rank even when
    few good walkers are left (emcee refuses linearly dependent walkers); the chain is
    restarted anyway, so the copies are burn-in.
    """
    import emcee

    coords = np.array(state.coords, dtype=float)
    good = np.setdiff1d(np.arange(coords.shape[0]), stuck)
    spread = np.std(coords[good], axis=0)
    pick = rng.choice(good, size=stuck.size)
    coords[stuck] = coords[pick] + 1e-3 * spread * rng.standard_normal((stuck.size,
                                                                        coords.shape[1]))
    return emcee.State(coords, random_state=state.random_state)


def _steps_for_rhat(rhat: float, target: float, steps: int) -> int:
    """Chain length at which ``R^2 - 1 ~ 1 / n`` extrapolates below ``target`` (+10 %).

    Capped at 1.5 times ``steps``: early in a run R-hat still carries the burn-in, and
    extrapolating from it would overshoot.
    """
    if not (np.isfinite(rhat) and rhat > target):
        return steps
    wanted = 1.1 * steps * (rhat ** 2 - 1.0) / (target ** 2 - 1.0)
    return int(math.ceil(min(wanted, 1.5 * steps)))


def sample_posterior(
    likelihood: Likelihood,
    centre: np.ndarray,
    covariance: np.ndarray | None = None,
    settings: SamplingSettings | None = None,
    *,
    progress: bool | Callable[[SamplingProgress], None] = False,
) -> Posterior:
    """Drive :func:`sample_steps` to the end and return the :class:`Posterior`.

    ``progress=True`` shows a progress bar on standard error; a callable receives every
    :class:`SamplingProgress` event instead.

    Examples
    --------
    >>> import numpy as np
    >>> from mechfit.infer.likelihood import ErrorModel, Likelihood
    >>> from mechfit.infer.observations import ModelFunction, Observations
    >>> from mechfit.infer.parameters import Parameter, Parameters
    >>> from mechfit.infer.priors import LogNormal
    >>> lik = Likelihood(ModelFunction(("m",), lambda x: np.repeat(x, 3, axis=1)),
    ...                  Observations.single([0, 1, 2], [0.9, 1.0, 1.1]),
    ...                  Parameters((Parameter("m", 1.0, LogNormal(1.0, 1.0), "log"),)),
    ...                  ErrorModel(sigma=0.1))
    >>> post = sample_posterior(lik, np.zeros(1), settings=SamplingSettings(max_steps=3000))
    >>> post.converged, round(float(np.median(post.natural()[..., 0])), 1)
    (True, 1.0)
    """
    callback = progress if callable(progress) else None
    bar = _ProgressBar() if progress is True else None
    posterior = None
    try:
        for event in sample_steps(likelihood, centre, covariance, settings):
            if callback is not None:
                callback(event)
            if bar is not None:
                bar.update(event)
            if event.posterior is not None:
                posterior = event.posterior
    finally:
        if bar is not None:
            bar.close()
    return posterior


class _ProgressBar:
    """A rich progress bar on standard error, updated from :class:`SamplingProgress` events."""

    def __init__(self) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

        self._progress = Progress(TextColumn("sampling"), BarColumn(),
                                  TextColumn("{task.completed}/{task.total} steps"),
                                  TextColumn("{task.fields[note]}"), TimeElapsedColumn(),
                                  console=Console(file=sys.stderr), transient=False)
        self._task = None
        self._progress.start()

    def update(self, event: SamplingProgress) -> None:
        if self._task is None:
            self._task = self._progress.add_task("sampling", total=event.budget, note="")
        note = ""
        if event.verdict is not None:
            v = event.verdict
            note = ("converged" if v.converged
                    else f"R-hat {v.rhat_max:.3f}, ESS {v.ess_min:.0f}")
        self._progress.update(self._task, completed=event.step,
                              **({"note": note} if note else {}))

    def close(self) -> None:
        self._progress.stop()
