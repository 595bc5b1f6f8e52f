"""A proposal-ready report of a finished fit: report.pdf and report.md in the fit folder.

:func:`build_report` does all the work in memory (reload the fit, posterior,
summary, growth-rate band, forecasts, the plain-language paragraph) and
returns a :class:`Report`, a list of content blocks (the words are
:mod:`infer.outputs.report_text`); :func:`write_report` renders the same blocks
twice with :mod:`infer.outputs.pagelayout`, as a multi-page PDF and as
Markdown, and writes them atomically. Nothing is written when anything
fails before that.

Pages: inputs (model, priors, geometry and dust conventions, catalog, fit);
posterior table with units; corner plot; posterior predictive check;
growth-rate spectrum band; what the data do and do not constrain, with the
measurement forecasts.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ChainError
from ..inference.forecast import ForecastResult, forecast
from ..inference.model import Model
from ..inference.posterior import Posterior, ln_width, short_chain_error
from . import pagelayout
from .band import SpectrumBand, band_figure, spectrum_band
from .fitfolder import BAND_FILE, REPORT_FILES, FitFolder
from .pagelayout import PAGE, Block
from .report_text import input_blocks, paragraph, table_block

__all__ = ["Block", "Report", "build_report", "write_report", "render_markdown", "render_pages",
           "width_ratios", "REPORT_FILES", "BAND_FILE"]

_MIN_SAMPLES = 50


@dataclass(frozen=True)
class Report:
    """Everything a report shows, computed by :func:`build_report`.

    Attributes
    ----------
    fit_dir : Path
    title : str
    blocks : list of Block
        The content, in order; rendered to PDF and Markdown.
    paragraph : str
        The plain-language summary for a proposal.
    forecasts : list of ForecastResult
    band : SpectrumBand
    table : astropy.table.Table
        The summary table (:func:`infer.inference.posterior.summary_table`).
    notes : list of str
        Identifiability notes.
    ratios : dict name -> float
        Posterior over prior 68% width (:func:`width_ratios`).
    post, model, region
        The posterior, model and catalog region the report is of.
    missing_figures : tuple of str
        Fit figures absent from the folder (redrawn by :func:`write_report`).
    """

    fit_dir: Path
    title: str
    blocks: list
    paragraph: str
    forecasts: list
    band: SpectrumBand
    table: object
    notes: list
    ratios: dict
    post: object
    model: object
    region: object
    missing_figures: tuple = ()


def _ln_width(x: np.ndarray) -> float:
    return ln_width(x, min_size=10)


def width_ratios(post: Posterior, model: Model, *, n_prior: int = 4000,
                 seed: int = 0) -> dict[str, float]:
    """Posterior over prior 68% width (in ln) of every sampled and derived quantity.

    The prior widths of derived quantities come from pushing prior draws
    through the model (draws with no growing mode are dropped). A ratio near
    1 means the data taught little; near 0, that the data pinned it down.
    """
    rng = np.random.default_rng(seed)
    th = model.prior_sample(rng, n_prior)
    prior = {**model.values(th), **model.derived(th)}
    now = {**post.values, **post.derived}
    out = {}
    for k, v in now.items():
        if k not in prior:
            continue
        wp, w = _ln_width(prior[k]), _ln_width(v)
        if np.isfinite(wp) and np.isfinite(w) and wp > 1e-9:
            out[k] = w / wp
    return out


# ------------------------------------------------------------------ build
def _diagnostics(folder: FitFolder, chain) -> dict:
    try:
        return folder.diagnostics()
    except ChainError:
        return {"steps": int(chain.iteration), "walkers": int(chain.chain.shape[1])}


def build_report(fit_dir: str | Path, *, forecasts: Sequence[tuple[str, float]] = (),
                 n_draws: int = 200, seed: int = 0) -> Report:
    """Compute a report of the fit in ``fit_dir`` (nothing is written).

    Parameters
    ----------
    fit_dir : path
        A finished ``infer fit`` output folder.
    forecasts : sequence of (quantity, precision)
        Measurement forecasts to include, e.g. ``[("field", 0.2)]``; quantity is
        one of ``field``, ``temperature``, ``column_density``.
    n_draws : int
        Simulated measurements per forecast.
    seed : int
        Seed of the forecasts and of the samples drawn for the band.

    Raises
    ------
    ChainError
        If the folder, its config or its chain is missing or corrupted, or
        holds too few samples.
    """
    from ..inference.posterior import identifiability_notes, summary_table

    folder = FitFolder(Path(fit_dir))
    out = folder.path
    fit = folder.load()
    config, model, region, chain = fit.config, fit.model, fit.region, fit.chain
    post = fit.posterior()
    if post.n < _MIN_SAMPLES:
        raise short_chain_error(post, what=f"{out}: report", have=post.n, needed=_MIN_SAMPLES)
    diag = _diagnostics(folder, chain)
    table = summary_table(post, model)
    notes = identifiability_notes(post, model)
    ratios = width_ratios(post, model, seed=seed)
    samples = {**post.values, **post.derived}
    fcs: list[ForecastResult] = [forecast(samples, q, p, n_draws=n_draws, seed=seed + i)
                                 for i, (q, p) in enumerate(forecasts)]
    band = spectrum_band(post, model, seed=seed)
    converged = bool(diag.get("converged", False))
    text = paragraph(post, model, region, table, ratios, notes, fcs, converged)
    obj = str(region.meta.get("object", "")).strip()
    title = f"Fragmentation analysis: {region.name}"
    blocks = [Block("h1", title)]
    if obj:
        blocks.append(Block("p", obj))
    blocks += input_blocks(config, model, region, diag, post)
    blocks += [Block("break"), Block("h2", "Posterior summary"),
               Block("p", "Central posterior quantiles; width/prior is the posterior 68% width over "
                          "the prior's (in ln): near 1 the data taught little, near 0 they pinned the "
                          "quantity down. Fixed parameters are listed with the priors. LaTeX table: "
                          "summary.tex."),
               table_block(table, ratios)]
    if notes:
        blocks.append(Block("h2", "Identifiability notes"))
        blocks += [Block("li", nt) for nt in notes]
    png = {stem: folder.figure(stem, "png").name
           for stem in folder.figure_stems(radial=model.plan is not None)}
    blocks += [Block("break"), Block("image", png["corner"], "Corner plot of the posterior."),
               Block("image", png["predictive"],
                     "Posterior predictive check of spacings and masses."),
               *([Block("image", png["radial"],
                        "Fastest wavelength and fragment mass against radius (power-law profile): "
                        "posterior median, 68% and 95% bands, with the observed spacings at the "
                        "mean radius of their clumps and the masses at theirs.")]
                 if model.plan is not None else []),
               Block("figure", BAND_FILE,
                     f"Growth rate against wavelength over {band.n_samples} posterior samples: "
                     f"median, 68% and 95% bands; ticks: observed spacings.")]
    blocks += [Block("break"), Block("h2", "What the data do and do not constrain"),
               Block("p", text)]
    for f in fcs:
        blocks.append(Block("h2", f.title()))
        blocks.append(Block("p", f"Importance reweighting of {f.n_samples} posterior samples by "
                                 f"{f.n_draws} simulated measurements (log-normal, "
                                 f"{f.precision:.0%} in ln) centred on true values drawn from the "
                                 f"posterior. Width ratio: new over current 68% width (1 = no gain)."))
        blocks.append(Block("table", data=(
            ["quantity", "width ratio", "16-84% over draws"],
            [[n, f"{t.ratio_median:.2f}", f"{t.ratio_p16:.2f} - {t.ratio_p84:.2f}"]
             for n, t in f.targets.items()])))
        blocks.append(Block("li", f"Effective sample size of the weights: median "
                                  f"{f.ess_median:.0f} of {f.n_samples}."))
        blocks += [Block("li", f"WARNING: {w}") for w in f.warnings]
    missing = tuple(n for n in png.values() if not (out / n).is_file())
    return Report(out, title, blocks, text, fcs, band, table, notes, ratios, post, model,
                  region, missing)


# ------------------------------------------------------------- rendering
def _figures(report: Report) -> dict:
    """The report's figures drawn for the PDF, by the name of their file."""
    return {BAND_FILE: lambda: band_figure(report.band, title=report.region.name,
                                           figsize=(PAGE[0], 5.6))}


