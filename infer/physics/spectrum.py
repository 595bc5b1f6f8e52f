"""Growth rate against wavelength (the dispersion curve) for one set of conditions.

:func:`growth_spectrum` evaluates the growth rate of the fastest-growing branch
on a logarithmic grid of wavelengths that spans the unstable band with margins
on both sides; :func:`write_spectrum` stores it as CSV or draws it (PNG, PDF).
Files are written atomically: a temporary file in the same folder, renamed
over the target only once it is complete.
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

import astropy.units as u
import numpy as np

from ..constants import AU, YR
from ..errors import InferError
from . import dispersion
from .conditions import Conditions, kernel_inputs
from .predict import Prediction, prediction_from_conditions
from .resolve import resolve_conditions

__all__ = ["Spectrum", "growth_spectrum", "write_spectrum", "spectrum_figure", "FORMATS"]

#: output suffixes understood by :func:`write_spectrum`
FORMATS = (".csv", ".png", ".pdf")

_MARGIN = 2.0          # grid reaches this factor beyond each band edge
_OPEN_BAND = 100.0     # without rotation: grid up to this many times the shortest growing wavelength
_MIN_POINTS = 10
_MAX_POINTS = 1_000_000


@dataclass(frozen=True)
class Spectrum:
    """Growth rate of the fastest-growing branch on a wavelength grid.

    Attributes
    ----------
    wavelength : Quantity [au], shape (n,)
        Increasing; the grid point nearest the fastest wavelength is moved onto it.
    growth_rate : Quantity [1 / yr], shape (n,)
        gamma(lambda) >= 0 (0 where nothing grows).
    growth_time : Quantity [yr], shape (n,)
        e-folding time 1 / gamma (inf where nothing grows).
    prediction : Prediction
        The fastest mode, band and reference scales for the same conditions.
    conditions : Conditions
        The resolved conditions (cgs).
    """

    wavelength: u.Quantity
    growth_rate: u.Quantity
    growth_time: u.Quantity
    prediction: Prediction
    conditions: Conditions

    @property
    def unstable(self) -> bool:
        """Whether any wavelength grows."""
        return bool(np.asarray(self.prediction.unstable))


def growth_spectrum(*, n_points: int = 400, **conditions: Any) -> Spectrum:
    """Growth rate against wavelength for one set of local conditions.

    Parameters
    ----------
    n_points : int
        Number of wavelengths (10 to 1 000 000), logarithmically spaced from half
        the shortest growing wavelength to twice the longest one (without
        rotation, where the band is open: to 100 times the shortest one, or 10
        times the fastest, whichever is longer). The thermal fastest wavelength
        is always inside the range.
    **conditions
        The keyword arguments of :func:`infer.physics.predict` (scalars only), e.g.
        ``surface_density="60 g/cm2", temperature="35 K", mass_to_flux=1.6``.

    Returns
    -------
    Spectrum
        Where nothing grows, the growth rate is 0 everywhere and the grid spans
        a tenth to ten times the thermal fastest wavelength.

    Raises
    ------
    InferError
        (a ValueError) for a bad ``n_points``, array-valued conditions, or any
        invalid condition (the message names the argument).
    """
    if isinstance(n_points, bool) or not isinstance(n_points, (int, np.integer)) \
            or not _MIN_POINTS <= n_points <= _MAX_POINTS:
        raise InferError(f"n_points: must be an integer from {_MIN_POINTS} to {_MAX_POINTS}, "
                         f"got {n_points!r}")
    c = resolve_conditions(**conditions)
    if c.shape != ():
        raise InferError(f"growth_spectrum takes one set of conditions (scalars), got arrays "
                         f"of shape {c.shape}; call it once per set")
    pred = prediction_from_conditions(c)
    lam = _grid(pred, int(n_points))                      # au

    t0, l0 = float(c.eq.time), float(c.eq.length)
    rate = dispersion.growth_rate(2.0 * np.pi * l0 / (lam * AU), kernel_inputs(c)) / t0 * YR  # 1/yr
    with np.errstate(divide="ignore"):
        time = np.where(rate > 0.0, 1.0 / np.where(rate > 0.0, rate, 1.0), np.inf)
    return Spectrum(wavelength=lam * u.au, growth_rate=rate / u.yr, growth_time=time * u.yr,
                    prediction=pred, conditions=c)


def _grid(pred: Prediction, n: int) -> np.ndarray:
    """Log-spaced wavelengths in au covering the band (or the thermal scale if stable)."""
    lam_t = float(pred.thermal_wavelength.to_value(u.au))
    if not bool(np.asarray(pred.unstable)):
        return np.geomspace(lam_t / 10.0, lam_t * 10.0, n)
    short = float(pred.band_short.to_value(u.au))
    long_ = float(pred.band_long.to_value(u.au))
    lam_m = float(pred.wavelength.to_value(u.au))
    lo = min(short, lam_t) / _MARGIN
    hi = long_ * _MARGIN if np.isfinite(long_) else max(_OPEN_BAND * short, 10.0 * lam_m)
    hi = max(hi, lam_t * _MARGIN)
    lam = np.geomspace(lo, hi, n)
    lam[np.argmin(np.abs(np.log(lam / lam_m)))] = lam_m    # order is kept: nearest point
    return lam


# -- output -------------------------------------------------------------------

def write_spectrum(spec: Spectrum, path: str | os.PathLike, *, name: str = "path") -> Path:
    """Write ``spec`` to ``path``; the suffix picks the format (.csv, .png, .pdf).

    CSV columns: ``wavelength_au,growth_rate_per_yr,growth_time_yr`` (growth time
    ``inf`` where nothing grows). Figures: growth rate against wavelength on log
    axes, with the growth time on the right-hand axis, the fastest and the
    thermal fastest wavelengths marked and the unstable band shaded.

    Parameters
    ----------
    spec : Spectrum
    path : str or path-like
    name : str
        How to call ``path`` in error messages (e.g. ``"--out"``).

    Returns
    -------
    Path
        The file written.

    Raises
    ------
    InferError
        Unknown suffix, or the file cannot be written (nothing is left behind).
    """
    target = Path(path)
    suffix = target.suffix.lower()
    if suffix not in FORMATS:
        raise InferError(f"{name}: unknown file type {suffix or '(none)'!r} in {str(target)!r}; "
                         f"use one of {', '.join(FORMATS)}")
    if suffix == ".csv":
        _atomic_write(target, lambda fh: fh.write(_csv_text(spec).encode()), name)
    else:
        fig = spectrum_figure(spec)
        _atomic_write(target, lambda fh: fig.savefig(fh, format=suffix[1:], dpi=150), name)
    return target


def _csv_text(spec: Spectrum) -> str:
    rows = ["wavelength_au,growth_rate_per_yr,growth_time_yr"]
    for lam, rate, time in zip(spec.wavelength.to_value(u.au), spec.growth_rate.to_value(1 / u.yr),
                               spec.growth_time.to_value(u.yr), strict=True):
        rows.append(f"{lam:.10e},{rate:.10e},{time:.10e}")
    return "\n".join(rows) + "\n"


def _atomic_write(target: Path, write: Callable[[IO[bytes]], Any], name: str) -> None:
    if target.is_dir():
        raise InferError(f"{name}: {str(target)!r} is a folder; give a file name")
    tmp = target.with_name(f".{target.name}.{os.getpid()}.{secrets.token_hex(4)}.tmp")
    try:
        fh = open(tmp, "xb")    # closed by the "with" below; removed on failure
    except OSError as exc:
        raise InferError(f"{name}: cannot write {str(target)!r} ({exc.strerror or exc}); "
                         f"check that the folder exists and is writable") from None
    try:
        with fh:
            write(fh)
        os.replace(tmp, target)
    except OSError as exc:
        _remove(tmp)
        raise InferError(f"{name}: cannot write {str(target)!r} ({exc.strerror or exc})") from None
    except BaseException:
        _remove(tmp)
        raise


def _remove(path: Path) -> None:
    try:
        path.unlink()
    except OSError:
        pass


def spectrum_figure(spec: Spectrum):
    """A matplotlib Figure of the spectrum (Agg-compatible, no pyplot state).

    matplotlib is imported here, so the rest of the package does not need it.
    """
    from matplotlib.figure import Figure
    from matplotlib.ticker import FuncFormatter

    pred = spec.prediction
    lam = spec.wavelength.to_value(u.au)
    rate = spec.growth_rate.to_value(1 / u.yr)
    grows = rate > 0
    lam_t = float(pred.thermal_wavelength.to_value(u.au))

    fig = Figure(figsize=(7.2, 4.8), layout="constrained")
    ax = fig.add_subplot()
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlim(lam[0], lam[-1])
    if spec.unstable:
        lam_m = float(pred.wavelength.to_value(u.au))
        g_m = 1.0 / float(pred.growth_time.to_value(u.yr))
        short = float(pred.band_short.to_value(u.au))
        long_ = float(pred.band_long.to_value(u.au))
        # at least ~2 decades (labelled decades), at most 3.4 (the band edges fall to 0)
        ax.set_ylim(min(max(g_m * 1e-3, 0.5 * rate[grows].min()), g_m / 40.0), g_m * 2.5)
        ax.axvspan(short, long_ if np.isfinite(long_) else lam[-1], color="#dcebf7", zorder=0,
                   label=f"growing band, {_band_text(short, long_)}")
        ax.plot(lam[grows], rate[grows], color="#1f4e79", lw=2, label="growth rate")
        ax.axvline(lam_t, color="#7f7f7f", ls="--", lw=1.2,
                   label=f"thermal fastest wavelength, {_num(lam_t)} au")
        ax.axvline(lam_m, color="#c0392b", lw=0.8, alpha=0.6)
        ax.plot([lam_m], [g_m], "o", color="#c0392b", ms=7, zorder=5,
                label=f"fastest: {_num(lam_m)} au, e-folding time {_num(1 / g_m)} yr")
        ax.legend(loc="best", fontsize=8, framealpha=0.9)
    else:
        ax.set_ylim(1e-6, 1.0)
        ax.text(0.5, 0.5, "no wavelength grows under these conditions", ha="center",
                va="center", transform=ax.transAxes)
    ax.set_xlabel("wavelength (au)")
    ax.set_ylabel("growth rate (1/yr)")
    sec = ax.secondary_yaxis("right", functions=(_inverse, _inverse))
    sec.set_ylabel("e-folding time (yr)")
    decades = np.log10(lam[-1] / lam[0])
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: _tick(v)))
    ax.xaxis.set_minor_formatter(FuncFormatter(lambda v, _: _tick(v, minor=decades < 2.5)))
    ax.grid(True, which="major", color="#e6e6e6", lw=0.6)
    ax.set_title(_title(spec.conditions), fontsize=9)
    return fig


def _inverse(x):
    with np.errstate(divide="ignore"):
        return 1.0 / np.asarray(x, dtype=float)


def _num(v: float) -> str:
    """Three significant figures, without an exponent between 0.01 and 1e5."""
    if 0.01 <= abs(v) < 1e5:
        return np.format_float_positional(v, precision=3, unique=False, fractional=False,
                                          trim="-")
    mant, exp = f"{v:.2e}".split("e")
    mant = mant.rstrip("0").rstrip(".")
    return rf"{mant}$\times$10$^{{{int(exp)}}}$"


def _tick(v: float, minor: bool | None = None) -> str:
    """Tick labels on the log wavelength axis: decades always, 2 and 5 when ``minor``."""
    if v <= 0:
        return ""
    exp = np.floor(np.log10(v) + 1e-9)
    mant = round(v / 10**exp)
    if minor is not None and not (minor and mant in (2, 5)):
        return ""
    if 0.01 <= v < 1e5:
        return f"{v:g}"
    return rf"${mant}\times10^{{{int(exp)}}}$" if mant != 1 else rf"$10^{{{int(exp)}}}$"


def _band_text(short: float, long_: float) -> str:
    if np.isfinite(long_):
        return f"{_num(short)} to {_num(long_)} au"
    return f"above {_num(short)} au"


def _title(c: Conditions) -> str:
    mu0 = float(c.mu0)
    kappa = float(c.kappa) * YR
    eta = float(c.eta_ad + c.eta_ohm)
    first = (rf"$\Sigma$ = {_num(float(c.sigma))} g cm$^{{-2}}$,  "
             rf"$T$ = {_num(float(c.temperature))} K,  ")
    first += (rf"$\mu_0$ = {_num(mu0)} (B = {_num(float(c.field) * 1e3)} mG)" if np.isfinite(mu0)
              else "no field")
    second = rf"$\kappa$ = {_num(kappa)} yr$^{{-1}}$" if kappa > 0 else "no rotation"
    if np.isfinite(mu0):
        second += (rf",  $\eta_{{AD}}+\eta_{{O}}$ = {_num(eta)} cm$^2$ s$^{{-1}}$" if eta > 0
                   else ",  flux frozen")
    x_e = float(c.x_e)
    if np.isfinite(x_e):
        second += rf",  $x_e$ = {_num(x_e)}"
    p_ext = float(c.p_ext)
    if p_ext > 0:
        second += rf",  $P_{{ext}}$ = {_num(p_ext)} dyn cm$^{{-2}}$"
    return first + "\n" + second
