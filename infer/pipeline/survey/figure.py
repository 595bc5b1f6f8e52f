"""The survey figure (survey.png, survey.pdf): mass-to-flux ratio per region, field strength
against radius (or surface density)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
from astropy.table import Table

from ...outputs.files import save_figure

__all__ = ["survey_figure", "write_figure"]


def _errors(t: Table, name: str, ok: np.ndarray):
    m = np.asarray(t[f"{name}_median"], dtype=float)[ok]
    lo = np.asarray(t[f"{name}_p16"], dtype=float)[ok]
    hi = np.asarray(t[f"{name}_p84"], dtype=float)[ok]
    return m, np.vstack([np.clip(m - lo, 0, None), np.clip(hi - m, 0, None)])


def survey_figure(table: Table):
    """The survey figure: mass-to-flux ratio per region; field against radius or surface density.

    Left: posterior median and 68% interval of the mass-to-flux ratio (in
    units of the critical value) of each fitted region, filled markers for
    converged chains, open for chains that stopped at ``max_steps``. Right:
    field strength against the radius (or, without one, the surface density),
    labelled by region. Failed regions are listed under the figure.

    Returns
    -------
    matplotlib.figure.Figure
        On the Agg canvas (not registered with pyplot).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    err = np.array([bool(e) for e in table["error"]], dtype=bool) if len(table) else np.zeros(0, bool)
    ok = ~err
    if "mass_to_flux_median" in table.colnames:
        ok &= np.isfinite(np.asarray(table["mass_to_flux_median"], dtype=float))
    else:
        ok &= False
    n = int(ok.sum())
    height = float(np.clip(1.2 + 0.32 * max(n, 4), 3.4, 14.0))
    fig = Figure(figsize=(10.5, height), layout="constrained")
    FigureCanvasAgg(fig)
    ax1, ax2 = fig.subplots(1, 2, width_ratios=[1.0, 1.15])
    names = [str(r) for r in np.asarray(table["region"])[ok]]
    conv = np.asarray(table["converged"], dtype=bool)[ok]
    if n:
        y = np.arange(n)[::-1]
        mu, mu_err = _errors(table, "mass_to_flux", ok)
        for flag, face, label in ((True, "C0", "converged"), (False, "white", "not converged")):
            sel = conv == flag
            if sel.any():
                ax1.errorbar(mu[sel], y[sel], xerr=mu_err[:, sel], fmt="o", color="C0",
                             mfc=face, ms=6, capsize=3, lw=1.3, label=label)
        ax1.axvline(1.0, color="0.4", ls="--", lw=1, label=r"critical ($\mu_0 = 1$)")
        ax1.set_yticks(y, names if n <= 60 else [""] * n, fontsize=9)
        ax1.set_ylim(-0.7, n - 0.3)
        ax1.set_xscale("log")
        _plain_log_ticks(ax1.xaxis)
        ax1.legend(loc="lower right", fontsize=8, framealpha=0.9, edgecolor="0.8")
        _field_panel(ax2, table, ok, names, conv)
    else:
        for ax in (ax1, ax2):
            ax.text(0.5, 0.5, "no region fitted", ha="center", va="center", transform=ax.transAxes)
            ax.set_xticks([])
            ax.set_yticks([])
    ax1.set_xlabel(r"mass-to-flux ratio $\mu_0$ (critical = 1)")
    ax1.set_title("mass-to-flux ratio: median, 68% interval", fontsize=10)
    ax1.grid(axis="x", which="major", color="0.9", lw=0.6)
    ax1.set_axisbelow(True)
    failed = [f"{r} ({e[:70]}{'...' if len(e) > 70 else ''})"
              for r, e in zip(table["region"], table["error"], strict=True) if e]
    if failed:
        shown = failed[:4] + ([f"and {len(failed) - 4} more"] if len(failed) > 4 else [])
        fig.supxlabel("failed: " + "; ".join(shown), fontsize=7, color="firebrick", ha="center")
    return fig