def render_markdown(report: Report) -> str:
    """report.md: the blocks in Markdown, figures as relative PNG links."""
    return pagelayout.render_markdown(report.blocks)


def render_pages(report: Report, sink) -> None:
    """Lay the report out on pages, handing each finished Figure to ``sink.savefig``.

    ``sink`` is a matplotlib PdfPages (as :func:`write_report` uses) or any
    object with a ``savefig(figure)`` method (e.g. to preview pages as PNG).
    """
    pagelayout.render_pages(report.blocks, sink, folder=report.fit_dir, figures=_figures(report))


def write_report(report: Report) -> list[Path]:
    """Write the band figure, any missing fit figures, report.pdf and report.md (atomically).

    Returns
    -------
    list of Path
        The files written.
    """
    from .files import atomic_write_bytes, atomic_write_text, render_figure

    out = report.fit_dir
    written: list[Path] = []
    # everything is rendered in memory first; files are replaced only afterwards
    png = render_figure(band_figure(report.band, title=report.region.name), "png", dpi=110)
    md = render_markdown(report)
    if report.missing_figures:
        from .figures import write_figures

        written += write_figures(out, post=report.post, model=report.model, region=report.region)
    pdf = pagelayout.render_pdf(report.blocks, title=report.title, creator="infer report",
                                folder=report.fit_dir, figures=_figures(report))
    folder = FitFolder(out)
    pdf_file, md_file = folder.report_files
    atomic_write_bytes(folder.band_file, png)
    written.append(folder.band_file)
    atomic_write_bytes(pdf_file, pdf)
    atomic_write_text(md_file, md)
    written += [pdf_file, md_file]
    return written
