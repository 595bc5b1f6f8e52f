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

Selection (``[model] selection = "auto"``, the default): when the catalog states its beam
and detection limit, each spacing term is truncated below the shortest length the beam
resolves along that edge and each mass term below the limit (truncated log-normals,
:mod:`infer.inference.selection`), and with a searched ``area`` the number of clumps enters
as a Poisson term. ``selection = "off"`` (or a catalog without these keys) gives the
likelihood above, value for value. The terms themselves are in
:mod:`infer.inference.likelihood`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import astropy.units as u
import numpy as np

from ..constants import AU, M_JUP, M_SUN, YR
from ..errors import InferError
from ..physics.conditions import Conditions, derive_conditions, keplerian_kappa
from ..physics.predict import Forward, Observables, forward, observables
from ..physics.sheet import field_from_mass_to_flux
from ..quantities import DERIVED_NAMES, QUANTITIES
from .config import ModelOptions, RunConfig
from .likelihood import count_term, growth_term, normal_terms
from .measurements import Measurement
from .parameters import LINEAR, RadialPlan, at_radii, radial_plan, to_sampled
from .priors import PARAMETERS, Prior

__all__ = ["Observations", "Model", "build_model", "DERIVED_UNITS"]

_NONE = -np.inf            # ln of an absent threshold
_LN10 = np.log(10.0)

