"""Random scenarios of uncertain inputs, and the variance-based sensitivity of a model to them.

Pure functions on plain numbers.  Each uncertain input has a distribution,
optionally cut to bounds; samples are drawn on the unit interval and mapped
through the distribution's inverse CDF restricted to the bounds, so that
every sampling plan here (plain Monte Carlo, the rank-correlated plan, the
Saltelli plan for Sobol indices) goes through the same transform.

References
----------
Rank correlation between inputs: Iman, R. L. and Conover, W. J. (1982), "A
distribution-free approach to inducing rank correlation among input
variables", *Communications in Statistics - Simulation and Computation*
11(3), 311-334.
Sobol indices: Sobol', I. M. (2001), *Mathematics and Computers in Simulation*
55, 271-280; estimators and sampling plan of Saltelli et al. (2010),
*Computer Physics Communications* 181, 259-270, through the SALib library
(Herman and Usher 2017, *Journal of Open Source Software* 2(9), 97).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Distribution:
    """One uncertain input's distribution, optionally cut to [low, high].

    kind "uniform" (low, high), "triangular" (low, mode, high), "normal"
    (mean, standard_deviation, optional low/high) or "lognormal" (median,
    sigma_log: the standard deviation of ln x; optional low/high).
    """

    kind: str
    low: float | None = None
    mode: float | None = None
    high: float | None = None
    mean: float | None = None
    standard_deviation: float | None = None
    median: float | None = None
    sigma_log: float | None = None

    def frozen(self):
        """The scipy.stats distribution, before cutting to bounds."""
        from scipy import stats

        if self.kind == "uniform":
            return stats.uniform(loc=self.low, scale=self.high - self.low)
        if self.kind == "triangular":
            width = self.high - self.low
            return stats.triang(c=(self.mode - self.low) / width, loc=self.low, scale=width)
        if self.kind == "normal":
            return stats.norm(loc=self.mean, scale=self.standard_deviation)
        if self.kind == "lognormal":
            return stats.lognorm(s=self.sigma_log, scale=self.median)
        raise ValueError(f"unknown distribution {self.kind!r}")

    def support(self) -> tuple[float, float]:
        """The smallest and largest value a sample can take (no SciPy needed: case checks)."""
        lo, hi = {"normal": (-math.inf, math.inf),
                  "lognormal": (0.0, math.inf)}.get(self.kind, (self.low, self.high))
        return (max(lo, self.low) if self.low is not None else lo,
                min(hi, self.high) if self.high is not None else hi)

    def from_unit(self, u: np.ndarray) -> np.ndarray:
        """Values at the unit-interval points ``u``: the inverse CDF within the bounds."""
        dist = self.frozen()
        lo, hi = self.support()
        f_lo, f_hi = dist.cdf(lo), dist.cdf(hi)
        return np.clip(dist.ppf(f_lo + np.asarray(u) * (f_hi - f_lo)), lo, hi)

    def moments(self) -> tuple[float, float]:
        """Mean and standard deviation of the distribution cut to its bounds."""
        lo, hi = self.support()
        dist = self.frozen()
        mass = dist.cdf(hi) - dist.cdf(lo)
        mean = dist.expect(lambda x: x, lb=lo, ub=hi) / mass
        second = dist.expect(lambda x: (x - mean) ** 2, lb=lo, ub=hi) / mass
        return float(mean), float(np.sqrt(second))


def unit_samples(scenarios: int, inputs: int, seed: int) -> np.ndarray:
    """Independent uniform points on the unit cube, shape (scenarios, inputs)."""
    return np.random.default_rng(seed).random((scenarios, inputs))


def impose_rank_correlation(u: np.ndarray, target: np.ndarray, seed: int) -> np.ndarray:
    """Reorder each column of ``u`` so that their rank correlation approaches ``target``.

    Iman and Conover (1982): van der Waerden scores in random order are given
    the target correlation through Cholesky factors, and each column of ``u``
    is rearranged to the ranks of its score column.  The marginal values are
    unchanged, only their pairing.  ``target`` must be positive definite.
    """
    from scipy import stats

    n, d = u.shape
    if d < 2 or np.allclose(target, np.eye(d)):
        return u
    rng = np.random.default_rng(seed + 1)
    base = stats.norm.ppf(np.arange(1, n + 1) / (n + 1))
    scores = np.column_stack([rng.permutation(base) for _ in range(d)])
    present = np.linalg.cholesky(np.corrcoef(scores, rowvar=False))
    wanted = np.linalg.cholesky(target)
    shaped = scores @ np.linalg.inv(present).T @ wanted.T
    out = np.empty_like(u)
    for j in range(d):
        ranks = np.argsort(np.argsort(shaped[:, j]))
        out[:, j] = np.sort(u[:, j])[ranks]
    return out


def scenario_values(distributions: list[Distribution], scenarios: int, seed: int,
                    correlation: np.ndarray | None = None) -> np.ndarray:
    """Sampled input values, shape (scenarios, inputs); the same seed gives the same values."""
    u = unit_samples(scenarios, len(distributions), seed)
    if correlation is not None:
        u = impose_rank_correlation(u, correlation, seed)
    return np.column_stack([d.from_unit(u[:, j]) for j, d in enumerate(distributions)])


@dataclass(frozen=True)
class SobolIndices:
    """First-order and total Sobol indices per input, with 95 % confidence half-widths."""

    names: list[str]
    first: list[float]
    total: list[float]
    first_confidence: list[float]
    total_confidence: list[float]
    evaluations: int


def sobol_plan(distributions: list[Distribution], base_samples: int, seed: int) -> np.ndarray:
    """Input values of Saltelli's sampling plan, shape (base_samples (d + 2), d).

    Inputs are taken as independent here: Sobol indices need it.
    """
    from SALib.sample import sobol as saltelli

    d = len(distributions)
    problem = {"num_vars": d, "names": [f"x{j}" for j in range(d)], "bounds": [[0.0, 1.0]] * d}
    u = saltelli.sample(problem, base_samples, calc_second_order=False, scramble=True,
                        seed=seed)
    return np.column_stack([dist.from_unit(u[:, j]) for j, dist in enumerate(distributions)])


def sobol_indices(names: list[str], outputs: np.ndarray, seed: int) -> SobolIndices:
    """Sobol indices from a model's outputs on :func:`sobol_plan`'s points, in order."""
    from SALib.analyze import sobol

    d = len(names)
    problem = {"num_vars": d, "names": list(names), "bounds": [[0.0, 1.0]] * d}
    si = sobol.analyze(problem, np.asarray(outputs, float), calc_second_order=False,
                       seed=seed, print_to_console=False)
    return SobolIndices(list(names), [float(x) for x in si["S1"]], [float(x) for x in si["ST"]],
                        [float(x) for x in si["S1_conf"]], [float(x) for x in si["ST_conf"]],
                        int(len(outputs)))
