"""The figures of a fit, written into its folder: corner plot and predictive check (and the
radial figure of a power-law profile).

* :func:`~infer.outputs.corner.corner_figure` -- the sampled parameters and key derived
  quantities (field strength, total diffusivity, fastest wavelength, fragment mass);
* :func:`~infer.outputs.predictive.predictive_figure` -- observed spacings and masses
  against the distribution of new observations the posterior predicts;
* :func:`write_figures` -- each as PDF and PNG (:func:`infer.outputs.files.save_figure`).

Each figure function takes the posterior and returns a matplotlib figure on the Agg canvas
(no pyplot window, no global backend switch); matplotlib and corner are imported only when
a figure is drawn.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

from ..errors import ChainError
from ..inference.model import Model
from ..inference.posterior import Posterior
from ..inference.predictive import predictive_draws
from .canvas import close_figure
from .corner import CONTOUR_LEVELS, DERIVED_LABELS, CornerColumn, corner_columns, corner_figure
from .files import save_figure
from .fitfolder import FIGURE_STEMS, RADIAL_STEM, FitFolder
from .predictive import predictive_figure

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
FIGURE_NAMES = FIGURE_STEMS

#: resolution of each figure's PNG (the corner plot is large)
_DPI = {"corner": 110}


def _region_name(region) -> str | None:
    if region is None:
        return None
    if isinstance(region, str):
        return region
    return getattr(region, "name", None) or None


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

    Raises
    ------
    ChainError
        Too few posterior samples to draw a figure (run the chain longer).
    """
    fmts = [f.lower().lstrip(".") for f in formats]
    bad = [f for f in fmts if f not in ("pdf", "png")]
    if bad or not fmts:
        raise ValueError(f"figure formats must be among pdf, png; got {', '.join(bad) or 'none'}")
    folder = FitFolder(Path(out_dir))
    name = _region_name(region)
    makers = {"corner": lambda: corner_figure(post, model, truths=truths, title=name),
              "predictive": lambda: predictive_figure(post, model, title=name)}
    if model.plan is not None:
        from .radial import radial_band, radial_figure

        makers[RADIAL_STEM] = lambda: radial_figure(radial_band(post, model), title=name)
    written: list[Path] = []
    for stem in folder.figure_stems(radial=model.plan is not None):
        try:
            fig = makers[stem]()
        except ChainError as exc:          # too few samples: say which folder
            raise ChainError(f"{folder.path}: {exc}") from None
        try:
            written += save_figure(fig, folder.path, stem, formats=fmts,
                                   dpi=_DPI.get(stem, 130))
        finally:
            close_figure(fig)
    return written
