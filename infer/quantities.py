"""One registry of the package's named quantities: unit, symbol, labels, log scale, order.

Every table, figure and sentence that names a sampled parameter or a derived quantity reads
it here, so that a quantity is described in one place. Names are the run-config keys and the
``summary.ecsv`` row names (fixed contracts); units are astropy unit strings.
"""

from __future__ import annotations

from dataclasses import dataclass

import astropy.units as u

__all__ = ["QuantityInfo", "QUANTITIES", "PARAMETER_NAMES", "DERIVED_NAMES", "info", "unit_of",
           "plot_label", "summary_order"]


@dataclass(frozen=True)
class QuantityInfo:
    """What one named quantity is.

    Attributes
    ----------
    name : str
        Config key / summary row name.
    unit : str
        Canonical astropy unit string ("" for dimensionless; scatters are in "dex").
    symbol : str
        Matplotlib mathtext symbol, without the unit (e.g. ``r"$\\mu_0$"``).
    tex : str
        LaTeX symbol for ``summary.tex``.
    unit_label : str
        Unit as mathtext for axis labels ("" when dimensionless).
    title : str
        Plain-words name for tables and sentences ("mass-to-flux ratio").
    log : bool
        Always shown on a log scale (ranges over decades).
    allow_zero : bool
        Zero is a valid value (fixed priors, e.g. no rotation or no external pressure).
    derived : bool
        Computed from the parameters rather than sampled.
    """

    name: str
    unit: str
    symbol: str
    tex: str
    unit_label: str
    title: str
    log: bool = False
    allow_zero: bool = False
    derived: bool = False

    @property
    def label(self) -> str:
        """Plot label with its unit, e.g. ``$\\Sigma$ [g cm$^{-2}$]``."""
        return f"{self.symbol} [{self.unit_label}]" if self.unit_label else self.symbol

    @property
    def astropy_unit(self) -> u.UnitBase:
        """The unit as an astropy unit (dimensionless for "" and "dex")."""
        if self.unit in ("", "dex"):
            return u.dimensionless_unscaled
        return u.Unit(self.unit)


_CM2S = r"cm$^2$ s$^{-1}$"


def _q(name, unit, symbol, tex, unit_label, title, **kw) -> QuantityInfo:
    return QuantityInfo(name, unit, symbol, tex, unit_label, title, **kw)


