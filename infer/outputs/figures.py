"""Figures of a fit: the corner plot and the posterior predictive check.

Figures are built on the Agg canvas directly (no pyplot window, no global
backend switch), so they render on machines without a screen and inside
worker processes. matplotlib and corner are imported only when a figure is
drawn.

* :func:`corner_figure` -- the sampled parameters and key derived quantities
  (field strength, total diffusivity, fastest wavelength, fragment mass).
* :func:`predictive_figure` -- observed spacings and masses against the
  distribution of new observations the posterior predicts.
* :func:`write_figures` -- both, as PDF and PNG, written atomically into a
  fit's output folder.
"""

from __future__ import annotations

import io
import re
import sys
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..inference.model import Model
from ..inference.posterior import Posterior
from ..inference.priors import PARAMETERS
from ..quantities import DERIVED_NAMES, QUANTITIES
from .files import atomic_write_bytes

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = [
    "write_figures",
    "corner_figure",
    "predictive_figure",
    "predictive_draws",
    "corner_columns",
    "CornerColumn",
    "DERIVED_LABELS",
    "FIGURE_NAMES",
    "CONTOUR_LEVELS",
]

#: base names of the figures :func:`write_figures` writes (one file per format)
FIGURE_NAMES = ("corner", "predictive")

#: 2-D contour levels: fraction of the samples inside (1 and 2 sigma of a 2-D Gaussian)
CONTOUR_LEVELS = (1.0 - np.exp(-0.5), 1.0 - np.exp(-2.0))

#: derived quantity -> plot label with its unit (units of infer.inference.model.DERIVED_UNITS)
DERIVED_LABELS: dict[str, str] = {k: QUANTITIES[k].label for k in DERIVED_NAMES}

#: quantities always shown as log10 (they range over many decades)
_ALWAYS_LOG = frozenset({"mass_to_flux", "ionization", "eta_ad", "eta_ohm", "eta_total", "field",
                         "kappa", "tau_ni"})

#: others are shown as log10 when their 1-99% range spans more than this factor (~0.7 dex)
_LOG_SPAN = 5.0

_LN10 = np.log(10.0)
_POSTERIOR = "#1f4e79"      # dark blue: posterior contours, predictive
_PRED_LIGHT = "#9ecae1"
_PRED_DARK = "#4292c6"
_MODEL = "#d95f02"          # orange: the model's own lambda_m / M_frag
_OBS = "black"
_TRUTH = "#c0392b"


