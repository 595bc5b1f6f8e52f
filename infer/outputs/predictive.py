"""The posterior predictive check of a fit: observed spacings and masses against the
distribution of new observations the posterior predicts.

:func:`predictive_figure` takes the posterior and returns a matplotlib figure; the
statistics (predictive draws, the ECDF band and p-value) are :mod:`infer.inference.predictive`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..inference.model import Model
from ..inference.posterior import Posterior, short_chain_error
from ..inference.predictive import draw_predictive, ecdf_check, observed, uses_observable
from .canvas import new_figure

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["predictive_figure"]

_LN10 = np.log(10.0)
_POSTERIOR = "#1f4e79"      # dark blue: predictive density
_PRED_LIGHT = "#9ecae1"
_PRED_DARK = "#4292c6"
_MODEL = "#d95f02"          # orange: the model's own lambda_m / M_frag
_OBS = "black"

#: observable -> (x-axis label, label of the model's own scale)
_LABELS = {"spacing": ("spacing [au]", r"$f_\lambda\,\lambda_\mathrm{m}$"),
           "mass": (r"mass [$M_\mathrm{J}$]", r"$f_M\,M_\mathrm{frag}$")}


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

    xlabel, centre_label = _LABELS[key]
    ln_obs, var_obs = observed(model, key)
    mu, sd, draws = draw_predictive(post, model, key, n_draws, rng)   # ln, plotted unit
    if draws.size < 2:
        raise short_chain_error(post, what=f"predictive check of the {key}s", have=draws.size,
                                needed=2)
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
    ax.text(10 ** cq[2] * 10 ** (0.012 * (hi - lo)), np.mean(band_y), centre_label,
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
    strip.set_xlabel(xlabel, fontsize=fs)
    strip.tick_params(labelsize=fs - 1.5)
    _log_ticks(strip, lo, hi)

    # ECDF of the catalog against replicate catalogs of the same size
    n_rep = min(400, mu.size)
    band, _, p = ecdf_check(mu[:n_rep], sd[:n_rep], ln_obs, grid10 * _LN10, rng)
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
    axe.set_xlabel(xlabel, fontsize=fs)
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
    keys = [k for k in ("spacing", "mass") if uses_observable(model, k)]
    fs = 12.0
    height = 4.4 * max(len(keys), 1) + 1.5
    fig = new_figure((12.5, height))
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
