"""Propagation of standard uncertainties through a vectorised model (pure numpy).

The model is any function ``f(X) -> Y`` that takes the inputs as rows of ``X`` (k, S), one
column per evaluation point, and returns the outputs as rows of ``Y`` (q, S): every point is
evaluated in one call (for portflux: :func:`portflux.core.samples.evaluate_samples`, the
batched kernel). Inputs are taken as uncorrelated.

* :func:`gum` -- the law of propagation of uncertainty, first order (JCGM 100:2008, GUM,
  sec. 5.1.2, eq. (10)): u_c(y)^2 = sum_i (c_i u(x_i))^2 with the sensitivity coefficients
  c_i = df/dx_i, here central differences with a step of ``STEP`` x u(x_i); the 2k + 1 points
  (estimate and every perturbation) are one call of ``f``.
* :func:`monte_carlo` -- the propagation of distributions (JCGM 101:2008, sec. 7): N draws of
  each input from the Gaussian N(x_i, u(x_i)^2) (sec. 6.4.7: an estimate and a standard
  uncertainty alone), the model evaluated at all of them in chunks of ``CHUNK`` points, the
  mean (sec. 7.6, eq. (15)), standard deviation (eq. (16)) and the probabilistically symmetric
  95 % coverage interval (sec. 7.7: the 2.5 % and 97.5 % quantiles).
* :func:`validate` -- the comparison of JCGM 101:2008, sec. 8: the GUM interval y +- U_p is
  validated when both its ends agree with the Monte Carlo interval within the numerical
  tolerance delta = 10^l / 2 of u(y) written with ``ndig`` significant digits (u(y) =
  c x 10^l, c an ndig-digit integer).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import InputError

#: Step of the central differences, as a fraction of each input's standard uncertainty.
STEP = 1e-4
#: Points evaluated per call of the model by :func:`monte_carlo` (bounds memory).
CHUNK = 2 ** 17
#: Default number of Monte Carlo trials (JCGM 101:2008, sec. 7.2.1: 10^6 is often enough
#: for a 95 % interval to two digits; 10^5 for the standard uncertainty to about 1 %).
TRIALS = 100_000
#: Coverage factor of a 95 % interval of a Gaussian output (JCGM 100:2008, G.1.3, table G.1).
K95 = 1.959963984540054


def _check(x, u):
    x = np.asarray(x, dtype=float).ravel()
    u = np.asarray(u, dtype=float).ravel()
    if x.shape != u.shape:
        raise InputError(f"needs one uncertainty per input (got {x.size} inputs, {u.size} "
                         f"uncertainties)", argument="uncertainty")
    if not (np.isfinite(x).all() and np.isfinite(u).all()):
        raise InputError("estimates and uncertainties must be finite numbers",
                         argument="uncertainty")
    if (u < 0).any():
        i = int(np.argmax(u < 0))
        raise InputError(f"input {i + 1}: a standard uncertainty must be >= 0 (got {u[i]:g})",
                         argument="uncertainty")
    return x, u


@dataclass(frozen=True)
class GumResult:
    """First-order propagation: estimates, sensitivities and standard uncertainties."""

    value: np.ndarray          #: (q,) the outputs at the estimates
    sensitivity: np.ndarray    #: (q, k) c_ij = dy_i / dx_j
    contribution: np.ndarray   #: (q, k) c_ij u(x_j), signed
    u: np.ndarray              #: (q,) combined standard uncertainty u_c(y)

    def expanded(self, k=2.0) -> np.ndarray:
        """Expanded uncertainty U = k u_c(y) (JCGM 100:2008, sec. 6.2.1)."""
        return k * self.u

    def budget(self, output: int) -> list:
        """(input index, sensitivity, contribution |c u|) of one output, largest first."""
        c = np.abs(self.contribution[output])
        order = np.argsort(-c, kind="stable")
        return [(int(j), float(self.sensitivity[output, j]), float(c[j])) for j in order]


def _evaluated(f, X, chunk):
    """``f(X)`` (k, S) -> (q, S), in column blocks of at most ``chunk`` points (one call when
    they fit: the memory of the model's sample arrays grows with points x ports)."""
    if X.shape[1] <= chunk:
        return np.asarray(f(X), dtype=float)
    return np.concatenate([np.asarray(f(X[:, i:i + chunk]), dtype=float)
                           for i in range(0, X.shape[1], chunk)], axis=1)


def gum(f, x, u, chunk=CHUNK) -> GumResult:
    """Law of propagation of uncertainty, first order, with a numerical Jacobian.

    .. math::

        u_c^2(y) = \\sum_i c_i^2 u^2(x_i), \\qquad
        c_i \\approx \\frac{f(x + h_i e_i) - f(x - h_i e_i)}{2 h_i}, \\quad h_i = 10^{-4} u(x_i)

    Parameters
    ----------
    f : callable
        ``f(X)`` with X (k, S) -> Y (q, S), vectorised over the columns.
    x : array_like (k,)
        Estimates of the inputs [their units].
    u : array_like (k,)
        Their standard uncertainties [the same units]; 0: the input is exact.
    chunk : int, optional
        Most points per call of ``f`` (all 2k + 1 in one call when they fit).

    Returns
    -------
    GumResult

    Examples
    --------
    Area of a rectangle, a = 2 +- 0.01, b = 3 +- 0.02: u(ab)^2 = (b u_a)^2 + (a u_b)^2.

    >>> r = gum(lambda X: X[0:1] * X[1:2], [2.0, 3.0], [0.01, 0.02])
    >>> round(float(r.u[0]), 6), round(float(np.hypot(3 * 0.01, 2 * 0.02)), 6)
    (0.05, 0.05)

    Reference: JCGM 100:2008 (GUM), sec. 5.1.2, eq. (10).
    """
    x, u = _check(x, u)
    k = x.size
    h = STEP * u
    X = np.repeat(x[:, None], 2 * k + 1, axis=1)        # estimate, then +h_i, then -h_i
    idx = np.arange(k)
    X[idx, 1 + idx] += h
    X[idx, 1 + k + idx] -= h
    Y = _evaluated(f, X, chunk)
    y0 = Y[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        c = np.where(h > 0, (Y[:, 1:1 + k] - Y[:, 1 + k:]) / (2.0 * np.where(h > 0, h, 1.0)),
                     0.0)
    contrib = c * u
    return GumResult(y0, c, contrib, np.sqrt((contrib * contrib).sum(axis=1)))


@dataclass(frozen=True)
class MonteCarloResult:
    """Propagation of distributions: mean, standard uncertainty, 95 % coverage interval."""

    mean: np.ndarray           #: (q,) mean of the output values (JCGM 101, eq. (15))
    u: np.ndarray              #: (q,) their standard deviation (eq. (16))
    low: np.ndarray            #: (q,) 2.5 % quantile (probabilistically symmetric interval)
    high: np.ndarray           #: (q,) 97.5 % quantile
    trials: int                #: number of trials M
    seed: int | None           #: the seed of the generator (None: fresh entropy)


def draws(x, u, count, rng):
    """Gaussian draws (k, count) of the inputs, N(x_i, u_i^2), from the generator ``rng``."""
    z = rng.standard_normal((count, x.size)).T
    z *= u[:, None]
    z += x[:, None]
    return z


def monte_carlo(f, x, u, trials=TRIALS, seed=None, chunk=CHUNK) -> MonteCarloResult:
    """Monte Carlo propagation of Gaussian inputs through ``f``.

    .. math::

        \\tilde y = \\frac{1}{M} \\sum_r y_r, \\quad
        u^2(\\tilde y) = \\frac{1}{M-1} \\sum_r (y_r - \\tilde y)^2, \\quad
        [y_{0.025}, y_{0.975}]

    Parameters
    ----------
    f : callable
        ``f(X)`` with X (k, S) -> Y (q, S).
    x : array_like (k,)
        Estimates [their units].
    u : array_like (k,)
        Standard uncertainties [the same units].
    trials : int
        Number of trials M (>= 100).
    seed : int, optional
        Seed of the generator (numpy's PCG64): the same seed gives the same result.
    chunk : int, optional
        Trials drawn and evaluated per call of ``f`` (one generator per chunk, so a seed gives
        the same numbers for the same chunk).

    Returns
    -------
    MonteCarloResult

    Examples
    --------
    >>> r = monte_carlo(lambda X: X[0:1] * X[1:2], [2.0, 3.0], [0.01, 0.02], seed=1)
    >>> round(float(r.u[0]), 3), round(float(r.mean[0]), 3)
    (0.05, 6.0)

    Reference: JCGM 101:2008, sec. 6.4.7 (Gaussian inputs) and 7 (the procedure).
    """
    x, u = _check(x, u)
    trials = int(trials)
    if trials < 100:
        raise InputError(f"needs at least 100 trials (got {trials})", argument="trials")
    chunk = max(1, int(chunk))
    starts = range(0, trials, chunk)      # one generator per chunk, spawned from the seed
    streams = np.random.SeedSequence(seed).spawn(len(starts))
    parts = []
    for start, stream in zip(starts, streams):
        X = draws(x, u, min(chunk, trials - start), np.random.Generator(np.random.PCG64(stream)))
        parts.append(np.asarray(f(X), dtype=float))
    Y = parts[0] if len(parts) == 1 else np.concatenate(parts, axis=1)
    low, high = np.quantile(Y, [0.025, 0.975], axis=1)
    return MonteCarloResult(Y.mean(axis=1), Y.std(axis=1, ddof=1), low, high, trials, seed)


def tolerance(u, ndig=2) -> float:
    """Numerical tolerance delta = 10^l / 2 of a standard uncertainty u = c x 10^l written
    with ``ndig`` significant digits (JCGM 101:2008, sec. 7.9.2).

    Parameters
    ----------
    u : float
        The standard uncertainty [its unit].
    ndig : int
        Significant digits regarded as meaningful (1 or 2 usually).

    Examples
    --------
    >>> tolerance(0.0312, 2)      # u = 31 x 10^-3
    0.0005

    Reference: JCGM 101:2008, sec. 7.9.2.
    """
    u = abs(float(u))
    if u == 0.0 or not math.isfinite(u):
        return 0.0
    l = math.floor(math.log10(u)) - (ndig - 1)
    return 0.5 * 10.0 ** l


def validate(g: GumResult, mc: MonteCarloResult, ndig=2, k=K95) -> np.ndarray:
    """Whether the GUM's 95 % interval is validated by the Monte Carlo one, per output.

    .. math::

        d_{low} = |y - U_p - y_{low}|, \\quad d_{high} = |y + U_p - y_{high}|, \\quad
        \\text{validated if } \\max(d_{low}, d_{high}) \\le \\delta

    with U_p = k u_c(y) and delta the :func:`tolerance` of the Monte Carlo u(y).

    Parameters
    ----------
    g : GumResult
        The first-order result.
    mc : MonteCarloResult
        The Monte Carlo result of the same model and inputs.
    ndig : int
        Significant digits of u(y) regarded as meaningful.
    k : float
        Coverage factor of the GUM interval [-] (1.96: 95 % of a Gaussian).

    Examples
    --------
    >>> f = lambda X: 2.0 * X[0:1] + X[1:2]
    >>> ok = validate(gum(f, [1.0, 2.0], [0.1, 0.1]),
    ...               monte_carlo(f, [1.0, 2.0], [0.1, 0.1], 200_000, seed=3), ndig=1)
    >>> ok.tolist()
    [True]

    Reference: JCGM 101:2008, sec. 8.2.
    """
    Up = k * g.u
    d_low = np.abs(g.value - Up - mc.low)
    d_high = np.abs(g.value + Up - mc.high)
    delta = np.array([tolerance(s, ndig) for s in mc.u])
    return np.maximum(d_low, d_high) <= delta