#: derived quantity -> unit string used in the summary tables
DERIVED_UNITS: dict[str, str] = {k: QUANTITIES[k].unit for k in DERIVED_NAMES}


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
    ln_spacing_min : ndarray (n_edges,) or None
        ln (cm) of the shortest disk-plane length the beam resolves along each spacing; -inf
        for a spacing that is not truncated (one observed below the beam). None: no beam.
    ln_mass_min : ndarray (n_clumps,) or None
        ln (g) of the detection limit for each mass (-inf for masses observed below it).
    ln_resolvable : ndarray (n_edges,) or None
        ln (cm) of the beam's resolvable length along every spacing (truncated or not).
    ln_beam_length : float
        ln (cm) of the beam's typical (median over the spacings) resolvable length, for the
        expected number of clumps; -inf without a beam.
    ln_mass_limit : float
        ln (g) of the detection limit; -inf without one.
    area : float or None
        Searched area of the sheet in its own plane, cm^2.
    spacing_radius, mass_radius : ndarray or None
        Radius of each spacing (mean of its two clumps' radii) and of each clump, cm.
    """

    ln_spacing: np.ndarray
    var_spacing: np.ndarray
    ln_mass: np.ndarray
    var_mass: np.ndarray
    labels: tuple[str, ...] = ()
    ln_spacing_min: np.ndarray | None = None
    ln_mass_min: np.ndarray | None = None
    ln_resolvable: np.ndarray | None = None
    ln_beam_length: float = _NONE
    ln_mass_limit: float = _NONE
    area: float | None = None
    spacing_radius: np.ndarray | None = None
    mass_radius: np.ndarray | None = None

    @classmethod
    def from_region(cls, region) -> Observations:
        """From a :class:`infer.catalog.regions.Region` (with its beam, limit, area and radii)."""
        s = np.asarray(region.spacings.to_value(u.cm), dtype=float)
        ds = np.asarray(region.spacing_errors.to_value(u.cm), dtype=float)
        m = np.asarray(region.masses.to_value(u.g), dtype=float)
        dm = np.asarray(region.mass_errors.to_value(u.g), dtype=float)
        ids = list(region.ids)
        pairs = np.asarray(getattr(region, "spacing_pairs", np.zeros((0, 2), int)))
        labels = [f"spacing:{ids[i]}-{ids[j]}" for i, j in pairs] if len(pairs) == len(s) else \
            [f"spacing:{k}" for k in range(len(s))]
        labels += [f"mass:{i}" for i in ids]
        s_min = getattr(region, "spacing_min", None)
        m_lim = getattr(region, "mass_limit", None)
        area = getattr(region, "area", None)
        radii = np.hypot(region.x.to_value(u.cm), region.y.to_value(u.cm))
        s_rad = 0.5 * (radii[pairs[:, 0]] + radii[pairs[:, 1]]) if len(pairs) == len(s) else None
        return cls.from_arrays(
            spacings=s, spacing_errors=ds, masses=m, mass_errors=dm, labels=tuple(labels),
            spacing_min=None if s_min is None else s_min.to_value(u.cm),
            mass_limit=None if m_lim is None else float(m_lim.to_value(u.g)),
            area=None if area is None else float(area.to_value(u.cm**2)),
            spacing_radius=s_rad, mass_radius=radii)

    @classmethod
    def from_arrays(cls, *, spacings, spacing_errors=None, masses, mass_errors=None,
                    labels=(), spacing_min=None, mass_limit=None, area=None,
                    spacing_radius=None, mass_radius=None) -> Observations:
        """From cgs arrays (spacings in cm, masses in g).

        Parameters
        ----------
        spacings, masses : array_like
            cm and g.
        spacing_errors, mass_errors : array_like, optional
            One-sigma errors, same units.
        labels : sequence of str, optional
        spacing_min : array_like (n_edges,), optional
            Shortest resolvable length along each spacing, cm. Spacings at or below it are
            kept untruncated (the catalog shows the beam resolved them).
        mass_limit : float, optional
            Detection limit, g (masses at or below it are kept untruncated).
        area : float, optional
            Searched area in the plane of the sheet, cm^2.
        spacing_radius, mass_radius : array_like, optional
            Radius of each spacing and each clump, cm.
        """
        s = np.asarray(spacings, dtype=float)
        m = np.asarray(masses, dtype=float)
        ds = np.zeros_like(s) if spacing_errors is None else np.asarray(spacing_errors, float)
        dm = np.zeros_like(m) if mass_errors is None else np.asarray(mass_errors, float)
        if np.any(s <= 0) or np.any(m <= 0):
            raise InferError("spacings and masses must be positive")
        if not labels:
            labels = tuple([f"spacing:{k}" for k in range(s.size)] +
                           [f"mass:{k}" for k in range(m.size)])
        ln_s, ln_m = np.log(s), np.log(m)
        kw: dict = {}
        if spacing_min is not None:
            ln_min = np.log(np.broadcast_to(np.asarray(spacing_min, dtype=float), s.shape))
            kw["ln_spacing_min"] = np.where(ln_s > ln_min, ln_min, _NONE)
            kw["ln_resolvable"] = ln_min
            kw["ln_beam_length"] = float(np.median(ln_min)) if ln_min.size else _NONE
        if mass_limit is not None:
            lim = float(np.log(mass_limit))
            kw["ln_mass_min"] = np.where(ln_m > lim, lim, _NONE)
            kw["ln_mass_limit"] = lim
        if area is not None:
            kw["area"] = float(area)
        if spacing_radius is not None:
            kw["spacing_radius"] = np.asarray(spacing_radius, dtype=float).reshape(s.shape)
        if mass_radius is not None:
            kw["mass_radius"] = np.asarray(mass_radius, dtype=float).reshape(m.shape)
        return cls(ln_s, (ds / s) ** 2, ln_m, (dm / m) ** 2, tuple(labels), **kw)

    @property
    def n_spacings(self) -> int:
        return int(self.ln_spacing.size)

    @property
    def n_masses(self) -> int:
        return int(self.ln_mass.size)

    @property
    def has_selection(self) -> bool:
        """Whether a beam, a detection limit or a searched area is given."""
        return (self.ln_spacing_min is not None or self.ln_mass_min is not None
                or self.area is not None)


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
    measurements : tuple of Measurement
        Measured quantities that add a term each to the likelihood.
    plan : RadialPlan or None
        With ``profile = "power-law"``: the distinct radii of the observations.
    """

    names: tuple[str, ...]
    priors: Mapping[str, Prior]
    options: ModelOptions
    obs: Observations
    measurements: tuple[Measurement, ...] = ()
    plan: RadialPlan | None = None
    _hot: _HotPath = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_hot", _HotPath.of(self))

    @property
    def ndim(self) -> int:
        return len(self.names)

    # ------------------------------------------------------------------ mapping
    def values(self, theta) -> dict[str, np.ndarray]:
        """Physical values (canonical units) of every parameter for each row of ``theta``.

        Parameters
        ----------
        theta : array_like (n, ndim)
            The sampled coordinates: ln of each positive parameter, the power-law indices
            themselves (:mod:`infer.inference.parameters`).
        """
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        return self._hot.values(*self._hot.columns(theta))

    def sampled(self, values: Mapping[str, np.ndarray]) -> np.ndarray:
        """Inverse of :meth:`values` for the sampled parameters: (n, ndim)."""
        return np.column_stack([to_sampled(k, np.asarray(values[k], dtype=float))
                                for k in self.names])

    def conditions(self, v: Mapping[str, np.ndarray]) -> Conditions:
        """The resolved cgs conditions of parameter values (canonical units), arrays (n,).

        Keplerian kappa from ``stellar_mass`` (solMass) and ``radius`` (au) unless ``kappa``
        is a parameter; the diffusivities from ``ionization``, or ``eta_ad`` and ``eta_ohm``,
        or none (``diffusion = "ideal"``), as the run configuration says.
        """
        sigma = v["surface_density"]
        if "kappa" in v:
            kappa = v["kappa"]
        else:
            kappa = self._hot.kappa_of(v)
        mode = self.options.diffusion
        if mode == "ionization":
            diffusion = {"ionization": v["ionization"]}
        elif mode == "free":
            diffusion = {"eta_ad": v["eta_ad"], "eta_ohm": v["eta_ohm"]}
        else:
            zero = np.zeros(sigma.shape)
            diffusion = {"eta_ad": zero, "eta_ohm": zero}
        return derive_conditions(sigma=sigma, temperature=v["temperature"],
                                 p_ext=v["external_pressure"], kappa=kappa,
                                 mu0=v["mass_to_flux"], mu_gas=self.options.mu_gas,
                                 fragment_shape=self.options.fragment_shape, **diffusion)

    def evaluate(self, theta, radii=None) -> tuple[dict[str, np.ndarray], Conditions, Forward]:
        """Values, resolved conditions and the forward model for ``theta``.

        With ``profile = "power-law"`` the model is evaluated at ``reference_radius`` (radii
        None: arrays (n,)), or at every radius of ``radii`` (au, (R,)) for every row, as flat
        arrays (n * R,) in sample-major order (one kernel call for all of them).
        """
        v = self.values(theta)
        if self.options.profile == "power-law":
            v = at_radii(v, radii)
        c = self.conditions(v)
        return v, c, forward(c)

    # --------------------------------------------------------------- densities
    def log_prior(self, theta) -> np.ndarray:
        """Sum of the priors' log-densities in the sampled coordinates (n,)."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        return self._hot.log_prior(*self._hot.columns(theta))

    def pointwise_loglike(self, theta) -> np.ndarray:
        """Log-likelihood of every observation (n, n_obs): spacings first, then masses.

        The growth-time constraint and the number of clumps (properties of the parameters
        and of the catalog as a whole, not of one observation) are not included; rows with
        no growing mode are -inf.
        """
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        return self._pointwise(*self._predict(theta))

    @property
    def selection_active(self) -> bool:
        """Whether the likelihood models the selection (``selection = "auto"`` and a limit given)."""
        return self.options.selection == "auto" and self.obs.has_selection

    def selection_text(self) -> str:
        """One sentence on how the likelihood treats the catalog's selection (for summaries)."""
        o = self.obs
        if not o.has_selection:
            return "no beam, detection limit or area given: every clump is taken as observed"
        if self.options.selection == "off":
            return "selection = off: the catalog's beam, detection limit and area are not modelled"
        parts = []
        if o.ln_spacing_min is not None:
            k = int(np.sum(np.isfinite(o.ln_spacing_min)))
            parts.append(f"{k} of {o.n_spacings} spacings truncated below the beam's resolvable "
                         f"length along them")
        if o.ln_mass_min is not None:
            k = int(np.sum(np.isfinite(o.ln_mass_min)))
            parts.append(f"{k} of {o.n_masses} masses truncated below the detection limit "
                         f"{np.exp(o.ln_mass_limit) / M_JUP:.3g} M_Jup")
        if o.area is not None:
            parts.append(f"the number of clumps is Poisson with mean (area / lambda_m^2) x "
                         f"detection probability, area {o.area / AU**2:.3g} au2")
        return "; ".join(parts)

    def _predict(self, theta, v=None) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
        """Parameter values (n,) and the model at each observation (see :meth:`_centres`);
        ``v``: the values of ``theta`` when the caller has them."""
        if v is None:
            v = self.values(theta)
        if self.plan is None:
            if self.options.profile == "power-law":     # (as :meth:`evaluate`)
                v = at_radii(v, None)
            return v, self._centres(observables(self.conditions(v)))
        fw = observables(self.conditions(at_radii(v, self.plan.radii)))
        return v, self._centres(fw, self.plan)

    @staticmethod
    def _centres(fw: Forward | Observables,
                 plan: RadialPlan | None = None) -> dict[str, np.ndarray]:
        """The model's wavelength, fragment mass, growth and stability at each observation.

        One column per observation for a radial profile (``plan``), one column for all of them
        otherwise; the growth time (n,) is the longest at the clumps' radii (every observed
        clump had to grow).
        """
        if plan is None:
            col = fw.wavelength[:, None]
            return {"wavelength": col, "fragment_mass": fw.fragment_mass[:, None],
                    "wavelength_at_mass": col, "unstable_spacing": fw.unstable[:, None],
                    "unstable_mass": fw.unstable[:, None], "growth_time": fw.growth_time}
        k = plan.radii.size

        def grid(a):
            return np.asarray(a).reshape(-1, k)

        lam, unstable = grid(fw.wavelength), grid(fw.unstable)
        sc, mc = plan.spacing_col, plan.mass_col
        return {"wavelength": lam[:, sc], "fragment_mass": grid(fw.fragment_mass)[:, mc],
                "wavelength_at_mass": lam[:, mc], "unstable_spacing": unstable[:, sc],
                "unstable_mass": unstable[:, mc],
                "growth_time": np.max(grid(fw.growth_time)[:, mc], axis=1)}

    def _pointwise(self, v, c: Mapping[str, np.ndarray]) -> np.ndarray:
        h = self._hot
        n = c["growth_time"].shape[0]
        if not h.kinds:
            return np.zeros((n, 0))
        centre = [v[cal][:, None] * c[key] for cal, key, _, _ in h.kinds]
        scatter = [v[sc] for _, _, sc, _ in h.kinds]
        unstable = [c[key] for _, _, _, key in h.kinds]
        with np.errstate(invalid="ignore", divide="ignore"):
            if len(h.kinds) == 1:
                mu, s = np.log(centre[0]), (scatter[0] * _LN10)[:, None] ** 2
                grows = unstable[0]
            else:
                mu = np.log(np.concatenate(centre, axis=1))
                s = (np.column_stack(scatter) * _LN10) ** 2
                grows = unstable[0] if self.plan is None else np.concatenate(unstable, axis=1)
            if h.centre_col is not None:      # (take: C order, so that sums add as before)
                mu = np.take(mu, h.centre_col, axis=1)
            if h.scatter_col is not None:
                s = np.take(s, h.scatter_col, axis=1)
            ll = normal_terms(h.ln_obs, mu, s + h.var_obs,
                              h.ln_min if self.selection_active else None)
        return np.where(grows & np.isfinite(ll), ll, -np.inf)

    def _count(self, v, c: Mapping[str, np.ndarray]) -> np.ndarray:
        """Poisson term of the number of clumps (zeros unless selection applies and ``area`` is given)."""
        o = self.obs
        if not self.selection_active or o.area is None:
            return np.zeros(c["growth_time"].shape)
        var_s = float(np.median(o.var_spacing)) if o.n_spacings else 0.0
        var_m = float(np.median(o.var_mass)) if o.n_masses else 0.0
        return count_term(o.n_masses, area=o.area,
                          wavelength=v["spacing_calibration"][:, None] * c["wavelength_at_mass"],
                          mass=v["mass_calibration"][:, None] * c["fragment_mass"],
                          spacing_scatter_dex=v["spacing_scatter"],
                          mass_scatter_dex=v["mass_scatter"], var_spacing=var_s, var_mass=var_m,
                          ln_mass_limit=o.ln_mass_limit, ln_beam_length=o.ln_beam_length)

    def _growth_term(self, growth_time: np.ndarray) -> np.ndarray:
        o = self.options
        return growth_term(growth_time, t_max=o.growth_time_max, width_dex=o.growth_width_dex,
                           hard=o.growth_constraint == "hard")

    def log_likelihood(self, theta, *, values=None) -> np.ndarray:
        """Log-likelihood of each row of ``theta`` (n,); ``values``: :meth:`values` of
        ``theta`` when the caller has them."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        v, c = self._predict(theta, values)
        ll = self._pointwise(v, c).sum(axis=1) + self._growth_term(c["growth_time"])
        if self.selection_active:
            ll = ll + self._count(v, c)
        if self.measurements:
            ll = ll + self.measurement_loglike(v)
        return np.where(np.isnan(ll), -np.inf, ll)

    def measured_value(self, name: str, v: Mapping[str, np.ndarray]) -> np.ndarray:
        """The model's value of a measurable quantity (its summary unit) from parameter values."""
        if name == "field":
            return field_from_mass_to_flux(v["surface_density"], v["mass_to_flux"]) * 1e3
        return np.asarray(v[name], dtype=float)

    def measurement_loglike(self, v: Mapping[str, np.ndarray]) -> np.ndarray:
        """Sum of the measurement terms for parameter values ``v`` (n,)."""
        n = np.asarray(next(iter(v.values()))).shape[0]
        out = np.zeros(n)
        for m in self.measurements:
            out = out + m.loglike(self.measured_value(m.name, v))
        return out

    def __call__(self, theta) -> np.ndarray:
        """Log-posterior of each row of ``theta`` (n, ndim) -> (n,); finite or -inf."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        cols = self._hot.columns(theta)
        lp = self._hot.log_prior(*cols)
        ok = np.isfinite(lp)
        if ok.all():                 # the usual case: no copies of theta
            out = lp + self.log_likelihood(theta, values=self._hot.values(*cols))
        else:
            out = np.full(theta.shape[0], -np.inf)
            if np.any(ok):
                out[ok] = lp[ok] + self.log_likelihood(theta[ok])
        out[np.isnan(out)] = -np.inf
        return out

    # ----------------------------------------------------------------- derived
    def derived(self, theta) -> dict[str, np.ndarray]:
        """Derived quantities of each row, in the units of :data:`DERIVED_UNITS`."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        _, c, fw = self.evaluate(theta)
        n = fw.wavelength.shape
        tau = c.tau_ni
        if self.options.diffusion == "free":     # eta_AD = v_A^2 tau_ni
            with np.errstate(divide="ignore", invalid="ignore"):
                tau = c.eta_ad / c.alfven_speed_sq
        return {
            "field": c.field * 1e3,
            "eta_ad": c.eta_ad,
            "eta_ohm": c.eta_ohm,
            "eta_total": c.eta_total,
            "ionization": np.broadcast_to(c.x_e, n).copy(),
            "tau_ni": np.broadcast_to(tau, n) / YR,
            "wavelength": fw.wavelength / AU,
            "growth_time": fw.growth_time / YR,
            "fragment_mass": fw.fragment_mass / M_JUP,
            "toomre_q": fw.toomre_q,
            "thermal_wavelength": fw.thermal_wavelength / AU,
        }

    def prior_sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """n draws of theta from the prior (n, ndim)."""
        return np.column_stack([to_sampled(k, self.priors[k].sample(rng, n)) for k in self.names]) \
            if self.names else np.zeros((n, 0))


@dataclass(frozen=True, eq=False)
class _HotPath:
    """What the log-posterior needs of the priors, computed once when the model is built.

    ``terms`` holds, per sampled column, the density of its sampled coordinate:
    :meth:`~infer.inference.distributions.Distribution.ln_terms` (given u and e^u) for a
    positive parameter, the prior's ``logpdf_sampled`` for a linear one (a power-law index).
    The fixed parameters' constant columns are kept per batch size (read-only arrays).
    """

    names: tuple[str, ...]
    linear: tuple[bool, ...]
    terms: tuple
    fixed: tuple[tuple[str, float], ...]
    kinds: tuple[tuple[str, str, str, str], ...] = ()
    ln_obs: np.ndarray | None = None
    var_obs: np.ndarray | None = None
    ln_min: np.ndarray | None = None
    centre_col: np.ndarray | None = None
    scatter_col: np.ndarray | None = None
    _rows: dict = field(default_factory=dict)
    _kappa: dict = field(default_factory=dict)

    @classmethod
    def of(cls, model: Model) -> _HotPath:
        linear = tuple(k in LINEAR for k in model.names)
        terms = tuple(model.priors[k].logpdf_sampled if lin else
                      model.priors[k].distribution.ln_terms
                      for k, lin in zip(model.names, linear, strict=True))
        fixed = tuple((k, p.value) for k, p in model.priors.items() if p.fixed)
        o, opt = model.obs, model.options
        # (calibration, centre, scatter, unstable) of each kind used, spacings first
        kinds, ln_obs, var_obs, ln_min = [], [], [], []
        if opt.use_spacings and o.n_spacings:
            kinds.append(("spacing_calibration", "wavelength", "spacing_scatter",
                          "unstable_spacing"))
            ln_obs.append(o.ln_spacing)
            var_obs.append(o.var_spacing)
            ln_min.append(np.full(o.n_spacings, _NONE) if o.ln_spacing_min is None
                          else o.ln_spacing_min)
        if opt.use_masses and o.n_masses:
            kinds.append(("mass_calibration", "fragment_mass", "mass_scatter", "unstable_mass"))
            ln_obs.append(o.ln_mass)
            var_obs.append(o.var_mass)
            ln_min.append(np.full(o.n_masses, _NONE) if o.ln_mass_min is None
                          else o.ln_mass_min)
        if not kinds:
            return cls(model.names, linear, terms, fixed)
        kind = np.concatenate([np.full(a.size, j) for j, a in enumerate(ln_obs)])
        many = len(kinds) > 1
        return cls(model.names, linear, terms, fixed, tuple(kinds),
                   ln_obs=np.concatenate(ln_obs)[None, :],
                   var_obs=np.concatenate(var_obs)[None, :],
                   ln_min=np.concatenate(ln_min)[None, :],
                   centre_col=kind if (model.plan is None and many) else None,
                   scatter_col=kind if many else None)

    def fixed_columns(self, n: int) -> dict[str, np.ndarray]:
        """The fixed parameters' values, arrays (n,), shared between calls (read-only)."""
        cols = self._rows.get(n)
        if cols is None:
            cols = {}
            for k, value in self.fixed:
                a = np.full(n, value)
                a.setflags(write=False)
                cols[k] = a
            if len(self._rows) < 8:
                self._rows[n] = cols
        return cols

    @staticmethod
    def columns(theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """theta (n, ndim) as contiguous rows (ndim, n), and their exponentials."""
        u_rows = np.ascontiguousarray(theta.T)
        with np.errstate(over="ignore"):
            return u_rows, np.exp(u_rows)

    def kappa_of(self, v: Mapping[str, np.ndarray]) -> np.ndarray:
        """Keplerian kappa (s^-1) of values ``v``, computed once per batch size when the
        stellar mass and the radius are the fixed columns themselves (not moved to radii)."""
        m_star, r = v["stellar_mass"], v["radius"]
        kept = self._kappa.get(id(m_star))
        if kept is not None and kept[0] is m_star and kept[1] is r:
            return kept[2]
        kappa = keplerian_kappa(m_star, r, mass_unit=M_SUN, length_unit=AU)
        cols = self._rows.get(np.shape(m_star)[0] if np.ndim(m_star) == 1 else -1, {})
        if cols.get("stellar_mass") is m_star and cols.get("radius") is r:
            kappa.setflags(write=False)
            self._kappa[id(m_star)] = (m_star, r, kappa)
        return kappa

    def values(self, u_rows: np.ndarray, e_rows: np.ndarray) -> dict[str, np.ndarray]:
        """:meth:`Model.values` from :meth:`columns`."""
        out = dict(self.fixed_columns(u_rows.shape[1]))
        for name, lin, u_k, e_k in zip(self.names, self.linear, u_rows, e_rows, strict=True):
            out[name] = u_k if lin else e_k
        return out

    def log_prior(self, u_rows: np.ndarray, e_rows: np.ndarray) -> np.ndarray:
        """:meth:`Model.log_prior` from :meth:`columns`: -inf for a row with a non-finite
        coordinate."""
        lp = np.zeros(u_rows.shape[1])
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            for term, lin, u_k, e_k in zip(self.terms, self.linear, u_rows, e_rows, strict=True):
                lp = lp + (term(u_k) if lin else term(u_k, e_k))
        lp = np.where(np.isfinite(u_rows).all(axis=0), lp, -np.inf)
        return np.where(np.isnan(lp), -np.inf, lp)


def build_model(config: RunConfig, obs: Observations) -> Model:
    """The :class:`Model` of a run configuration and the observations of one region."""
    names = tuple(config.sampled)
    if not names:
        raise InferError("nothing to fit: every parameter in [priors] is fixed")
    if config.model.use_spacings and obs.n_spacings == 0 and not config.model.use_masses:
        raise InferError("the catalog has no spacings to fit")
    plan = _radial_plan(obs) if config.model.profile == "power-law" else None
    return Model(names=names, priors=dict(config.priors), options=config.model, obs=obs,
                 measurements=tuple(config.measurements.values()), plan=plan)


def _radial_plan(obs: Observations) -> RadialPlan:
    """The radii of a power-law fit; refuses clumps without a radius or at the centre."""
    if obs.mass_radius is None or (obs.n_spacings and obs.spacing_radius is None):
        raise InferError('model.profile = "power-law" needs each clump\'s radius (positions '
                         'relative to the star); these observations carry none')
    r = obs.mass_radius
    scale = float(np.max(r)) if r.size else 0.0
    at_centre = np.flatnonzero(~(r > 1e-9 * scale))
    if at_centre.size or scale <= 0:
        labels = [obs.labels[obs.n_spacings + i].split(":", 1)[-1] for i in at_centre]
        raise InferError(f"clump {', '.join(map(repr, labels)) or '(all)'} is at the centre "
                         f"(r = 0), where a radial profile (model.profile = \"power-law\") is "
                         f"singular: x, y must be offsets from the star; leave it out with "
                         f"[catalog] exclude = [...] or use profile = \"local\"")
    return radial_plan(obs.spacing_radius / AU if obs.spacing_radius is not None else
                       np.zeros(0), r / AU)


# labels for plots, exported for the plotting and results modules
LABELS = {k: v.label for k, v in PARAMETERS.items()}
_ = Prior
