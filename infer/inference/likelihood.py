"""The terms of the log-likelihood (docs/physics.md, "Likelihood"), on plain arrays.

Each observation k of a kind (spacings, masses) has a model centre c_nk for sample n
(f_lambda lambda_m, or f_M M_frag, at the observation's radius), an intrinsic scatter
sigma_n (dex) and a measurement variance v_k (in ln):

    ln x_k ~ Normal(ln c_nk, (sigma_n ln 10)^2 + v_k)

optionally truncated below ln x_min,k (:mod:`infer.inference.selection`). Rows whose
model has no growing mode at the observation's radius get -inf.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from ..constants import YR
from .selection import detection_probability, poisson_loglike

__all__ = ["observation_terms", "normal_terms", "growth_term", "count_term"]

_LN10 = np.log(10.0)
_LN2PI = np.log(2.0 * np.pi)


def observation_terms(ln_obs: np.ndarray, var_obs: np.ndarray, centre: np.ndarray,
                      scatter_dex: np.ndarray, ln_min: np.ndarray | None = None) -> np.ndarray:
    """Log-density of each observation for each sample.

    Parameters
    ----------
    ln_obs, var_obs : ndarray (K,)
        ln of the observed values (cgs) and their measurement variances in ln.
    centre : ndarray (n, K) or (n, 1)
        Model centre, cgs.
    scatter_dex : ndarray (n,)
        Intrinsic scatter, dex.
    ln_min : ndarray (K,), optional
        ln of each observation's lower truncation (-inf for none); None: no truncation.

    Returns
    -------
    ndarray (n, K)
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        mu = np.log(centre)
        var = (scatter_dex * _LN10)[:, None] ** 2 + var_obs[None, :]
        return normal_terms(ln_obs[None, :], mu, var,
                            None if ln_min is None else ln_min[None, :])


def normal_terms(ln_obs: np.ndarray, mu: np.ndarray, var: np.ndarray,
                 ln_min: np.ndarray | None = None) -> np.ndarray:
    """The core of :func:`observation_terms`: ln-values, means and variances broadcast.

    No floating-point error state of its own (the caller holds one: NaN and inf are
    expected where nothing grows).

    Parameters
    ----------
    ln_obs : ndarray (1, K)
        ln of the observed values.
    mu, var : ndarray (n, K) or broadcastable
        Mean and variance of each ln-value.
    ln_min : ndarray (1, K), optional
        ln of the lower truncations (-inf: none, the term is then unchanged).

    Returns
    -------
    ndarray (n, K)
    """
    ll = -0.5 * (ln_obs - mu) ** 2 / var - 0.5 * (_LN2PI + np.log(var))
    if ln_min is not None:
        ll = ll - special.log_ndtr((mu - ln_min) / np.sqrt(var))   # truncation_correction
    return ll


def growth_term(growth_time: np.ndarray, *, t_max: float | None, width_dex: float,
                hard: bool) -> np.ndarray:
    """The growth-time constraint t_m < t_max (yr): soft (log-normal CDF) or hard.

    Parameters
    ----------
    growth_time : ndarray (n,)
        Growth time, s (NaN where nothing grows).
    t_max : float or None
        Upper limit, yr; None: no constraint (zeros).
    width_dex : float
        Width of the soft constraint, dex.
    hard : bool
    """
    if t_max is None:
        return np.zeros(growth_time.shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (np.log(t_max * YR) - np.log(growth_time)) / (width_dex * _LN10)
        if hard:
            return np.where(growth_time <= t_max * YR, 0.0, -np.inf)
        return special.log_ndtr(z)


def count_term(n_obs: int, *, area: float, wavelength: np.ndarray, mass: np.ndarray,
               spacing_scatter_dex: np.ndarray, mass_scatter_dex: np.ndarray,
               var_spacing: float, var_mass: float, ln_mass_limit: float,
               ln_beam_length: float) -> np.ndarray:
    """Poisson log-probability of the number of detected clumps.

    N_exp = area * mean_j(P_det,j / c_j^2), with c_j the calibrated fastest wavelength and
    P_det,j the detection probability (:func:`infer.inference.selection.detection_probability`)
    at clump j's radius (one column for a single radius).

    Parameters
    ----------
    n_obs : int
        Number of clumps in the catalog.
    area : float
        Searched area of the sheet, cm^2.
    wavelength, mass : ndarray (n, J)
        Calibrated model centres (cm, g) at the clumps' radii.
    spacing_scatter_dex, mass_scatter_dex : ndarray (n,)
    var_spacing, var_mass : float
        Typical measurement variances (in ln) of spacings and masses.
    ln_mass_limit, ln_beam_length : float
        ln of the mass limit (g) and of the beam's typical resolvable length (cm); -inf: none.
    """
    sd_s = np.sqrt((spacing_scatter_dex * _LN10) ** 2 + var_spacing)[:, None]
    sd_m = np.sqrt((mass_scatter_dex * _LN10) ** 2 + var_mass)[:, None]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        p_det = detection_probability(np.log(mass), sd_m, ln_mass_limit, np.log(wavelength), sd_s,
                                      ln_beam_length)
        expected = area * np.mean(p_det / wavelength**2, axis=1)
    return poisson_loglike(n_obs, expected)