# ------------------------------------------------------------------ helpers
def _new_figure(figsize: tuple[float, float]) -> Figure:
    """A figure on the Agg canvas, not registered with pyplot."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    return fig


def _close(fig: Figure) -> None:
    """Release a figure (and drop it from pyplot's registry if pyplot holds it)."""
    plt = sys.modules.get("matplotlib.pyplot")
    if plt is not None:
        plt.close(fig)
    fig.clear()


def _split_label(label: str) -> tuple[str, str]:
    """``"$T$ [K]"`` -> (``"T"``, ``" [K]"``): the math symbol and the unit suffix."""
    sym, sep, unit = label.partition(" [")
    unit = f" [{unit}" if sep else ""
    sym = sym.strip()
    if sym.startswith("$") and sym.endswith("$"):
        sym = sym[1:-1]
    return sym, unit


def _region_name(region) -> str | None:
    if region is None:
        return None
    if isinstance(region, str):
        return region
    return getattr(region, "name", None) or None


@dataclass(frozen=True)
class CornerColumn:
    """One column of the corner plot.

    Attributes
    ----------
    name : str
        Parameter or derived-quantity name.
    values : ndarray (n,)
        Plotted values (log10 of the quantity when ``log`` is true).
    label : str
        Axis label, with the unit.
    symbol : str
        Short mathtext symbol used in the panel title.
    log : bool
    """

    name: str
    values: np.ndarray
    label: str
    symbol: str
    log: bool

    def transform(self, x: float | None) -> float | None:
        """A value in the quantity's unit mapped to the plotted axis (None if not plottable)."""
        if x is None or not np.isfinite(x):
            return None
        if self.log:
            return float(np.log10(x)) if x > 0 else None
        return float(x)


def _wants_log(name: str, x: np.ndarray) -> bool:
    x = x[np.isfinite(x)]
    if name in PARAMETERS and PARAMETERS[name].unit == "dex":
        return False        # scatters are already logarithmic widths
    if x.size == 0 or np.any(x <= 0):
        return False
    if name in _ALWAYS_LOG:
        return True
    lo, hi = np.quantile(x, [0.01, 0.99])
    return bool(hi > _LOG_SPAN * lo)


def _column(name: str, x: np.ndarray, label: str) -> CornerColumn:
    x = np.asarray(x, dtype=float)
    log = _wants_log(name, x)
    sym, unit = _split_label(label)
    if log:
        with np.errstate(divide="ignore", invalid="ignore"):
            vals = np.log10(x)
        sym = rf"\log_{{10}}({sym})" if "+" in sym else rf"\log_{{10}}\,{sym}"
    else:
        vals = x
    sep = "\n" if unit and len(_plain(sym)) + len(_plain(unit)) > 16 else ""
    return CornerColumn(name, vals, f"${sym}${sep}{unit}".replace("\n ", "\n"), f"${sym}$", log)


def _plain(tex: str) -> str:
    """Rough printed form of a mathtext string (for length estimates)."""
    t = re.sub(r"\\(mathrm|,)", "", tex)
    t = re.sub(r"\\log", "log", t)
    t = re.sub(r"\\[A-Za-z]+", "x", t)
    return re.sub(r"[${}_^]", "", t)


def corner_columns(post: Posterior, model: Model, *,
                   derived: Sequence[str] = ("field", "eta_total", "wavelength",
                                             "fragment_mass")) -> list[CornerColumn]:
    """The columns the corner plot shows, in order.

    Every sampled parameter, then each requested derived quantity that is
    defined (not all NaN), varies across the samples and is not already a
    sampled parameter. A positive quantity spanning more than ~0.7 dex (and
    the mass-to-flux ratio, field, diffusivities, ionization and rates, always) is
    shown as log10.

    Parameters
    ----------
    post : Posterior
    model : Model
        Unused except for future per-model choices; kept for a stable signature.
    derived : sequence of str
        Keys of ``post.derived`` to add.
    """
    del model
    cols = [_column(n, post.values[n], PARAMETERS[n].label) for n in post.names]
    for name in derived:
        if name in post.names or name not in post.derived:
            continue
        x = np.asarray(post.derived[name], dtype=float)
        fin = x[np.isfinite(x)]
        if fin.size < 2 or np.ptp(fin) <= 1e-12 * max(abs(float(np.median(fin))), 1e-300):
            continue
        cols.append(_column(name, x, DERIVED_LABELS.get(name, name.replace("_", " "))))
    return cols


def _title_format(x: np.ndarray) -> str:
    """Decimals giving two significant digits on the smaller half-width of the 68% interval."""
    lo, mid, hi = np.quantile(x, [0.16, 0.5, 0.84])
    err = min(mid - lo, hi - mid)
    if not np.isfinite(err) or err <= 0:
        err = max(abs(mid), 1e-3) * 1e-2
    dec = int(np.clip(1 - np.floor(np.log10(err)), 0, 4))
    return f".{dec}f"


# --------------------------------------------------------------- the corner
def corner_figure(post: Posterior, model: Model, *,
                  derived: Sequence[str] = ("field", "eta_total", "wavelength", "fragment_mass"),
                  truths: Mapping[str, float] | None = None, truths_label: str = "reference values",
                  title: str | None = None) -> Figure:
    """Corner plot of the sampled parameters and key derived quantities.

    Parameters
    ----------
    post : Posterior
    model : Model
    derived : sequence of str
        Derived quantities to add (see :func:`corner_columns`).
    truths : mapping name -> value, optional
        Reference values (e.g. the MAP, or the truth of a simulated catalog)
        in the quantity's own unit (canonical parameter unit, or
        :data:`infer.inference.model.DERIVED_UNITS`); drawn as lines.
    truths_label : str
        What the reference lines are, for the figure note.
    title : str, optional
        Region name for the figure title.

    Returns
    -------
    matplotlib.figure.Figure
        K x K axes for K plotted columns.
    """
    import corner

    cols = corner_columns(post, model, derived=derived)
    data = np.column_stack([c.values for c in cols])
    data = data[np.all(np.isfinite(data), axis=1)]
    if data.shape[0] < 2 * data.shape[1] + 2:
        raise ValueError(f"corner plot: only {data.shape[0]} finite posterior samples for "
                         f"{data.shape[1]} columns; run the chain longer")
    k = len(cols)
    panel = 1.75 if k > 4 else 2.2
    side = panel * k + 1.6
    extra = 1.4 if k <= 2 else 0.0          # room for the note under small plots
    fig = _new_figure((side, side + 0.5 + extra))
    fs = 13.0 if k > 4 else 12.0
    tvals = None
    if truths:
        tvals = [c.transform(truths.get(c.name)) for c in cols]
        if all(t is None for t in tvals):
            tvals = None
    corner.corner(
        data, fig=fig, labels=[c.label for c in cols], titles=[c.symbol for c in cols],
        show_titles=True, title_fmt=[_title_format(data[:, i]) for i in range(k)],
        title_quantiles=[0.16, 0.5, 0.84], quantiles=[0.16, 0.5, 0.84],
        levels=CONTOUR_LEVELS, smooth=1.0, bins=30, range=[0.998] * k, color=_POSTERIOR, max_n_ticks=3,
        plot_datapoints=False, fill_contours=True, plot_density=False, truths=tvals, truth_color=_TRUTH,
        label_kwargs={"fontsize": fs}, title_kwargs={"fontsize": fs - 1.0},
        labelpad=0.12 if k > 4 else 0.05, use_math_text=True,
    )
    # titles on two lines (symbol, then value) so that they stay within their column
    axes = np.asarray(fig.axes).reshape(k, k)
    for i in range(k):
        ax = axes[i, i]
        ax.set_title(ax.get_title().replace(" = ", "\n", 1), fontsize=fs - 1.0, linespacing=1.25)
    # margins sized in inches so that rotated tick labels and axis labels fit
    top_in = 1.5
    height = side + 0.5 + extra
    fig.subplots_adjust(left=1.5 / side, bottom=(1.5 + extra) / height, right=1 - 0.25 / side,
                        top=1 - top_in / height, wspace=0.06, hspace=0.06)
    # no tick at a panel edge, so labels of neighbouring panels never touch
    from matplotlib.ticker import MaxNLocator

    for i in range(k):
        for j in range(i + 1):
            axes[i, j].xaxis.set_major_locator(MaxNLocator(3, prune="both"))
            if j < i:
                axes[i, j].yaxis.set_major_locator(MaxNLocator(3, prune="both"))
    for ax in fig.axes:
        ax.tick_params(labelsize=fs - 3.0)
        for lab in ax.get_xticklabels():
            lab.set_rotation(40)
            lab.set_ha("right")
            lab.set_rotation_mode("anchor")
        for lab in ax.get_yticklabels():
            lab.set_rotation(40)
            lab.set_ha("right")
            lab.set_rotation_mode("anchor")
        ax.xaxis.get_offset_text().set_fontsize(fs - 4.0)
        ax.yaxis.get_offset_text().set_fontsize(fs - 4.0)
    name = title or ""
    mode = model.options.diffusion
    head = f"{name}: posterior" if name else "Posterior"
    fig.suptitle(f"{head} ({mode} diffusion, {data.shape[0]:,} samples)",
                 fontsize=fs + 3.0, x=0.5, y=1 - 0.25 / height, va="top")
    note = ["Titles: median and 16-84% interval",
            "Dashed lines: 16, 50, 84% quantiles",
            f"Contours: {CONTOUR_LEVELS[0]:.1%} and {CONTOUR_LEVELS[1]:.1%} of the samples",
            r"(1$\sigma$ and 2$\sigma$ of a 2-D Gaussian)"]
    if tvals is not None:
        note.append(f"Red lines: {truths_label}")
    if any(c.log for c in cols):
        note.append("log10 taken in the unit shown")
    text = "\n".join(note)
    if k >= 3:
        # inside the empty upper triangle, top-right corner of the first row
        box = axes[0, k - 1].get_position()
        fig.text(box.x1, box.y1, text, ha="right", va="top", multialignment="left",
                 fontsize=fs - 1.0, linespacing=1.45)
    else:
        fig.text(0.5, 0.01, text, ha="center", va="bottom", fontsize=fs - 2.0, linespacing=1.3)
    return fig


# ----------------------------------------------------------- the predictive
@dataclass(frozen=True)
class _Observable:
    key: str            # "spacing" | "mass"
    derived: str        # column of post.derived giving the model's central value
    scatter: str        # parameter: intrinsic scatter, dex
    calibration: str    # parameter: calibration factor
    unit_cgs: float     # cgs value of the plotted unit
    xlabel: str
    centre_label: str


def _observables():
    from ..constants import AU, M_JUP

    return {
        "spacing": _Observable("spacing", "wavelength", "spacing_scatter", "spacing_calibration",
                               AU, "spacing [au]", r"$f_\lambda\,\lambda_\mathrm{m}$"),
        "mass": _Observable("mass", "fragment_mass", "mass_scatter", "mass_calibration",
                            M_JUP, r"mass [$M_\mathrm{J}$]", r"$f_M\,M_\mathrm{frag}$"),
    }


def _observed(model: Model, key: str) -> tuple[np.ndarray, np.ndarray]:
    """(ln of the observed values in the plotted unit, measurement variance in ln)."""
    ob = _observables()[key]
    o = model.obs
    ln, var = (o.ln_spacing, o.var_spacing) if key == "spacing" else (o.ln_mass, o.var_mass)
    return ln - np.log(ob.unit_cgs), var


def _used(model: Model, key: str) -> bool:
    o, opt = model.obs, model.options
    return (opt.use_spacings and o.n_spacings > 0) if key == "spacing" else \
        (opt.use_masses and o.n_masses > 0)


def _centre_and_sd(post: Posterior, model: Model, key: str, idx: np.ndarray,
                   var_meas: float) -> tuple[np.ndarray, np.ndarray]:
    """ln of the predictive centre (plotted unit) and its sd in ln, for samples ``idx``."""
    ob = _observables()[key]
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
    if observable not in ("spacing", "mass"):
        raise ValueError(f"observable must be 'spacing' or 'mass', got {observable!r}")
    _, _, draws = _draw(post, model, observable, n_draws, np.random.default_rng(seed))
    return np.exp(draws)


def _draw(post: Posterior, model: Model, key: str, n_draws: int,
          rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(ln centre, sd in ln, ln draws) for n_draws posterior samples; non-finite rows dropped."""
    _, var = _observed(model, key)
    v = float(np.median(var)) if var.size else 0.0
    idx = rng.integers(0, post.n, size=int(n_draws))
    mu, sd = _centre_and_sd(post, model, key, idx, v)
    draws = mu + sd * rng.standard_normal(idx.size)
    ok = np.isfinite(mu) & np.isfinite(sd)
    return mu[ok], sd[ok], draws[ok]


def _ecdf_check(mu: np.ndarray, sd: np.ndarray, ln_obs: np.ndarray, grid: np.ndarray,
                rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, float]:
    """95% band of replicate-catalog ECDFs on ``grid`` (ln) and the KS predictive p-value.

    Each posterior sample r makes one replicate catalog of len(ln_obs) values;
    the discrepancy is the largest distance between an ECDF and that sample's
    predictive CDF; p = fraction of replicates at least as discrepant as the data.
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


def _log_ticks(ax, lo10: float, hi10: float) -> None:
    """Plain-number ticks (20, 50, 100) on a log x-axis spanning 10**lo10 .. 10**hi10."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

    choices = ((1, 1.5, 2, 3, 4, 5, 6, 8), (1, 1.5, 2, 3, 5, 7), (1, 2, 3, 5, 7), (1, 2, 5),
               (1, 3), (1,))
    decades = range(int(np.floor(lo10)) - 1, int(np.ceil(hi10)) + 1)
    for subs in choices:
        ticks = [m * 10.0 ** e for e in decades for m in subs]
        ticks = [t for t in ticks if lo10 <= np.log10(t) <= hi10]
        if len(ticks) <= 7:
            break
    if len(ticks) >= 2:
        ax.xaxis.set_major_locator(FixedLocator(ticks))
        ax.xaxis.set_major_formatter(FuncFormatter(lambda x, _: f"{x:g}"))
    ax.xaxis.set_minor_formatter(NullFormatter())


def _predictive_row(fig, gs_row, post: Posterior, model: Model, key: str, n_draws: int,
                    rng: np.random.Generator, fs: float) -> None:
    from scipy import stats

    ob = _observables()[key]
    ln_obs, var_obs = _observed(model, key)
    mu, sd, draws = _draw(post, model, key, n_draws, rng)   # ln, plotted unit
    if draws.size < 2:
        raise ValueError(f"predictive check: no finite posterior predictive draws of the {key}s")
    if np.ptp(draws) < 1e-6:                                 # no scatter at all: a spike
        draws = draws + 1e-3 * rng.standard_normal(draws.size)
        sd = np.maximum(sd, 1e-3)
    x_obs = np.exp(ln_obs)
    err = np.sqrt(var_obs)

    l10 = draws / _LN10
    o10 = ln_obs / _LN10
    lo_q, hi_q = np.quantile(l10, [0.002, 0.998])
    lo = min(lo_q, float(np.min(o10 - err / _LN10))) - 0.05
    hi = max(hi_q, float(np.max(o10 + err / _LN10))) + 0.05
    grid10 = np.linspace(lo, hi, 400)
    dens = stats.gaussian_kde(l10)(grid10)                   # per dex
    q = np.quantile(l10, [0.025, 0.16, 0.84, 0.975])
    cq = np.quantile(mu / _LN10, [0.16, 0.5, 0.84])
    xg = 10 ** grid10

    sub = gs_row.subgridspec(2, 2, height_ratios=[3.0, 1.2], width_ratios=[1.65, 1.0],
                             hspace=0.0, wspace=0.25)
    ax = fig.add_subplot(sub[0, 0])
    strip = fig.add_subplot(sub[1, 0], sharex=ax)
    axe = fig.add_subplot(sub[:, 1])

    # predictive density of one new observation, its 95% and 68% intervals
    ax.fill_between(xg, 0, dens, where=(grid10 >= q[0]) & (grid10 <= q[3]), color=_PRED_LIGHT,
                    lw=0)
    ax.fill_between(xg, 0, dens, where=(grid10 >= q[1]) & (grid10 <= q[2]), color=_PRED_DARK,
                    lw=0)
    ax.plot(xg, dens, color=_POSTERIOR, lw=1.6)
    ymax = float(dens.max()) * 1.3
    band_y = (0.88 * ymax, 0.94 * ymax)
    ax.fill_between(10 ** np.array([cq[0], cq[2]]), *band_y, color=_MODEL, lw=0)
    ax.plot([10 ** cq[1]] * 2, band_y, color="white", lw=1.2)
    ax.text(10 ** cq[2] * 10 ** (0.012 * (hi - lo)), np.mean(band_y), ob.centre_label,
            color=_MODEL, va="center", ha="left", fontsize=fs - 1.5)
    ax.set_ylim(0, ymax)
    ax.set_xscale("log")
    ax.set_xlim(10 ** lo, 10 ** hi)
    ax.set_ylabel("density per dex", fontsize=fs)
    ax.tick_params(which="both", labelbottom=False, labelsize=fs - 1.5)
    what = ("spacings (minimum-spanning-tree edges)" if model.options.spacing == "mst"
            else "spacings (nearest-neighbour distances)") if key == "spacing" else "masses"
    ax.set_title(f"Clump {what}, n = {x_obs.size}", fontsize=fs + 0.5, loc="left")

    # the observations with their measurement errors (+-1 sigma)
    order = np.argsort(ln_obs)
    ypos = 0.15 + 0.7 * np.arange(x_obs.size) / max(x_obs.size - 1, 1)
    xo, e = x_obs[order], err[order]
    strip.axvspan(10 ** q[1], 10 ** q[2], color=_PRED_DARK, alpha=0.18, lw=0)
    strip.errorbar(xo, ypos, xerr=[xo - xo * np.exp(-e), xo * np.exp(e) - xo], fmt="o",
                   color=_OBS, ms=4, lw=1.0, capsize=0)
    strip.set_ylim(0, 1)
    strip.set_yticks([])
    strip.set_ylabel("observed", fontsize=fs - 2.0)
    strip.set_xlabel(ob.xlabel, fontsize=fs)
    strip.tick_params(labelsize=fs - 1.5)
    _log_ticks(strip, lo, hi)

    # ECDF of the catalog against replicate catalogs of the same size
    n_rep = min(400, mu.size)
    band, _, p = _ecdf_check(mu[:n_rep], sd[:n_rep], ln_obs, grid10 * _LN10, rng)
    pred_cdf = np.searchsorted(np.sort(l10), grid10) / l10.size
    axe.fill_between(xg, band[0], band[1], color=_PRED_LIGHT, lw=0, step="post")
    axe.plot(xg, pred_cdf, color=_POSTERIOR, lw=1.6)
    xs = np.sort(x_obs)
    axe.step(np.concatenate([[10 ** lo], xs, [10 ** hi]]),
             np.concatenate([[0.0], np.arange(1, xs.size + 1) / xs.size, [1.0]]),
             where="post", color=_OBS, lw=1.6)
    axe.set_xscale("log")
    axe.set_xlim(10 ** lo, 10 ** hi)
    axe.set_ylim(0, 1.0)
    _log_ticks(axe, lo, hi)
    axe.set_xlabel(ob.xlabel, fontsize=fs)
    axe.set_ylabel("cumulative fraction", fontsize=fs)
    axe.tick_params(labelsize=fs - 1.5)
    axe.set_title(f"ECDF: predictive p-value = {p:.2f}", fontsize=fs + 0.5, loc="left")


def _figure_legends(fig, fs: float, split: float) -> None:
    """Two legends above the panels: density panels (left), ECDF panels (right)."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    y = 1 - 0.55 / fig.get_figheight()
    kw = {"loc": "upper center", "frameon": False, "fontsize": fs - 1.5, "handlelength": 1.6,
          "columnspacing": 1.2}
    # column-major fill of 3 columns: row 1 density, 68%, 95%; row 2 model scale, observed
    left = [(Line2D([], [], color=_POSTERIOR, lw=1.6), "predictive density (new observation)"),
            (Patch(color=_MODEL), "model scale, 68% posterior"),
            (Patch(color=_PRED_DARK), "68% interval"),
            (Line2D([], [], color=_OBS, marker="o", ms=4, lw=1.0), r"observed $\pm1\sigma$"),
            (Patch(color=_PRED_LIGHT), "95% interval")]
    right = [(Line2D([], [], color=_OBS, lw=1.6, drawstyle="steps-post"), "observed ECDF"),
             (Line2D([], [], color=_POSTERIOR, lw=1.6), "predictive CDF"),
             (Patch(color=_PRED_LIGHT), "95% of replicate catalogs")]
    fig.legend(*zip(*left, strict=True), ncol=3, bbox_to_anchor=(split / 2 + 0.03, y), **kw)
    leg = fig.legend(*zip(*right, strict=True), ncol=2,
                     bbox_to_anchor=((1 + split) / 2, y + 0.15 / fig.get_figheight()),
                     title="p-value: fraction of replicates with a larger ECDF-CDF gap",
                     title_fontsize=fs - 2.5, **kw)
    leg._legend_box.align = "left"


def predictive_figure(post: Posterior, model: Model, *, n_draws: int = 2000, seed: int = 0,
                      title: str | None = None) -> Figure:
    """Posterior predictive check of the clump spacings and masses.

    One row per observable the likelihood uses (spacings in au, masses in
    Jupiter masses). Left: the predictive density of one new observation
    (log axis, per dex) with its 68% and 95% central intervals shaded, the
    68% posterior interval of the model's own scale (calibrated fastest
    wavelength or fragment mass) as a thin band, and below it a strip of the
    observations with their measurement errors. Right: the observed ECDF
    against the predictive CDF and the 95% band of ECDFs of replicate
    catalogs of the same size, with a predictive p-value of the largest gap
    between an ECDF and the predictive CDF.

    Parameters
    ----------
    post : Posterior
    model : Model
    n_draws : int
        Posterior samples drawn (with replacement) for the predictive.
    seed : int
        Seed of those draws.
    title : str, optional
        Region name for the figure title.
    """
    keys = [k for k in ("spacing", "mass") if _used(model, k)]
    fs = 12.0
    height = 4.4 * max(len(keys), 1) + 1.5
    fig = _new_figure((12.5, height))
    rng = np.random.default_rng(seed)
    head = f"{title}: posterior predictive check" if title else "Posterior predictive check"
    fig.suptitle(head, fontsize=fs + 3.0, y=1 - 0.12 / height, va="top")
    if not keys:
        fig.text(0.5, 0.5, "the likelihood uses no observable", ha="center", fontsize=fs)
        return fig
    left, right, ratio = 0.075, 0.985, 1.65 / 2.65
    _figure_legends(fig, fs, left + ratio * (right - left))
    gs = fig.add_gridspec(len(keys), 1, left=left, right=right, bottom=0.65 / height,
                          top=1 - 1.55 / height, hspace=0.38)
    for i, key in enumerate(keys):
        _predictive_row(fig, gs[i], post, model, key, n_draws, rng, fs)
    return fig


# --------------------------------------------------------------- the writer
def write_figures(out_dir: str | Path, *, post: Posterior, model: Model, region=None,
                  formats: Sequence[str] = ("pdf", "png"),
                  truths: Mapping[str, float] | None = None) -> list[Path]:
    """Write corner and predictive figures into ``out_dir``, each file atomically.

    Parameters
    ----------
    out_dir : path
        Existing folder (a fit's output folder).
    post : Posterior
    model : Model
    region : Region or str, optional
        Its name titles the figures.
    formats : sequence of {"pdf", "png"}
    truths : mapping, optional
        Reference values for the corner plot (see :func:`corner_figure`).

    Returns
    -------
    list of Path
        The files written: corner.<fmt>, predictive.<fmt>, and radial.<fmt> for a
        ``profile = "power-law"`` fit (:mod:`infer.outputs.radial`).
    """
    fmts = [f.lower().lstrip(".") for f in formats]
    bad = [f for f in fmts if f not in ("pdf", "png")]
    if bad or not fmts:
        raise ValueError(f"figure formats must be among pdf, png; got {', '.join(bad) or 'none'}")
    out = Path(out_dir)
    name = _region_name(region)
    written: list[Path] = []
    makers = {"corner": lambda: corner_figure(post, model, truths=truths, title=name),
              "predictive": lambda: predictive_figure(post, model, title=name)}
    bases = FIGURE_NAMES
    if model.plan is not None:
        from .radial import RADIAL_FILE, radial_band, radial_figure

        makers[RADIAL_FILE] = lambda: radial_figure(radial_band(post, model), title=name)
        bases = (*FIGURE_NAMES, RADIAL_FILE)
    for base in bases:
        fig = makers[base]()
        try:
            for fmt in fmts:
                buf = io.BytesIO()
                fig.savefig(buf, format=fmt, dpi=110 if base == "corner" else 130,
                            metadata={"Creator": "infer"} if fmt == "pdf" else None)
                path = out / f"{base}.{fmt}"
                atomic_write_bytes(path, buf.getvalue())
                written.append(path)
        finally:
            _close(fig)
    return written
