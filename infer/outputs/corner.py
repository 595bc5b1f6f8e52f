"""The corner plot of a fit: the sampled parameters and key derived quantities.

:func:`corner_figure` takes the posterior and returns a matplotlib figure (drawn with
corner's ``corner.corner`` on the Agg canvas); :func:`corner_columns` says what it shows.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..inference.model import Model
from ..inference.posterior import Posterior, short_chain_error
from ..inference.priors import PARAMETERS
from ..quantities import DERIVED_NAMES, QUANTITIES
from .canvas import new_figure

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["corner_figure", "corner_columns", "CornerColumn", "DERIVED_LABELS", "CONTOUR_LEVELS"]

#: 2-D contour levels: fraction of the samples inside (1 and 2 sigma of a 2-D Gaussian)
CONTOUR_LEVELS = (1.0 - np.exp(-0.5), 1.0 - np.exp(-2.0))

#: derived quantity -> plot label with its unit (units of infer.inference.model.DERIVED_UNITS)
DERIVED_LABELS: dict[str, str] = {k: QUANTITIES[k].label for k in DERIVED_NAMES}

#: quantities always shown as log10 (they range over many decades)
_ALWAYS_LOG = frozenset({"mass_to_flux", "ionization", "eta_ad", "eta_ohm", "eta_total", "field",
                         "kappa", "tau_ni"})

#: others are shown as log10 when their 1-99% range spans more than this factor (~0.7 dex)
_LOG_SPAN = 5.0

_POSTERIOR = "#1f4e79"      # dark blue: posterior contours
_TRUTH = "#c0392b"


def _split_label(label: str) -> tuple[str, str]:
    """``"$T$ [K]"`` -> (``"T"``, ``" [K]"``): the math symbol and the unit suffix."""
    sym, sep, unit = label.partition(" [")
    unit = f" [{unit}" if sep else ""
    sym = sym.strip()
    if sym.startswith("$") and sym.endswith("$"):
        sym = sym[1:-1]
    return sym, unit


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
        raise short_chain_error(post, what=f"corner plot of {data.shape[1]} columns",
                                have=data.shape[0], needed=2 * data.shape[1] + 2)
    k = len(cols)
    panel = 1.75 if k > 4 else 2.2
    side = panel * k + 1.6
    extra = 1.4 if k <= 2 else 0.0          # room for the note under small plots
    fig = new_figure((side, side + 0.5 + extra))
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
