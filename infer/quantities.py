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

#: units written differently in plain text (display only; astropy reads the unit strings)
_PLAIN_UNITS = {"jupiterMass": "M_Jup", "solMass": "M_sun"}
#: units spelled differently in JSON key suffixes ("fragment_mass_mjup")
_KEY_UNITS = {"jupiterMass": "mjup"}


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
    auxiliary : bool
        Neither a parameter nor a summary row: another way to state a condition, or a
        quantity of the clump catalog.
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
    auxiliary: bool = False

    @property
    def label(self) -> str:
        """Plot label with its unit, e.g. ``$\\Sigma$ [g cm$^{-2}$]``."""
        return f"{self.symbol} [{self.unit_label}]" if self.unit_label else self.symbol

    @property
    def unit_text(self) -> str:
        """The unit in plain text, e.g. "cm2/s", "M_Jup" ("" when dimensionless)."""
        return _PLAIN_UNITS.get(self.unit, self.unit.replace(" / ", "/"))

    @property
    def text_label(self) -> str:
        """Plain-text name with its unit, e.g. "field strength [mG]"."""
        return f"{self.title} [{self.unit_text}]" if self.unit_text else self.title

    def key(self, stem: str | None = None) -> str:
        """JSON key of the value in this unit: ``stem`` (default the name) + unit suffix.

        E.g. "wavelength_au", "fragment_mass_mjup", "eta_ad_cm2_s"; no suffix when
        dimensionless.
        """
        stem = self.name if stem is None else stem
        if self.unit in ("", "dex"):
            return stem
        return f"{stem}_{_KEY_UNITS.get(self.unit, self.unit.replace(' / ', '_'))}"

    @property
    def astropy_unit(self) -> u.UnitBase:
        """The unit as an astropy unit (dimensionless for "" and "dex")."""
        if self.unit in ("", "dex"):
            return u.dimensionless_unscaled
        return u.Unit(self.unit)

    @property
    def column_unit(self) -> u.UnitBase:
        """The unit of a table column of this quantity (``dex`` kept; "" is dimensionless)."""
        return u.Unit(self.unit) if self.unit else u.dimensionless_unscaled


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
    # further outputs of the forward model (infer predict), not summary rows
    _q("thermal_mass", "jupiterMass", r"$M_\mathrm{T}$", r"$M_\mathrm{T}$", r"$M_\mathrm{J}$",
       "thermal fragment mass", derived=True),
    _q("toomre_q_critical_magnetic", "", r"$Q_\mathrm{crit,B}$", r"$Q_\mathrm{crit,B}$", "",
       "critical Toomre Q with the field's support", derived=True),
    _q("band_short", "au", r"$\lambda_\mathrm{min}$", r"$\lambda_\mathrm{min}$", "au",
       "shortest growing wavelength", derived=True),
    _q("band_long", "au", r"$\lambda_\mathrm{max}$", r"$\lambda_\mathrm{max}$", "au",
       "longest growing wavelength", derived=True),
    _q("midplane_density", "g / cm3", r"$\rho_\mathrm{c}$", r"$\rho_\mathrm{c}$", r"g cm$^{-3}$",
       "midplane density", derived=True),
    _q("scale_height", "au", r"$Z_0$", r"$Z_0$", "au", "half-thickness", derived=True),
    # other ways to state a condition, and the clump catalog
    _q("column_density", "cm-2", r"$N$", r"$N$", r"cm$^{-2}$", "H2 column density",
       log=True, auxiliary=True),
    _q("cosmic_ray_rate", "1 / s", r"$\zeta$", r"$\zeta$", r"s$^{-1}$",
       "cosmic-ray ionization rate", log=True, auxiliary=True),
    _q("spacing", "au", r"$s$", r"$s$", "au", "clump spacing", auxiliary=True),
    _q("clump_mass", "jupiterMass", r"$m$", r"$m$", r"$M_\mathrm{J}$", "clump mass",
       auxiliary=True),
    _q("area", "au2", r"$A$", r"$A$", r"au$^2$", "searched area", auxiliary=True),
)}

#: run-config [priors] keys, in summary order
PARAMETER_NAMES: tuple[str, ...] = tuple(k for k, q in QUANTITIES.items()
                                         if not (q.derived or q.auxiliary))

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
