"""The likelihood as it was before selection effects and radial profiles (a frozen copy).

Verbatim arithmetic of ``Model._pointwise``, ``Model._growth_term`` and
``Model.log_likelihood`` of the commit before the second wave (docs/physics.md, "Likelihood"),
kept so that the tests can show that ``selection = "off"`` reproduces it value for value.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from infer.constants import YR

_LN10 = np.log(10.0)
_LN2PI = np.log(2.0 * np.pi)


def legacy_pointwise(model, v, fw) -> np.ndarray:
    o = model.obs
    parts = []
    with np.errstate(invalid="ignore", divide="ignore"):
        if model.options.use_spacings and o.n_spacings:
            mu = np.log(v["spacing_calibration"] * fw.wavelength)[:, None]
            var = (v["spacing_scatter"] * _LN10)[:, None] ** 2 + o.var_spacing[None, :]
            parts.append(-0.5 * (o.ln_spacing[None, :] - mu) ** 2 / var - 0.5 * (_LN2PI + np.log(var)))
        if model.options.use_masses and o.n_masses:
            mu = np.log(v["mass_calibration"] * fw.fragment_mass)[:, None]
            var = (v["mass_scatter"] * _LN10)[:, None] ** 2 + o.var_mass[None, :]
            parts.append(-0.5 * (o.ln_mass[None, :] - mu) ** 2 / var - 0.5 * (_LN2PI + np.log(var)))
    ll = np.concatenate(parts, axis=1) if parts else np.zeros((fw.wavelength.shape[0], 0))
    ll = np.where(fw.unstable[:, None] & np.isfinite(ll), ll, -np.inf)
    return ll


def legacy_growth_term(model, fw) -> np.ndarray:
    t_max = model.options.growth_time_max
    if t_max is None:
        return np.zeros(fw.growth_time.shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (np.log(t_max * YR) - np.log(fw.growth_time)) / (model.options.growth_width_dex * _LN10)
        if model.options.growth_constraint == "hard":
            return np.where(fw.growth_time <= t_max * YR, 0.0, -np.inf)
        return special.log_ndtr(z)


def legacy_log_likelihood(model, theta) -> np.ndarray:
    theta = np.atleast_2d(np.asarray(theta, dtype=float))
    v, _, fw = model.evaluate(theta)
    ll = legacy_pointwise(model, v, fw).sum(axis=1) + legacy_growth_term(model, fw)
    return np.where(np.isnan(ll), -np.inf, ll)


def legacy_log_posterior(model, theta) -> np.ndarray:
    theta = np.atleast_2d(np.asarray(theta, dtype=float))
    lp = model.log_prior(theta)
    ok = np.isfinite(lp)
    out = np.full(theta.shape[0], -np.inf)
    if np.any(ok):
        out[ok] = lp[ok] + legacy_log_likelihood(model, theta[ok])
    out[np.isnan(out)] = -np.inf
    return out
