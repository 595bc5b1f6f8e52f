"""Parameter vector <-> physical conditions, and the posterior of a clump catalog.

The sampled parameters are the non-fixed priors of the run config, each
sampled as its natural logarithm. :class:`Model` is a frozen, picklable object
whose ``__call__`` evaluates the log-posterior of a whole ensemble at once
(emcee ``vectorize=True``): an array (n_walkers, n_dim) in, an array
(n_walkers,) out, finite or -inf, never NaN.

Likelihood (docs/physics.md, "Likelihood")::

    ln s_e ~ Normal(ln(f_lambda lambda_m), sigma_lambda^2 + (ds_e / s_e)^2)
    ln m_j ~ Normal(ln(f_M M_frag),       sigma_M^2      + (dm_j / m_j)^2)

plus an optional growth-time constraint t_m < t_max (soft: log-normal CDF;
hard: -inf beyond). Parameter sets with no growing mode have likelihood 0.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import astropy.units as u
import numpy as np
from scipy import special

from ..constants import AU, M_JUP, M_SUN, YR, G
from ..errors import InferError
from ..physics.microphysics import diffusivities
from ..physics.predict import Forward, forward
from ..physics.sheet import field_from_mass_to_flux
from .config import ModelOptions, RunConfig
from .priors import PARAMETERS, Prior

__all__ = ["Observations", "Model", "build_model", "DERIVED_UNITS"]

_LN10 = np.log(10.0)
_LN2PI = np.log(2.0 * np.pi)

#: derived quantity -> unit string used in the summary tables
DERIVED_UNITS: dict[str, str] = {
    "field": "mG",
    "eta_ad": "cm2 / s",
    "eta_ohm": "cm2 / s",
    "eta_total": "cm2 / s",
    "ionization": "",
    "tau_ni": "yr",
    "wavelength": "au",
    "growth_time": "yr",
    "fragment_mass": "jupiterMass",
    "toomre_q": "",
    "thermal_wavelength": "au",
}


@dataclass(frozen=True)
class Observations:
    """What the likelihood compares with: log spacings and log masses with their variances.

    Attributes
    ----------
    ln_spacing : ndarray (n_edges,)
        ln of the spacings in cm.
    var_spacing : ndarray (n_edges,)
        (ds / s)^2, the measurement variance in ln.
    ln_mass : ndarray (n_clumps,)
        ln of the masses in g.
    var_mass : ndarray (n_clumps,)
    labels : tuple of str
        One label per observation, spacings first ("spacing:A-B"), then masses ("mass:A").
    """

    ln_spacing: np.ndarray
    var_spacing: np.ndarray
    ln_mass: np.ndarray
    var_mass: np.ndarray
    labels: tuple[str, ...] = ()

    @classmethod
    def from_region(cls, region) -> Observations:
        """From a :class:`infer.catalog.regions.Region`."""
        s = np.asarray(region.spacings.to_value(u.cm), dtype=float)
        ds = np.asarray(region.spacing_errors.to_value(u.cm), dtype=float)
        m = np.asarray(region.masses.to_value(u.g), dtype=float)
        dm = np.asarray(region.mass_errors.to_value(u.g), dtype=float)
        ids = list(region.ids)
        pairs = np.asarray(getattr(region, "spacing_pairs", np.zeros((0, 2), int)))
        labels = [f"spacing:{ids[i]}-{ids[j]}" for i, j in pairs] if len(pairs) == len(s) else \
            [f"spacing:{k}" for k in range(len(s))]
        labels += [f"mass:{i}" for i in ids]
        return cls.from_arrays(spacings=s, spacing_errors=ds, masses=m, mass_errors=dm,
                               labels=tuple(labels))

    @classmethod
    def from_arrays(cls, *, spacings, spacing_errors=None, masses, mass_errors=None,
                    labels=()) -> Observations:
        """From cgs arrays (spacings in cm, masses in g)."""
        s = np.asarray(spacings, dtype=float)
        m = np.asarray(masses, dtype=float)
        ds = np.zeros_like(s) if spacing_errors is None else np.asarray(spacing_errors, float)
        dm = np.zeros_like(m) if mass_errors is None else np.asarray(mass_errors, float)
        if np.any(s <= 0) or np.any(m <= 0):
            raise InferError("spacings and masses must be positive")
        if not labels:
            labels = tuple([f"spacing:{k}" for k in range(s.size)] +
                           [f"mass:{k}" for k in range(m.size)])
        return cls(np.log(s), (ds / s) ** 2, np.log(m), (dm / m) ** 2, tuple(labels))

    @property
    def n_spacings(self) -> int:
        return int(self.ln_spacing.size)

    @property
    def n_masses(self) -> int:
        return int(self.ln_mass.size)


@dataclass(frozen=True)
class Model:
    """Log-posterior of the thin-sheet fragmentation model for one region.

    Attributes
    ----------
    names : tuple of str
        Sampled parameters (each sampled as ln of its value in the canonical unit).
    priors : Mapping[str, Prior]
        Every parameter's prior (fixed ones included).
    options : ModelOptions
    obs : Observations
    """

    names: tuple[str, ...]
    priors: Mapping[str, Prior]
    options: ModelOptions
    obs: Observations

    @property
    def ndim(self) -> int:
        return len(self.names)

    # ------------------------------------------------------------------ mapping
    def values(self, theta) -> dict[str, np.ndarray]:
        """Physical values (canonical units) of every parameter for each row of ``theta``.

        Parameters
        ----------
        theta : array_like (n, ndim)
            ln of the sampled parameters.
        """
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        n = theta.shape[0]
        out: dict[str, np.ndarray] = {}
        for name, prior in self.priors.items():
            if prior.fixed:
                out[name] = np.full(n, prior.value)
        with np.errstate(over="ignore"):
            for i, name in enumerate(self.names):
                out[name] = np.exp(theta[:, i])
        return out

    def physical(self, v: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
        """cgs conditions from parameter values: sigma, T, mu0, field, kappa, p_ext, diffusivities."""
        sigma = v["surface_density"]
        temp = v["temperature"]
        mu0 = v["mass_to_flux"]
        field = field_from_mass_to_flux(sigma, mu0)
        if "kappa" in v:
            kappa = v["kappa"]
        else:
            kappa = np.sqrt(G * v["stellar_mass"] * M_SUN / (v["radius"] * AU) ** 3)
        p_ext = v["external_pressure"]
        return {"sigma": sigma, "temperature": temp, "mu0": mu0, "field": field,
                "kappa": kappa, "p_ext": p_ext}

    def diffusion(self, phys: Mapping[str, np.ndarray], v: Mapping[str, np.ndarray], rho_c):
        """(eta_ad, eta_ohm, x_e, tau_ni) in cgs for the configured diffusion mode."""
        mode = self.options.diffusion
        n = phys["sigma"].shape
        if mode == "ionization":
            x_e = v["ionization"]
            e_ad, e_ohm, tau = diffusivities(x_e=x_e, field=phys["field"], rho=rho_c,
                                             temperature=phys["temperature"],
                                             mu_gas=self.options.mu_gas)
            return e_ad, e_ohm, x_e, tau
        if mode == "free":
            e_ad, e_ohm = v["eta_ad"], v["eta_ohm"]
            va2 = phys["field"] ** 2 / (4.0 * np.pi * rho_c)
            with np.errstate(divide="ignore", invalid="ignore"):
                tau = e_ad / va2
            return e_ad, e_ohm, np.full(n, np.nan), tau
        zero = np.zeros(n)
        return zero, zero, np.full(n, np.nan), np.full(n, np.nan)

    def evaluate(self, theta) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray], Forward]:
        """Values, physical conditions (with diffusivities) and the forward model for ``theta``."""
        v = self.values(theta)
        phys = self.physical(v)
        from ..physics.sheet import equilibrium

        eq = equilibrium(phys["sigma"], phys["temperature"], phys["p_ext"], mu_gas=self.options.mu_gas)
        e_ad, e_ohm, x_e, tau = self.diffusion(phys, v, eq.rho_c)
        phys.update(eta_ad=e_ad, eta_ohm=e_ohm, x_e=x_e, tau_ni=tau)
        with np.errstate(divide="ignore"):
            inv_mu2 = 1.0 / phys["mu0"] ** 2
        fw = forward(phys["sigma"], phys["temperature"], inv_mu2=inv_mu2, eta_total=e_ad + e_ohm,
                     kappa=phys["kappa"], p_ext=phys["p_ext"], mu_gas=self.options.mu_gas,
                     fragment_shape=self.options.fragment_shape, eq=eq)
        return v, phys, fw

    # --------------------------------------------------------------- densities
    def log_prior(self, theta) -> np.ndarray:
        """Sum of the priors' log-densities in ln-space (n,)."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        lp = np.zeros(theta.shape[0])
        for i, name in enumerate(self.names):
            lp = lp + self.priors[name].logpdf_ln(theta[:, i])
        return np.where(np.isnan(lp), -np.inf, lp)

    def pointwise_loglike(self, theta) -> np.ndarray:
        """Log-likelihood of every observation (n, n_obs): spacings first, then masses.

        The growth-time constraint (a property of the parameters, not of one
        observation) is not included; rows with no growing mode are -inf.
        """
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        v, _, fw = self.evaluate(theta)
        return self._pointwise(v, fw)

    def _pointwise(self, v, fw: Forward) -> np.ndarray:
        o = self.obs
        parts = []
        with np.errstate(invalid="ignore", divide="ignore"):
            if self.options.use_spacings and o.n_spacings:
                mu = np.log(v["spacing_calibration"] * fw.wavelength)[:, None]
                var = (v["spacing_scatter"] * _LN10)[:, None] ** 2 + o.var_spacing[None, :]
                parts.append(-0.5 * (o.ln_spacing[None, :] - mu) ** 2 / var - 0.5 * (_LN2PI + np.log(var)))
            if self.options.use_masses and o.n_masses:
                mu = np.log(v["mass_calibration"] * fw.fragment_mass)[:, None]
                var = (v["mass_scatter"] * _LN10)[:, None] ** 2 + o.var_mass[None, :]
                parts.append(-0.5 * (o.ln_mass[None, :] - mu) ** 2 / var - 0.5 * (_LN2PI + np.log(var)))
        ll = np.concatenate(parts, axis=1) if parts else np.zeros((fw.wavelength.shape[0], 0))
        ll = np.where(fw.unstable[:, None] & np.isfinite(ll), ll, -np.inf)
        return ll

    def _growth_term(self, fw: Forward) -> np.ndarray:
        t_max = self.options.growth_time_max
        if t_max is None:
            return np.zeros(fw.growth_time.shape)
        with np.errstate(invalid="ignore", divide="ignore"):
            z = (np.log(t_max * YR) - np.log(fw.growth_time)) / (self.options.growth_width_dex * _LN10)
            if self.options.growth_constraint == "hard":
                return np.where(fw.growth_time <= t_max * YR, 0.0, -np.inf)
            return special.log_ndtr(z)

    def log_likelihood(self, theta) -> np.ndarray:
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        v, _, fw = self.evaluate(theta)
        ll = self._pointwise(v, fw).sum(axis=1) + self._growth_term(fw)
        return np.where(np.isnan(ll), -np.inf, ll)

    def __call__(self, theta) -> np.ndarray:
        """Log-posterior of each row of ``theta`` (n, ndim) -> (n,); finite or -inf."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        lp = self.log_prior(theta)
        ok = np.isfinite(lp)
        out = np.full(theta.shape[0], -np.inf)
        if np.any(ok):
            ll = self.log_likelihood(theta[ok])
            out[ok] = lp[ok] + ll
        out[np.isnan(out)] = -np.inf
        return out

    # ----------------------------------------------------------------- derived
    def derived(self, theta) -> dict[str, np.ndarray]:
        """Derived quantities of each row, in the units of :data:`DERIVED_UNITS`."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        _, phys, fw = self.evaluate(theta)
        return {
            "field": phys["field"] * 1e3,
            "eta_ad": phys["eta_ad"],
            "eta_ohm": phys["eta_ohm"],
            "eta_total": phys["eta_ad"] + phys["eta_ohm"],
            "ionization": phys["x_e"],
            "tau_ni": phys["tau_ni"] / YR,
            "wavelength": fw.wavelength / AU,
            "growth_time": fw.growth_time / YR,
            "fragment_mass": fw.fragment_mass / M_JUP,
            "toomre_q": fw.toomre_q,
            "thermal_wavelength": fw.thermal_wavelength / AU,
        }

    def prior_sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """n draws of theta from the prior (n, ndim)."""
        return np.column_stack([np.log(self.priors[k].sample(rng, n)) for k in self.names]) \
            if self.names else np.zeros((n, 0))


def build_model(config: RunConfig, obs: Observations) -> Model:
    """The :class:`Model` of a run configuration and the observations of one region."""
    names = tuple(config.sampled)
    if not names:
        raise InferError("nothing to fit: every parameter in [priors] is fixed")
    if config.model.use_spacings and obs.n_spacings == 0 and not config.model.use_masses:
        raise InferError("the catalog has no spacings to fit")
    return Model(names=names, priors=dict(config.priors), options=config.model, obs=obs)


# labels for plots, exported for the plotting and results modules
LABELS = {k: v.label for k, v in PARAMETERS.items()}
_ = Prior
