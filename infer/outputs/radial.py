"""The radial figure of a power-law fit: lambda_m(r) and M_frag(r) against the catalog.

:func:`radial_band` evaluates the model for a subset of posterior samples on a grid of radii
(one kernel call for all of them); :func:`radial_figure` draws the posterior bands (median,
68% and 95%) of the calibrated fastest wavelength f_lambda lambda_m(r) and fragment mass
f_M M_frag(r), with the observed spacings at the mean radius of their two clumps and the
masses at their clumps' radii, the beam's resolvable length along each spacing and the
detection limit when the catalog gives them. ``radial.png`` / ``radial.pdf`` in the fit folder.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..constants import AU, M_JUP
from ..inference.model import Model
from ..inference.posterior import Posterior

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["RadialBand", "radial_band", "radial_figure", "RADIAL_FILE"]

#: base name of the figure in the fit folder
RADIAL_FILE = "radial"

_BAND = "#1f4e79"
_MASS = "#7b3294"
_OBS = "black"
_LIMIT = "#d95f02"
_QUANTILES = (0.5, 0.16, 0.84, 0.025, 0.975)


@dataclass(frozen=True)
class RadialBand:
    """Posterior bands of the model against radius, and the observations.

    Attributes
    ----------
    radius : ndarray (R,)
        Grid of radii, au.
    wavelength, fragment_mass : ndarray (5, R)
        Median, p16, p84, p02.5, p97.5 of f_lambda lambda_m (au) and f_M M_frag (M_Jup).
    spacing_radius, spacings, spacing_err : ndarray (E,)
        Observed spacings (au) at their radii (au), with one-sigma errors.
    mass_radius, masses, mass_err : ndarray (N,)
    spacing_min : ndarray (E,) or None
        The beam's resolvable length along each spacing, au.
    mass_limit : float or None
        M_Jup.
    reference_radius : float
        au.
    n_samples : int
    """

    radius: np.ndarray
    wavelength: np.ndarray
    fragment_mass: np.ndarray
    spacing_radius: np.ndarray
    spacings: np.ndarray
    spacing_err: np.ndarray
    mass_radius: np.ndarray
    masses: np.ndarray
    mass_err: np.ndarray
    spacing_min: np.ndarray | None
    mass_limit: float | None
    reference_radius: float
    n_samples: int


def radial_band(post: Posterior, model: Model, *, n_samples: int = 300, n_radii: int = 60,
                seed: int = 0) -> RadialBand:
    """Posterior bands of lambda_m(r) and M_frag(r) for a ``profile = "power-law"`` fit.

    Parameters
    ----------
    post : Posterior
    model : Model
        With ``options.profile == "power-law"``.
    n_samples : int
        Posterior samples used (a random subset when there are more).
    n_radii : int
        Points of the log-spaced radius grid, from 0.8 x the innermost to 1.25 x the
        outermost clump.
    seed : int

    Raises
    ------
    ValueError
        For a local-profile model or an empty posterior.
    """
    if model.plan is None:
        raise ValueError('the radial figure needs a fit with model.profile = "power-law"')
    if post.n == 0:
        raise ValueError("radial figure: the posterior holds no samples")
    o = model.obs
    rng = np.random.default_rng(seed)
    idx = np.sort(rng.choice(post.n, min(n_samples, post.n), replace=False))
    theta = post.theta[idx]
    r_obs = np.concatenate([o.mass_radius, o.spacing_radius]) / AU
    grid = np.geomspace(0.8 * r_obs.min(), 1.25 * r_obs.max(), n_radii)
    _, _, fw = model.evaluate(theta, radii=grid)
    v = model.values(theta)
    lam = fw.wavelength.reshape(-1, grid.size) / AU * v["spacing_calibration"][:, None]
    mass = fw.fragment_mass.reshape(-1, grid.size) / M_JUP * v["mass_calibration"][:, None]
    with np.errstate(invalid="ignore"):
        q_lam = np.nanquantile(np.where(np.isfinite(lam), lam, np.nan), _QUANTILES, axis=0)
        q_mass = np.nanquantile(np.where(np.isfinite(mass), mass, np.nan), _QUANTILES, axis=0)
    s = np.exp(o.ln_spacing) / AU
    m = np.exp(o.ln_mass) / M_JUP
    return RadialBand(
        radius=grid, wavelength=q_lam, fragment_mass=q_mass,
        spacing_radius=o.spacing_radius / AU, spacings=s, spacing_err=s * np.sqrt(o.var_spacing),
        mass_radius=o.mass_radius / AU, masses=m, mass_err=m * np.sqrt(o.var_mass),
        spacing_min=None if o.ln_resolvable is None else np.exp(o.ln_resolvable) / AU,
        mass_limit=None if not np.isfinite(o.ln_mass_limit) else float(np.exp(o.ln_mass_limit) / M_JUP),
        reference_radius=float(model.priors["reference_radius"].value),
        n_samples=int(theta.shape[0]))


def _panel(ax, band: RadialBand, q: np.ndarray, color: str, label: str) -> None:
    ax.fill_between(band.radius, q[3], q[4], color=color, alpha=0.16, lw=0,
                    label="95% of posterior samples")
    ax.fill_between(band.radius, q[1], q[2], color=color, alpha=0.36, lw=0,
                    label="68% of posterior samples")
    ax.plot(band.radius, q[0], color=color, lw=2.0, label=label)
    ax.axvline(band.reference_radius, color="0.45", lw=0.9, ls=":",
               label=f"reference radius {band.reference_radius:.4g} au")
    ax.set_xscale("log")
    ax.set_yscale("log")


def radial_figure(band: RadialBand, *, title: str | None = None,
                  figsize: tuple[float, float] = (8.0, 9.6)) -> Figure:
    """Draw a :class:`RadialBand`: two panels (spacing scale, fragment mass) against radius.

    Parameters
    ----------
    band : RadialBand
    title : str, optional
        Region name for the title.
    figsize : (float, float)
        Inches.

    Returns
    -------
    matplotlib.figure.Figure
        On the Agg canvas (not registered with pyplot).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"hspace": 0.08})
    _panel(top, band, band.wavelength, _BAND, r"median $f_\lambda\,\lambda_\mathrm{m}(r)$ (spacings)")
    top.errorbar(band.spacing_radius, band.spacings, yerr=band.spacing_err, fmt="o", ms=5,
                 color=_OBS, lw=1.0, capsize=2, zorder=5,
                 label=f"observed spacings (n = {band.spacings.size}), at the mean radius "
                       f"of their clumps")
    if band.spacing_min is not None:
        top.scatter(band.spacing_radius, band.spacing_min, marker="_", s=140, color=_LIMIT,
                    lw=1.8, zorder=4, label="shortest spacing the beam resolves along each")
    top.set_ylabel("spacing [au]", fontsize=11)
    _panel(bottom, band, band.fragment_mass, _MASS, r"median $f_M\,M_\mathrm{frag}(r)$ (masses)")
    bottom.errorbar(band.mass_radius, band.masses, yerr=band.mass_err, fmt="s", ms=5,
                    color=_OBS, lw=1.0, capsize=2, zorder=5,
                    label=f"observed masses (n = {band.masses.size})")
    if band.mass_limit is not None:
        bottom.axhline(band.mass_limit, color=_LIMIT, lw=1.5, ls="--",
                       label=f"detection limit {band.mass_limit:.3g} $M_\\mathrm{{J}}$")
    bottom.set_ylabel(r"mass [$M_\mathrm{J}$]", fontsize=11)
    bottom.set_xlabel("radius [au]", fontsize=11)
    bottom.set_xlim(band.radius[0], band.radius[-1])
    plain = FuncFormatter(lambda x, _: f"{x:g}")
    for ax in (top, bottom):
        for axis in (ax.xaxis, ax.yaxis):
            axis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
            axis.set_major_formatter(plain)
            axis.set_minor_formatter(NullFormatter())
        ax.grid(True, which="major", color="0.9", lw=0.6)
    seen: dict[str, object] = {}
    for ax in (top, bottom):       # one legend below the panels, each entry once
        for h, lab in zip(*ax.get_legend_handles_labels(), strict=True):
            seen.setdefault(lab, h)
    fig.subplots_adjust(left=0.11, right=0.97, top=0.94, bottom=0.2)
    fig.legend(list(seen.values()), list(seen), loc="lower center", ncol=2, fontsize=8.5,
               frameon=False, bbox_to_anchor=(0.5, 0.005))
    head = f"{title}: radial profile" if title else "Radial profile"
    top.set_title(f"{head}, posterior bands over {band.n_samples} samples", fontsize=12)
    return fig
