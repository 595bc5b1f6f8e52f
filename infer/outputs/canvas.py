"""Figures on the Agg canvas: made without pyplot (no window, no global backend switch).

So they render on machines without a screen and inside worker processes; matplotlib is
imported only when a figure is made.
"""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["new_figure", "close_figure"]


def new_figure(figsize: tuple[float, float]) -> Figure:
    """A figure on the Agg canvas, not registered with pyplot."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    return fig


def close_figure(fig: Figure) -> None:
    """Release a figure (and drop it from pyplot's registry if pyplot holds it)."""
    plt = sys.modules.get("matplotlib.pyplot")
    if plt is not None:
        plt.close(fig)
    fig.clear()
