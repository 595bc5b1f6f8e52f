"""The posterior predictive distribution of clump spacings and masses, and its check.

* :func:`predictive_draws` -- draws of one new observation (spacing in au or mass in
  Jupiter masses) from the posterior predictive distribution;
* :func:`ecdf_check` -- the 95% band of the ECDFs of replicate catalogs and the predictive
  p-value of the largest ECDF-to-CDF gap (a Kolmogorov-Smirnov distance).

Plain numpy and scipy (no plotting); the figure is :mod:`infer.outputs.predictive`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import Model
from .posterior import Posterior

__all__ = ["OBSERVABLES", "Observable", "predictive_draws", "draw_predictive", "ecdf_check",
           "observed", "uses_observable"]

_LN10 = np.log(10.0)


@dataclass(frozen=True)
class Observable:
    """How one kind of observation is predicted.

    Attributes
    ----------
    key : str
        "spacing" or "mass".
    derived : str
        The derived quantity giving the model's central value (wavelength, fragment_mass).
    scatter, calibration : str
        Parameters: intrinsic scatter (dex) and calibration factor.
    unit_name : str
        The unit the values are given in ("au", "jupiterMass").
    """

    key: str
    derived: str
    scatter: str
    calibration: str
    unit_name: str

    @property
    def unit_cgs(self) -> float:
        """The cgs value of :attr:`unit_name` (cm or g)."""
        from ..constants import AU, M_JUP

        return AU if self.unit_name == "au" else M_JUP


#: observable key -> how it is predicted
OBSERVABLES: dict[str, Observable] = {
    "spacing": Observable("spacing", "wavelength", "spacing_scatter", "spacing_calibration", "au"),
    "mass": Observable("mass", "fragment_mass", "mass_scatter", "mass_calibration", "jupiterMass"),
}


def observed(model: Model, key: str) -> tuple[np.ndarray, np.ndarray]:
    """(ln of the observed values in the observable's unit, measurement variance in ln)."""
    o = model.obs
    ln, var = (o.ln_spacing, o.var_spacing) if key == "spacing" else (o.ln_mass, o.var_mass)
    return ln - np.log(OBSERVABLES[key].unit_cgs), var


def uses_observable(model: Model, key: str) -> bool:
    """Whether the likelihood uses the spacings (``key="spacing"``) or the masses."""
    o, opt = model.obs, model.options
    return (opt.use_spacings and o.n_spacings > 0) if key == "spacing" else \
        (opt.use_masses and o.n_masses > 0)


def _centre_and_sd(post: Posterior, key: str, idx: np.ndarray,
                   var_meas: float) -> tuple[np.ndarray, np.ndarray]:
    """ln of the predictive centre (observable's unit) and its sd in ln, for samples ``idx``."""
    ob = OBSERVABLES[key]
    centre = np.asarray(post.derived[ob.derived], dtype=float)[idx] * \
        np.asarray(post.column(ob.calibration), dtype=float)[idx]
    scatter = np.asarray(post.column(ob.scatter), dtype=float)[idx] * _LN10
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(centre), np.sqrt(scatter ** 2 + var_meas)


def predictive_draws(post: Posterior, model: Model, *, observable: str, n_draws: int = 2000,
                     seed: int = 0) -> np.ndarray:
    """Draws from the posterior predictive distribution of one new observation.

    For each of ``n_draws`` posterior samples (drawn with replacement), one
    value ``ln x ~ Normal(ln(f * c), sigma^2 + v)`` where ``c`` is the model's
    fastest wavelength (spacings) or fragment mass (masses), ``f`` the
    calibration factor, ``sigma`` the intrinsic scatter (dex, times ln 10)
    and ``v`` the median measurement variance (in ln) of the observations.

    Parameters
    ----------
    post : Posterior
    model : Model
    observable : {"spacing", "mass"}
    n_draws : int
    seed : int

    Returns
    -------
    ndarray (n_draws,)
        Spacings in au or masses in Jupiter masses.
    """
    if observable not in OBSERVABLES:
        raise ValueError(f"observable must be 'spacing' or 'mass', got {observable!r}")
    _, _, draws = draw_predictive(post, model, observable, n_draws, np.random.default_rng(seed))
    return np.exp(draws)


def draw_predictive(post: Posterior, model: Model, key: str, n_draws: int,
                    rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(ln centre, sd in ln, ln draws) for ``n_draws`` posterior samples; non-finite rows dropped.

    Returns
    -------
    mu, sd, draws : ndarray (m,)
        In ln of the observable's unit; m <= n_draws.
    """
    _, var = observed(model, key)
    v = float(np.median(var)) if var.size else 0.0
    idx = rng.integers(0, post.n, size=int(n_draws))
    mu, sd = _centre_and_sd(post, key, idx, v)
    draws = mu + sd * rng.standard_normal(idx.size)
    ok = np.isfinite(mu) & np.isfinite(sd)
    return mu[ok], sd[ok], draws[ok]


def ecdf_check(mu: np.ndarray, sd: np.ndarray, ln_obs: np.ndarray, grid: np.ndarray,
               rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, float]:
    """95% band of replicate-catalog ECDFs on ``grid`` (ln) and the KS predictive p-value.

    Each posterior sample r makes one replicate catalog of len(ln_obs) values;
    the discrepancy is the largest distance between an ECDF and that sample's
    predictive CDF; p = fraction of replicates at least as discrepant as the data.

    Parameters
    ----------
    mu, sd : ndarray (r,)
        Predictive centre and sd (in ln) of each replicate's posterior sample.
    ln_obs : ndarray (n,)
        The observations, ln.
    grid : ndarray (g,)
        Where the band is evaluated, ln.
    rng : numpy.random.Generator

    Returns
    -------
    band : ndarray (2, g)
        2.5% and 97.5% quantiles of the replicate ECDFs.
    grid : ndarray (g,)
    p : float
    """
    from scipy import special

    n = ln_obs.size
    sd = np.maximum(sd, 1e-9)
    rep = mu[:, None] + sd[:, None] * rng.standard_normal((mu.size, n))
    rep.sort(axis=1)
    ecdf = (rep[:, :, None] <= grid[None, None, :]).sum(axis=1) / n
    band = np.quantile(ecdf, [0.025, 0.975], axis=0)
    steps_hi = np.arange(1, n + 1) / n
    steps_lo = np.arange(0, n) / n

    def ks(sorted_x: np.ndarray) -> np.ndarray:
        cdf = special.ndtr((sorted_x - mu[:, None]) / sd[:, None])
        return np.maximum(np.abs(steps_hi - cdf), np.abs(cdf - steps_lo)).max(axis=1)

    d_rep = ks(rep)
    d_obs = ks(np.broadcast_to(np.sort(ln_obs), rep.shape))
    return band, grid, float(np.mean(d_rep >= d_obs))
