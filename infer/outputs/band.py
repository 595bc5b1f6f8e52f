"""The growth-rate spectrum of a fit as a posterior band.

For a subset of the posterior samples, the growth rate of the fastest-growing
branch is evaluated on one common grid of wavelengths, in one vectorized call
of the dimensionless kernel (an array of shape (n_samples, n_wavelengths)).
Its pointwise median and 68% / 95% central intervals over the samples form
the band; the observed clump spacings are drawn beside it as a rug.

The dimensionless parameters are those of :func:`infer.physics.conditions.kernel_inputs`
for the conditions of :meth:`infer.inference.model.Model.evaluate` (the ones the likelihood
uses), one row per sample; the wavenumber on the grid is k~ = 2 pi L0 / lambda.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..constants import AU, YR
from ..inference.model import Model
from ..inference.posterior import Posterior
from ..physics import dispersion
from ..physics.conditions import kernel_inputs

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["SpectrumBand", "spectrum_band", "band_figure", "growth_rate_grid"]

_BAND_COLOR = "#1f4e79"
_OBS_COLOR = "black"
_LAM_COLOR = "#d95f02"


@dataclass(frozen=True)
class SpectrumBand:
    """Pointwise posterior quantiles of the growth rate against wavelength.

    Attributes
    ----------
    wavelength : ndarray (n_k,)
        Wavelength grid, au (increasing).
    median, p16, p84, p02_5, p97_5 : ndarray (n_k,)
        Quantiles of the growth rate over the samples, 1/yr (0 where nothing grows).
    fastest_wavelength : ndarray (n_samples,)
        lambda_m of each sample used, au.
    fastest_rate : ndarray (n_samples,)
        gamma_m of each sample used, 1/yr.
    spacings : ndarray (n_spacings,)
        Observed spacings, au.
    n_samples : int
        Posterior samples the band is made of.
    """

    wavelength: np.ndarray
    median: np.ndarray
    p16: np.ndarray
    p84: np.ndarray
    p02_5: np.ndarray
    p97_5: np.ndarray
    fastest_wavelength: np.ndarray
    fastest_rate: np.ndarray
    spacings: np.ndarray
    n_samples: int


def growth_rate_grid(model: Model, theta: np.ndarray, wavelength_au: np.ndarray):
    """Growth rate of each parameter row on a common wavelength grid.

    Parameters
    ----------
    model : Model
    theta : ndarray (n, ndim)
        ln of the sampled parameters.
    wavelength_au : ndarray (n_k,)
        Wavelengths, au.

    Returns
    -------
    rate : ndarray (n, n_k)
        Growth rate, 1/yr (0 where the mode does not grow).
    fw : infer.physics.predict.Forward
        The forward model of the same rows (fastest mode, band edges; cgs).
    """
    _, c, fw = model.evaluate(theta)
    p = kernel_inputs(c)
    col = dispersion.SheetParams(p.inv_mu2[:, None], p.p_ext[:, None], p.kappa[:, None],
                                 p.eta[:, None])
    t0 = c.eq.time
    k = 2.0 * np.pi * c.eq.length[:, None] / (np.asarray(wavelength_au, dtype=float)[None, :] * AU)
    rate = dispersion.growth_rate(k, col) / t0[:, None] * YR
    return rate, fw


def _grid(fw, spacings_au: np.ndarray, n_points: int) -> np.ndarray:
    """Log grid from half the shortest growing wavelength to twice the longest (central 98%)."""
    short = fw.band_short[np.isfinite(fw.band_short)] / AU
    long_ = fw.band_long[np.isfinite(fw.band_long)] / AU
    lam_m = fw.wavelength[np.isfinite(fw.wavelength)] / AU
    lo = 0.5 * float(np.quantile(short, 0.01)) if short.size else 0.3 * float(np.median(lam_m))
    if long_.size and long_.size >= 0.5 * fw.band_long.size:
        hi = 2.0 * float(np.quantile(long_, 0.99))
    else:  # no rotation: the band is open towards long wavelengths
        hi = 10.0 * float(np.quantile(lam_m, 0.99))
    if spacings_au.size:
        lo = min(lo, 0.7 * float(spacings_au.min()))
        hi = max(hi, 1.4 * float(spacings_au.max()))
    return np.geomspace(lo, hi, n_points)


def spectrum_band(post: Posterior, model: Model, *, spacings_au=None, n_samples: int = 400,
                  n_points: int = 240, seed: int = 0) -> SpectrumBand:
    """Posterior band of the growth-rate spectrum.

    Parameters
    ----------
    post : Posterior
    model : Model
    spacings_au : array_like, optional
        Observed spacings to mark, au (default: those of ``model.obs``).
    n_samples : int
        Posterior samples used (a random subset without replacement when
        ``post`` holds more).
    n_points : int
        Wavelengths on the log grid.
    seed : int
        Seed of the subset.

    Returns
    -------
    SpectrumBand
    """
    if post.n == 0:
        raise ValueError("spectrum band: the posterior holds no samples")
    rng = np.random.default_rng(seed)
    idx = np.sort(rng.choice(post.n, min(n_samples, post.n), replace=False))
    theta = post.theta[idx]
    if spacings_au is None:
        spacings_au = np.exp(model.obs.ln_spacing) / AU
    spacings_au = np.asarray(spacings_au, dtype=float)
    _, _, fw = model.evaluate(theta)
    grid = _grid(fw, spacings_au, n_points)
    rate, fw = growth_rate_grid(model, theta, grid)
    q = np.quantile(rate, [0.5, 0.16, 0.84, 0.025, 0.975], axis=0)
    return SpectrumBand(grid, q[0], q[1], q[2], q[3], q[4], fw.wavelength / AU,
                        fw.growth_rate * YR, spacings_au, int(theta.shape[0]))


def _minor_label(x: float, _pos=None) -> str:
    """Label the 2x and 5x minor ticks of a log axis (plain numbers)."""
    mant = x / 10.0 ** np.floor(np.log10(x) + 1e-9)
    return f"{x:g}" if np.isclose(mant, 2.0) or np.isclose(mant, 5.0) else ""


def band_figure(band: SpectrumBand, *, title: str | None = None,
                figsize: tuple[float, float] = (8.0, 5.0)) -> Figure:
    """Draw a :class:`SpectrumBand`: median line, 68% and 95% bands, spacing rug.

    Parameters
    ----------
    band : SpectrumBand
    title : str, optional
        Region name for the title.
    figsize : (float, float)
        Inches.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from matplotlib.ticker import FuncFormatter
    from matplotlib.transforms import blended_transform_factory

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.11, 0.13, 0.85, 0.75))
    lam = band.wavelength
    ax.fill_between(lam, band.p02_5, band.p97_5, color=_BAND_COLOR, alpha=0.18, lw=0,
                    label="95% of posterior samples")
    ax.fill_between(lam, band.p16, band.p84, color=_BAND_COLOR, alpha=0.38, lw=0,
                    label="68% of posterior samples")
    ax.plot(lam, band.median, color=_BAND_COLOR, lw=2.0, label="median growth rate")
    top = float(np.nanmax(band.p97_5)) if np.any(band.p97_5 > 0) else 1.0
    ax.set_ylim(-0.09 * top, 1.38 * top)
    lm = band.fastest_wavelength[np.isfinite(band.fastest_wavelength)]
    if lm.size:
        a, m, b = np.quantile(lm, [0.16, 0.5, 0.84])
        ax.axvspan(a, b, color=_LAM_COLOR, alpha=0.15, lw=0)
        ax.axvline(m, color=_LAM_COLOR, lw=1.2, ls="--",
                   label=rf"fastest wavelength $\lambda_\mathrm{{m}}$ = {m:.3g} au (68%: {a:.3g}-{b:.3g})")
    if band.spacings.size:
        tr = blended_transform_factory(ax.transData, ax.transAxes)
        ax.vlines(band.spacings, 0.0, 0.055, transform=tr, color=_OBS_COLOR, lw=1.4,
                  label=f"observed spacings (n = {band.spacings.size})")
    ax.axhline(0.0, color="0.5", lw=0.6)
    ax.set_xscale("log")
    ax.set_xlim(lam[0], lam[-1])
    ax.xaxis.set_major_formatter(FuncFormatter(lambda x, _: f"{x:g}"))
    ax.xaxis.set_minor_formatter(FuncFormatter(_minor_label))
    ax.set_xlabel("wavelength [au]", fontsize=11)
    ax.set_ylabel("growth rate [1/yr]", fontsize=11)
    ax.ticklabel_format(axis="y", style="sci", scilimits=(-3, 3), useMathText=True)
    ax.legend(loc="upper center", fontsize=8.5, frameon=False, ncol=2)
    head = f"{title}: growth-rate spectrum" if title else "Growth-rate spectrum"
    ax.set_title(f"{head} over {band.n_samples} posterior samples", fontsize=12)
    return fig