def _field_panel(ax, table: Table, ok: np.ndarray, names: list[str], conv: np.ndarray) -> None:
    if "field_median" not in table.colnames:
        ax.text(0.5, 0.5, "no field strength (model without a field?)", ha="center",
                va="center", transform=ax.transAxes)
        return
    xname, xlabel = "radius", "radius [au]"
    if f"{xname}_median" not in table.colnames or not np.isfinite(
            np.asarray(table["radius_median"], dtype=float)[ok]).any():
        xname, xlabel = "surface_density", r"surface density $\Sigma$ [g cm$^{-2}$]"
    x, xerr = _errors(table, xname, ok)
    b, berr = _errors(table, "field", ok)
    for flag, face in ((True, "C3"), (False, "white")):
        sel = conv == flag
        if sel.any():
            ax.errorbar(x[sel], b[sel], xerr=xerr[:, sel], yerr=berr[:, sel], fmt="s",
                        color="C3", mfc=face, ms=5, capsize=2.5, lw=1.1)
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.margins(x=0.15, y=0.15)
    if len(names) <= 30:
        _label_points(ax, x, b, names)
    _plain_log_ticks(ax.xaxis)
    _plain_log_ticks(ax.yaxis)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(r"field strength $B$ [mG]")
    ax.set_title("field strength: median, 68% interval", fontsize=10)
    ax.grid(which="major", color="0.9", lw=0.6)
    ax.set_axisbelow(True)


def _label_points(ax, x: np.ndarray, y: np.ndarray, names: Sequence[str]) -> None:
    """Name each point beside it, on the first side where the label overlaps no other label."""
    fig = ax.figure
    fig.canvas.draw()  # settle the layout, so that label extents are final
    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    placed = []
    sides = ((6, 3, "left", "bottom"), (6, -3, "left", "top"), (-6, 3, "right", "bottom"),
             (-6, -3, "right", "top"))
    for i in np.argsort(-np.nan_to_num(y, nan=-np.inf)):
        if not (np.isfinite(x[i]) and np.isfinite(y[i]) and x[i] > 0 and y[i] > 0):
            continue
        first = chosen = None
        for dx, dy, ha, va in sides:
            t = ax.annotate(names[i], (x[i], y[i]), xytext=(dx, dy), textcoords="offset points",
                            fontsize=8, color="0.25", ha=ha, va=va)
            box = t.get_window_extent(renderer)
            inside = (box.x0 >= frame.x0 and box.x1 <= frame.x1 and box.y0 >= frame.y0
                      and box.y1 <= frame.y1)
            if inside and not any(box.overlaps(p) for p in placed):
                chosen = (t, box)
                break
            if first is None:
                first = (t, box)  # the fallback when no side is free
            else:
                t.remove()
        if chosen is None:
            chosen = first
        elif first is not None:
            first[0].remove()
        placed.append(chosen[1])


def _plain_log_ticks(axis) -> None:
    """Log-axis ticks labelled as plain numbers (0.2, 50, 1000): 1, 2, 5 per decade on short axes."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    lo, hi = sorted(axis.get_view_interval())
    decades = np.log10(hi / lo) if lo > 0 and np.isfinite(hi / lo) else 10.0
    subs = np.arange(1.0, 10.0) if decades <= 0.8 else (1.0, 2.0, 5.0) if decades <= 3.2 else (1.0,)
    axis.set_major_locator(LogLocator(base=10, subs=subs))
    axis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    axis.set_minor_locator(LogLocator(base=10, subs=np.arange(2, 10)))
    axis.set_minor_formatter(NullFormatter())


def write_figure(t: Table, out: Path) -> list[Path]:
    fig = survey_figure(t)
    try:
        return save_figure(fig, out, "survey", formats=("png", "pdf"), dpi=130)
    finally:
        fig.clear()
