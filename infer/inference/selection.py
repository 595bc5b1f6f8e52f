"""Selection effects in the likelihood: truncated log-normal terms and the expected number.

A catalog entry is observed only when it clears a threshold: a spacing only when the beam
resolves it, a mass only above the detection limit. The density of an observed value is then
the parent density renormalised by the probability of being observed at all (truncation; the
number of unobserved entries is unknown, unlike censoring),

    f(x | x > c) = f(x) / (1 - F(c)),

so for ln x ~ Normal(mu, sd^2) truncated below ln c each term gains

    - ln(1 - Phi((ln c - mu) / sd)) = - ln Phi((mu - ln c) / sd).

When the searched area A of the sheet is known, the number of detected clumps is a Poisson
variable with mean N_exp = (A / lambda_m^2) P_det: one fragment per wavelength-square (the
fragment-mass convention of docs/physics.md, "Predicted observables") times the probability that a
fragment is detected. P_det is taken as the product of the probability of being above the
mass limit and that of being separated from its neighbour by more than the beam (the
neighbour's distance drawn from the spacing distribution), an approximation that treats the
two as independent.
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = ["log_observed_fraction", "truncation_correction", "poisson_loglike",
           "detection_probability"]


def log_observed_fraction(mu, sd, ln_min) -> np.ndarray:
    """ln P(X > ln_min) for X ~ Normal(mu, sd^2), computed without cancellation.

    Parameters
    ----------
    mu, sd : array_like
        Mean and standard deviation of the ln-values (broadcast together).
    ln_min : array_like
        ln of the threshold; -inf means no truncation (the result is then 0).

    Returns
    -------
    ndarray
        ``log_ndtr((mu - ln_min) / sd)``.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        return special.log_ndtr((np.asarray(mu, dtype=float) - ln_min) / sd)


def truncation_correction(mu, var, ln_min) -> np.ndarray:
    """The term a lower truncation adds to a normal log-density: ``-ln P(X > ln_min)``.

    Parameters
    ----------
    mu : array_like
        Mean of the ln-value.
    var : array_like
        Its variance.
    ln_min : array_like
        ln of the threshold (-inf: no truncation, term 0).
    """
    return -log_observed_fraction(mu, np.sqrt(var), ln_min)


def detection_probability(mu_mass, sd_mass, ln_mass_limit, mu_spacing, sd_spacing,
                          ln_beam_length) -> np.ndarray:
    """P_det = P(mass above the limit) * P(neighbour beyond the beam), see the module docstring.

    All arguments broadcast; a threshold of -inf gives a factor 1.
    """
    return np.exp(log_observed_fraction(mu_mass, sd_mass, ln_mass_limit)
                  + log_observed_fraction(mu_spacing, sd_spacing, ln_beam_length))


def poisson_loglike(n_obs: int, expected) -> np.ndarray:
    """ln P(n_obs | expected) of a Poisson count; -inf for a non-positive or non-finite mean.

    Parameters
    ----------
    n_obs : int
        Observed number.
    expected : array_like
        Expected number(s).
    """
    lam = np.asarray(expected, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = special.xlogy(n_obs, lam) - lam - special.gammaln(n_obs + 1.0)
    return np.where(np.isfinite(lam) & (lam > 0), out, -np.inf)