#: name -> description; sampled parameters first, then derived quantities, each in summary order
QUANTITIES: dict[str, QuantityInfo] = {q.name: q for q in (
    # parameters (run-config [priors] keys)
    _q("mass_to_flux", "", r"$\mu_0$", r"$\mu_0$", "", "mass-to-flux ratio", log=True),
    _q("ionization", "", r"$x_e$", r"$x_e$", "", "ionization fraction", log=True),
    _q("eta_ad", "cm2 / s", r"$\eta_\mathrm{AD}$", r"$\eta_\mathrm{AD}$", _CM2S,
       "ambipolar diffusivity", log=True),
    _q("eta_ohm", "cm2 / s", r"$\eta_\mathrm{O}$", r"$\eta_\mathrm{O}$", _CM2S, "Ohmic diffusivity",
       log=True),
    _q("surface_density", "g / cm2", r"$\Sigma$", r"$\Sigma$", r"g cm$^{-2}$", "surface density"),
    _q("temperature", "K", r"$T$", r"$T$", "K", "temperature"),
    _q("stellar_mass", "solMass", r"$M_\star$", r"$M_\star$", r"M$_\odot$", "stellar mass"),
    _q("radius", "au", r"$r$", r"$r$", "au", "radius"),
    _q("kappa", "1 / s", r"$\kappa$", r"$\kappa$", r"s$^{-1}$", "epicyclic frequency", log=True,
       allow_zero=True),
    _q("external_pressure", "dyn / cm2", r"$P_\mathrm{ext}$", r"$P_\mathrm{ext}$", r"dyn cm$^{-2}$",
       "external pressure", allow_zero=True),
    _q("spacing_scatter", "dex", r"$\sigma_\lambda$", r"$\sigma_\lambda$", "dex",
       "intrinsic spacing scatter", allow_zero=True),
    _q("mass_scatter", "dex", r"$\sigma_M$", r"$\sigma_M$", "dex", "intrinsic mass scatter",
       allow_zero=True),
    _q("spacing_calibration", "", r"$f_\lambda$", r"$f_\lambda$", "", "spacing calibration"),
    _q("mass_calibration", "", r"$f_M$", r"$f_M$", "", "mass calibration"),
    # radial profile (model.profile = "power-law"): X(r) = X(r_0) (r / r_0)^-index
    _q("reference_radius", "au", r"$r_0$", r"$r_0$", "au", "reference radius"),
    _q("surface_density_index", "", r"$p$", r"$p$", "", "surface-density power-law index",
       allow_zero=True),
    _q("temperature_index", "", r"$q$", r"$q$", "", "temperature power-law index", allow_zero=True),
    _q("mass_to_flux_index", "", r"$i_\mu$", r"$i_\mu$", "", "mass-to-flux power-law index",
       allow_zero=True),
    _q("ionization_index", "", r"$i_x$", r"$i_x$", "", "ionization power-law index",
       allow_zero=True),
    # derived quantities (summary rows)
    _q("field", "mG", r"$B$", r"$B$", "mG", "field strength", log=True, derived=True),
    _q("eta_total", "cm2 / s", r"$\eta_\mathrm{AD}+\eta_\mathrm{O}$",
       r"$\eta_\mathrm{AD}+\eta_\mathrm{O}$", _CM2S, "total diffusivity", log=True, derived=True),
    _q("tau_ni", "yr", r"$\tau_\mathrm{ni}$", r"$\tau_\mathrm{ni}$", "yr", "neutral-ion collision time",
       log=True, derived=True),
    _q("wavelength", "au", r"$\lambda_\mathrm{m}$", r"$\lambda_\mathrm{m}$", "au",
       "fastest-growing wavelength", derived=True),
    _q("growth_time", "yr", r"$t_\mathrm{m}$", r"$t_\mathrm{m}$", "yr", "growth time", derived=True),
    _q("fragment_mass", "jupiterMass", r"$M_\mathrm{frag}$", r"$M_\mathrm{frag}$", r"$M_\mathrm{J}$",
       "fragment mass", derived=True),
    _q("toomre_q", "", r"$Q$", r"$Q$", "", "Toomre Q", derived=True),
    _q("thermal_wavelength", "au", r"$\lambda_\mathrm{T}$", r"$\lambda_\mathrm{T}$", "au",
       "thermal fastest-growing wavelength", derived=True),
)}

#: run-config [priors] keys, in summary order
PARAMETER_NAMES: tuple[str, ...] = tuple(k for k, q in QUANTITIES.items() if not q.derived)

#: derived quantities (ionization, eta_ad and eta_ohm are also derived in some diffusion modes)
DERIVED_NAMES: tuple[str, ...] = ("field", "eta_ad", "eta_ohm", "eta_total", "ionization", "tau_ni",
                                  "wavelength", "growth_time", "fragment_mass", "toomre_q",
                                  "thermal_wavelength")


def info(name: str) -> QuantityInfo:
    """The registry entry of ``name``; KeyError names the known quantities."""
    try:
        return QUANTITIES[name]
    except KeyError:
        raise KeyError(f"unknown quantity {name!r}; known: {', '.join(QUANTITIES)}") from None


def unit_of(name: str) -> str:
    """Canonical unit string of ``name``."""
    return info(name).unit


def plot_label(name: str) -> str:
    """Plot label (symbol and unit) of ``name``."""
    return info(name).label


def summary_order(names) -> list[str]:
    """``names`` sorted in registry order (unknown names last, in their given order)."""
    pos = {k: i for i, k in enumerate(QUANTITIES)}
    return sorted(names, key=lambda n: pos.get(n, len(pos)))
