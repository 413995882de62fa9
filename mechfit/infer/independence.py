r"""Independence Metropolis–Hastings proposals from a multivariate Student-t.

An independence sampler proposes each walker's next position from one fixed
distribution :math:`g`, whatever the walker's current position, and accepts with
probability :math:`\min\{1, p(x')g(x) / (p(x)g(x'))\}` (Tierney, "Markov chains for
exploring posterior distributions", Ann. Statist. 22 (1994) 1701, section 2.3.3). When
:math:`g` is close to the posterior and has heavier tails, most proposals are accepted
and successive draws are nearly independent: the autocorrelation time falls to a few
steps. Kinetic posteriors in log rate constants are often close to Gaussian, so a
Student-t fitted to a burn-in sample serves well; where the posterior is curved
(sloppy directions), the proposals are rejected more often and the ensemble moves it is
mixed with carry the chain.

The proposal is fitted once, from a burn-in sample, and then frozen: the kernel is then
a fixed Metropolis–Hastings kernel and leaves the posterior invariant (adapting it while
keeping the draws would not, Roberts and Rosenthal, J. Appl. Probab. 44 (2007) 458).
:func:`mechfit.infer.sampling.sample_steps` discards the burn-in it was fitted on.
"""

from __future__ import annotations

import emcee
import numpy as np
from scipy import special

#: degrees of freedom of the Student-t proposal: tails heavier than a Gaussian posterior's
#: so that the importance ratio p/g stays bounded in the tails (common practice for
#: independence samplers; Robert and Casella, Monte Carlo Statistical Methods, 2nd ed.,
#: 2004, section 7.4, recalled from memory)
DEGREES_OF_FREEDOM = 10.0


class StudentTProposal:
    """A multivariate Student-t with location ``mean`` and scale matrix ``scale``.

    Parameters
    ----------
    mean
        Location, (q,).
    scale
        Scale matrix, (q, q), symmetric positive definite (the covariance is
        ``scale * nu / (nu - 2)``).
    nu
        Degrees of freedom.

    Examples
    --------
    >>> g = StudentTProposal(np.zeros(2), np.eye(2))
    >>> x = g.draw(np.random.RandomState(0), 4)
    >>> x.shape, g.log_density(np.zeros((1, 2))).round(4).tolist()
    ((4, 2), [-1.8379])
    """

    def __init__(self, mean: np.ndarray, scale: np.ndarray,
                 nu: float = DEGREES_OF_FREEDOM) -> None:
        self.mean = np.asarray(mean, dtype=float)
        self.scale = np.asarray(scale, dtype=float)
        self.nu = float(nu)
        self._chol = np.linalg.cholesky(self.scale)  # raises LinAlgError if not PD
        q = self.mean.size
        self._norm = (special.gammaln((self.nu + q) / 2) - special.gammaln(self.nu / 2)
                      - 0.5 * q * np.log(self.nu * np.pi)
                      - np.sum(np.log(np.diag(self._chol))))

    @property
    def dimension(self) -> int:
        return self.mean.size

    def draw(self, random, n: int) -> np.ndarray:
        """``n`` draws, (n, q), from a numpy ``RandomState`` or ``Generator``."""
        z = random.standard_normal((n, self.dimension))
        w = random.chisquare(self.nu, n) / self.nu
        return self.mean + (z @ self._chol.T) / np.sqrt(w)[:, None]

    def log_density(self, x: np.ndarray) -> np.ndarray:
        """Log density at the rows of ``x``, (n,)."""
        d = np.atleast_2d(x) - self.mean
        y = np.linalg.solve(self._chol, d.T)
        m = np.sum(y * y, axis=0)
        return self._norm - 0.5 * (self.nu + self.dimension) * np.log1p(m / self.nu)


def fit_proposal(sample: np.ndarray, nu: float = DEGREES_OF_FREEDOM) -> StudentTProposal | None:
    """A Student-t proposal with the mean and covariance of ``sample`` (n, q), or ``None``
    when the sample cannot give one (too few distinct draws, a singular covariance).

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> g = fit_proposal(rng.normal([1.0, -2.0], [0.5, 2.0], (4000, 2)))
    >>> g.mean.round(1).tolist(), np.sqrt(np.diag(g.scale)).round(1).tolist()
    ([1.0, -2.0], [0.5, 2.0])
    """
    x = np.asarray(sample, dtype=float)
    x = x[np.all(np.isfinite(x), axis=1)]
    q = x.shape[1]
    if x.shape[0] < 4 * (q + 1):
        return None
    cov = np.atleast_2d(np.cov(x, rowvar=False))
    sd = np.sqrt(np.diag(cov))
    if not np.all(sd > 0):
        return None
    # the sample's correlation matrix must be well conditioned to be inverted stably
    corr = cov / np.outer(sd, sd)
    if np.linalg.eigvalsh(corr)[0] < 1e-10:
        return None
    try:
        return StudentTProposal(x.mean(axis=0), cov, nu)
    except np.linalg.LinAlgError:
        return None


class IndependenceMove(emcee.moves.MHMove):
    """emcee move: every walker proposes a fresh draw of a fixed :class:`StudentTProposal`.

    An ``emcee.moves.MHMove`` whose log proposal ratio is ``log g(x) - log g(x')`` (the
    Hastings correction of an independence sampler). ``proposed`` and ``accepted``
    count the walker proposals of this move and how many were taken.

    Examples
    --------
    >>> import emcee
    >>> rng = np.random.default_rng(0)
    >>> move = IndependenceMove(StudentTProposal(np.zeros(1), np.eye(1)))
    >>> s = emcee.EnsembleSampler(8, 1, lambda x: -0.5 * np.sum(x * x, axis=1),
    ...                           vectorize=True, moves=move)
    >>> _ = s.run_mcmc(rng.normal(size=(8, 1)), 500)
    >>> 0.7 < move.acceptance < 1.0
    True
    """

    def __init__(self, proposal: StudentTProposal) -> None:
        super().__init__(self._draw, ndim=proposal.dimension)
        self.proposal = proposal
        self.proposed = 0
        self.accepted = 0

    def _draw(self, coords: np.ndarray, random) -> tuple[np.ndarray, np.ndarray]:
        new = self.proposal.draw(random, coords.shape[0])
        factors = self.proposal.log_density(coords) - self.proposal.log_density(new)
        return new, factors

    def propose(self, model, state):
        state, accepted = super().propose(model, state)
        self.proposed += accepted.size
        self.accepted += int(np.count_nonzero(accepted))
        return state, accepted

    @property
    def acceptance(self) -> float:
        """Fraction of this move's proposals accepted (NaN before the first)."""
        return self.accepted / self.proposed if self.proposed else float("nan")


__all__ = ["StudentTProposal", "IndependenceMove", "fit_proposal", "DEGREES_OF_FREEDOM"]
