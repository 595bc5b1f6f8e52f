"""A proposal-ready report of a finished fit: report.pdf and report.md in the fit folder.

:func:`build_report` does all the work in memory (reload the fit, posterior,
summary, growth-rate band, forecasts, the plain-language paragraph) and
returns a :class:`Report`, a list of content blocks; :func:`write_report`
renders the same blocks twice, as a multi-page PDF (matplotlib PdfPages) and
as Markdown, and writes them atomically. Nothing is written when anything
fails before that.

Pages: inputs (model, priors, geometry and dust conventions, catalog, fit);
posterior table with units; corner plot; posterior predictive check;
growth-rate spectrum band; what the data do and do not constrain, with the
measurement forecasts.
"""

from __future__ import annotations

import io
import json
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ChainError
from ..inference.forecast import ForecastResult, forecast
from ..inference.model import Model
from ..inference.posterior import Posterior, ln_width
from .band import SpectrumBand, band_figure, spectrum_band

__all__ = ["Block", "Report", "build_report", "write_report", "render_markdown", "render_pages",
           "width_ratios", "REPORT_FILES", "BAND_FILE"]

#: files :func:`write_report` writes into the fit folder
REPORT_FILES = ("report.pdf", "report.md")
#: the growth-rate band figure, referenced by report.md
BAND_FILE = "spectrum_band.png"

_PAGE = (8.27, 11.69)       # A4, inches
_MIN_SAMPLES = 50

_MODE_TEXT = {
    "ionization": "the ionization fraction x_e is sampled; the ambipolar and Ohmic diffusivities "
                  "follow from it, the field and the midplane density",
    "free": "the ambipolar and Ohmic diffusivities are sampled separately; the growth rate depends "
            "only on their sum",
    "ideal": "flux freezing: the field moves with the gas (no diffusion)",
}


@dataclass(frozen=True)
class Block:
    """One piece of report content.

    kind is "h1", "h2", "p" (paragraph), "li" (bullet), "table" (``data`` =
    (header, rows)), "image" (``text`` = file name in the fit folder, ``data``
    = caption) or "band" (the growth-rate figure; ``data`` = caption), or
    "break" (new PDF page).
    """

    kind: str
    text: str = ""
    data: object = None


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


# ---------------------------------------------------------------- numbers
def _g(v: float, digits: int = 3) -> str:
    if v is None or not np.isfinite(v):
        return "n/a"
    return f"{v:.{digits}g}"


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


def _status(ratio: float | None) -> str:
    if ratio is None or not np.isfinite(ratio):
        return "not assessed"
    if ratio < 0.5:
        return "constrained by the data"
    if ratio < 0.9:
        return "partly constrained"
    return "not constrained (follows the prior)"


def _row(table, name):
    for r in table:
        if r["name"] == name:
            return r
    return None


def _interval(r, unit: str = "") -> str:
    u = f" {unit}" if unit else ""
    return f"{_g(r['median'])}{u} (68%: {_g(r['p16'])}-{_g(r['p84'])}{u})"


# --------------------------------------------------------------- paragraph
def _prob(p: float) -> str:
    if p > 0.995:
        return "above 99%"
    if p < 0.005:
        return "below 1%"
    return f"{p:.0%}"


def _prior_range(model, name: str) -> str:
    q = model.priors[name].ppf(np.array([0.025, 0.975]))
    return f"{_g(q[0])} to {_g(q[1])} (95%)"


def _paragraph(post, model, region, table, ratios, notes, forecasts, converged) -> str:
    """The plain-language summary for a proposal."""
    obj = str(region.meta.get("object", region.name)).split(" (")[0]
    n = len(region.ids)
    sp = region.spacings.to_value("au")
    m = region.masses.to_value("jupiterMass")
    mode = model.options.diffusion
    body = "disk" if "stellar_mass" in model.priors else "sheet"
    s = [f"We compared the {n} clumps of {obj} (median deprojected spacing "
         f"{np.median(sp):.3g} au, median mass {np.median(m):.3g} Jupiter masses) with the linear "
         f"fragmentation of a magnetized, self-gravitating thin {body}"
         + {"ideal": " under flux freezing.", "free": " with free magnetic diffusivities.",
            "ionization": " whose field slips through the gas at a rate set by its ionization."}[mode]]
    lam, mf = _row(table, "wavelength"), _row(table, "fragment_mass")
    if lam is not None and mf is not None:
        s.append(f"The posterior places the fastest-growing wavelength at {_interval(lam, 'au')} and "
                 f"the fragment mass at {_interval(mf, 'Jupiter masses')}.")
    mu = post.values["mass_to_flux"]
    r_mu = ratios.get("mass_to_flux")
    b = _row(table, "field")
    if "mass_to_flux" in post.names:
        p_super = float(np.mean(mu > 1.0))
        if _status(r_mu).startswith("not"):
            s.append(f"The fragmentation alone does not determine the mass-to-flux ratio: its "
                     f"posterior ({_g(np.quantile(mu, 0.16))}-{_g(np.quantile(mu, 0.84))} times "
                     f"critical, 68%) follows the prior, so these data do not measure the field "
                     f"strength.")
        else:
            word = "" if _status(r_mu).startswith("constrained") else "partly "
            s.append(f"The data {word}constrain the mass-to-flux ratio to "
                     f"{_interval(_row(table, 'mass_to_flux'))} times the critical value"
                     + (f", a field of {_interval(b, 'mG')}" if b is not None else "")
                     + ("; under flux freezing only a supercritical disk (mass-to-flux above 1) "
                        "fragments at all." if mode == "ideal" else
                        f"; the probability that the {body} is magnetically supercritical is "
                        f"{_prob(p_super)}."))
    if mode == "ionization" and "ionization" in post.names:
        x = _row(table, "ionization")
        if _status(ratios.get("ionization")).startswith("not"):
            s.append("The ionization fraction, and with it the ambipolar and Ohmic diffusivities, "
                     "is not constrained: the observed scales are reproduced across its prior range.")
        elif _status(ratios.get("ionization")).startswith("partly"):
            s.append(f"The data only partly constrain the ionization fraction: 68% of the "
                     f"posterior lies between {_g(x['p16'])} and {_g(x['p84'])} (95%: "
                     f"{_g(x['p02_5'])}-{_g(x['p97_5'])}), against a prior from "
                     f"{_prior_range(model, 'ionization')}.")
        else:
            s.append(f"The ionization fraction is {_interval(x)}.")
    elif mode == "free":
        et = _row(table, "eta_total")
        s.append(f"Only the sum of the diffusivities enters the growth rate; it is "
                 f"{_interval(et, 'cm2/s')}, and the split between ambipolar and Ohmic diffusion "
                 f"comes from the priors.")
    pairs = [nt.split(" are degenerate")[0] for nt in notes if " are degenerate" in nt]
    if pairs:
        s.append("Degenerate combinations (quote them jointly): " + "; ".join(pairs) + ".")
    for f in forecasts:
        s.append(f.sentence())
    if not converged:
        s.append("The chain has not converged; these numbers are provisional.")
    s.append("All of this is conditional on the model: linear theory sets the initial fragment "
             "scale, while clumps may since have migrated, merged or accreted, and projection and "
             "catalog completeness affect the measured spacings.")
    return " ".join(s)


# ----------------------------------------------------------------- inputs
def _meta_text(v) -> str:
    try:
        import astropy.units as u

        if isinstance(v, u.Quantity):
            return f"{v.value:.4g} {v.unit.to_string()}".strip()
    except ImportError:  # pragma: no cover - astropy is a dependency
        pass
    return str(v)


def _profile_text(model) -> str:
    """How the conditions vary across the region (one radius, or power laws of radius)."""
    if model.plan is None:
        return "Profile: local (one set of conditions for all clumps)."
    pr = model.priors
    idx = ", ".join(f"{k} {pr[k].describe()}" for k in
                    ("surface_density_index", "temperature_index", "mass_to_flux_index",
                     "ionization_index") if k in pr)
    return (f"Profile: power law about reference_radius = {pr['reference_radius'].value:.4g} au, "
            f"X(r) = X(r_0) (r / r_0)^-index ({idx}); Keplerian rotation at each radius; each "
            f"spacing is compared with lambda_m at the mean radius of its two clumps and each mass "
            f"with M_frag at its clump's radius. Derived quantities are given at reference_radius.")


def _input_blocks(config, model, region, diag, post) -> list[Block]:
    o = model.options
    blocks = [Block("h2", "Model")]
    kap = model.priors.get("kappa")
    if "stellar_mass" in model.priors:
        rot = "Keplerian rotation from the stellar mass and radius"
    elif kap is not None and kap.fixed and kap.value == 0:
        rot = "no rotation"
    else:
        rot = "epicyclic frequency kappa as given"
    blocks += [Block("li", f"Thin, isothermal, self-gravitating sheet threaded by a vertical field; "
                           f"{rot}; the fastest-growing mode of the linear dispersion relation "
                           f"sets the clump spacing and mass."),
               Block("li", f"Diffusion: {o.diffusion} ({_MODE_TEXT[o.diffusion]})."),
               Block("li", _profile_text(model)),
               Block("li", "Spacings: " + ("minimum-spanning-tree edges" if o.spacing == "mst"
                                           else "nearest-neighbour distances")
                     + " of the deprojected positions, compared with the fastest-growing wavelength."),
               Block("li", "Fragment mass: " + ("Sigma lambda_m^2 (one wavelength squared)"
                                                if o.fragment_shape == "square"
                                                else "Sigma pi (lambda_m / 2)^2 (circular patch)")
                     + f"; mean particle mass {o.mu_gas:g} m_H."),
               Block("li", "Likelihood: log-normal in each spacing and mass with intrinsic scatter "
                           "and the catalog's errors"
                     + ("" if o.use_spacings and o.use_masses else
                        f" (spacings {'used' if o.use_spacings else 'not used'}, masses "
                        f"{'used' if o.use_masses else 'not used'})")
                     + (f"; growth time below {o.growth_time_max:.3g} yr ({o.growth_constraint})"
                        if o.growth_time_max is not None else "") + "."),
               Block("li", f"Selection: {model.selection_text()}."),
               Block("li", "Measurements used as data (one likelihood term each): "
                     + ("; ".join(m.describe() for m in model.measurements) or "none") + ".")]
    blocks.append(Block("h2", "Priors"))
    from ..inference.priors import PARAMETERS

    order = [n for n in PARAMETERS if n in model.priors] + \
        [n for n in model.priors if n not in PARAMETERS]
    for name in sorted(order, key=lambda n: model.priors[n].fixed):
        prior = model.priors[name]
        blocks.append(Block("li", f"{name}: {prior.describe()}"
                                  + ("" if prior.fixed else " (sampled)")))
    blocks.append(Block("h2", "Geometry and dust conventions"))
    meta = region.meta
    geo = [f"{k.replace('_', ' ')} {_meta_text(meta[k])}" for k in
           ("distance", "inclination", "position_angle") if k in meta]
    blocks.append(Block("li", (", ".join(geo) + "; " if geo else "")
                        + "positions (x east, y north) are deprojected onto the plane of the sheet with the "
                          "inclination (0 = face-on) and the position angle of the major axis "
                          "(east of north)."))
    if region.mass_from_flux:
        dust = [f"{k.replace('_', ' ')} {_meta_text(meta[k])}" for k in
                ("wavelength", "dust_temperature", "dust_temperature_err", "dust_opacity_observed",
                 "gas_to_dust")
                if k in meta]
        blocks.append(Block("li", "Masses from continuum fluxes, M = g F_nu d^2 / (kappa_nu "
                                  "B_nu(T_dust)) with the full Planck function: "
                            + ", ".join(dust) + "."))
    else:
        blocks.append(Block("li", "Masses as given in the catalog (no dust conversion)."))
    blocks.append(Block("h2", "Catalog"))
    sp = region.spacings.to_value("au")
    m = region.masses.to_value("jupiterMass")
    blocks += [Block("li", f"{region.source}, region {region.name}: {len(region.ids)} clumps."),
               Block("li", f"{sp.size} spacings: median {np.median(sp):.3g} au, range "
                           f"{sp.min():.3g}-{sp.max():.3g} au."),
               Block("li", f"masses: median {np.median(m):.3g} M_Jup, range {m.min():.3g}-"
                           f"{m.max():.3g} M_Jup.")]
    for w in region.warnings:
        blocks.append(Block("li", f"catalog warning: {w}"))
    for x in region.excluded:
        blocks.append(Block("li", f"excluded: {x}"))
    blocks.append(Block("h2", "Fit"))
    conv = {True: "converged", False: "NOT converged"}.get(diag.get("converged"), "convergence unknown")
    blocks.append(Block("li", f"{diag.get('steps', '?')} steps x {diag.get('walkers', '?')} walkers, "
                              f"{conv}"
                              f"; acceptance {_g(diag.get('acceptance_fraction', np.nan), 2)}; "
                              f"{post.n} posterior samples after discarding {post.burn} steps and "
                              f"thinning by {post.thin}."))
    return blocks


def _table_block(table, ratios) -> Block:
    header = ["quantity", "unit", "median", "68% interval", "95% interval", "width/prior"]
    rows = []
    for r in table:
        if r["kind"] == "fixed":
            continue
        rat = ratios.get(str(r["name"]))
        rows.append([str(r["name"]), str(r["unit"]) or "-", _g(r["median"]),
                     f"{_g(r['p16'])} - {_g(r['p84'])}", f"{_g(r['p02_5'])} - {_g(r['p97_5'])}",
                     _g(rat, 2) if rat is not None else "-"])
    return Block("table", data=(header, rows))


# ------------------------------------------------------------------ build
def _diagnostics(fit_dir: Path, chain) -> dict:
    try:
        d = json.loads((fit_dir / "diagnostics.json").read_text())
        if isinstance(d, dict):
            return d
    except (OSError, ValueError):
        pass
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
    from ..inference.posterior import identifiability_notes, posterior_from_chain, summary_table
    from ..pipeline.fit import load_fit

    out = Path(fit_dir)
    config, model, region, chain, tau = load_fit(out)
    post = posterior_from_chain(model, chain, tau)
    if post.n < _MIN_SAMPLES:
        raise ChainError(f"{out}: only {post.n} usable posterior samples; continue the fit with "
                         f"`infer fit ... --resume --max-steps N` before reporting")
    diag = _diagnostics(out, chain)
    table = summary_table(post, model)
    notes = identifiability_notes(post, model)
    ratios = width_ratios(post, model, seed=seed)
    samples = {**post.values, **post.derived}
    fcs: list[ForecastResult] = [forecast(samples, q, p, n_draws=n_draws, seed=seed + i)
                                 for i, (q, p) in enumerate(forecasts)]
    band = spectrum_band(post, model, seed=seed)
    converged = bool(diag.get("converged", False))
    paragraph = _paragraph(post, model, region, table, ratios, notes, fcs, converged)
    obj = str(region.meta.get("object", "")).strip()
    title = f"Fragmentation analysis: {region.name}"
    blocks = [Block("h1", title)]
    if obj:
        blocks.append(Block("p", obj))
    blocks += _input_blocks(config, model, region, diag, post)
    blocks += [Block("break"), Block("h2", "Posterior summary"),
               Block("p", "Central posterior quantiles; width/prior is the posterior 68% width over "
                          "the prior's (in ln): near 1 the data taught little, near 0 they pinned the "
                          "quantity down. Fixed parameters are listed with the priors. LaTeX table: "
                          "summary.tex."),
               _table_block(table, ratios)]
    if notes:
        blocks.append(Block("h2", "Identifiability notes"))
        blocks += [Block("li", nt) for nt in notes]
    blocks += [Block("break"), Block("image", "corner.png", "Corner plot of the posterior."),
               Block("image", "predictive.png", "Posterior predictive check of spacings and masses."),
               *([Block("image", "radial.png",
                        "Fastest wavelength and fragment mass against radius (power-law profile): "
                        "posterior median, 68% and 95% bands, with the observed spacings at the "
                        "mean radius of their clumps and the masses at theirs.")]
                 if model.plan is not None else []),
               Block("band", BAND_FILE,
                     f"Growth rate against wavelength over {band.n_samples} posterior samples: "
                     f"median, 68% and 95% bands; ticks: observed spacings.")]
    blocks += [Block("break"), Block("h2", "What the data do and do not constrain"),
               Block("p", paragraph)]
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
    figs = ("corner.png", "predictive.png") + (("radial.png",) if model.plan is not None else ())
    missing = tuple(n for n in figs if not (out / n).is_file())
    return Report(out, title, blocks, paragraph, fcs, band, table, notes, ratios, post, model,
                  region, missing)


# ------------------------------------------------------------- rendering
def render_markdown(report: Report) -> str:
    """report.md: the blocks in Markdown, figures as relative PNG links."""
    lines: list[str] = []
    prev = None
    for b in report.blocks:
        if b.kind != "li" and prev == "li":
            lines.append("")
        if b.kind == "h1":
            lines += [f"# {b.text}", ""]
        elif b.kind == "h2":
            lines += [f"## {b.text}", ""]
        elif b.kind == "p":
            lines += [b.text, ""]
        elif b.kind == "li":
            lines.append(f"* {b.text}")
        elif b.kind == "table":
            header, rows = b.data
            lines.append("| " + " | ".join(header) + " |")
            lines.append("|" + "---|" * len(header))
            lines += ["| " + " | ".join(r) + " |" for r in rows]
            lines.append("")
        elif b.kind in ("image", "band"):
            lines += [f"![{b.data}]({b.text})", "", f"*{b.data}*", ""]
        prev = b.kind
    return "\n".join(lines).rstrip() + "\n"


class _Pages:
    """Flowing text onto A4 pages of a PdfPages file."""

    left, right, top, bottom = 0.8, 0.8, 0.8, 0.8

    def __init__(self, pdf):
        self.pdf = pdf
        self.fig = None
        self.y = 0.0

    def _new(self):
        from matplotlib.figure import Figure

        self.flush()
        self.fig = Figure(figsize=_PAGE)
        self.y = self.top

    def flush(self):
        if self.fig is not None:
            self.pdf.savefig(self.fig)
            self.fig = None

    def _room(self, h: float):
        if self.fig is None or self.y + h > _PAGE[1] - self.bottom:
            self._new()

    def text(self, s: str, *, size: float, weight: str = "normal", family: str = "sans-serif",
             indent: float = 0.0, wrap: int | None = None, gap: float = 0.06, bullet: bool = False):
        width_in = _PAGE[0] - self.left - self.right - indent
        chars = wrap or int(width_in * 72 / (size * (0.6 if family == "monospace" else 0.58)))
        lines = textwrap.wrap(s, chars) if family != "monospace" else s.split("\n")
        lh = size * 1.35 / 72
        for i, ln in enumerate(lines or [""]):
            self._room(lh)
            x = self.left + indent
            if bullet and i == 0:
                self.fig.text((x - 0.15) / _PAGE[0], 1 - self.y / _PAGE[1], "\u2022", fontsize=size,
                              va="top")
            self.fig.text(x / _PAGE[0], 1 - self.y / _PAGE[1], ln, fontsize=size, weight=weight,
                          family=family, va="top")
            self.y += lh
        self.y += gap

    def image(self, fig_or_png, caption: str):
        """A full page: a PNG file (drawn as an image) or a Figure (drawn as vectors)."""
        from matplotlib.figure import Figure

        self.flush()
        if isinstance(fig_or_png, Figure):
            fig = fig_or_png
            fig.text(0.5, 0.015, caption, ha="center", va="bottom", fontsize=9, style="italic")
        else:
            import matplotlib.image as mpimg

            img = mpimg.imread(fig_or_png)
            h, w = img.shape[:2]
            fig = Figure(figsize=(_PAGE[0], _PAGE[0] * h / w + 0.5))
            ax = fig.add_axes((0.0, 0.5 / fig.get_figheight(), 1.0, 1 - 0.5 / fig.get_figheight()))
            ax.imshow(img, interpolation="none")
            ax.set_axis_off()
            fig.text(0.5, 0.2 / fig.get_figheight(), caption, ha="center", va="bottom", fontsize=9,
                     style="italic")
        self.pdf.savefig(fig)


def _table_text(header, rows) -> str:
    cols = [header] + rows
    w = [max(len(r[i]) for r in cols) for i in range(len(header))]
    fmt = lambda r: "  ".join(c.ljust(w[i]) for i, c in enumerate(r))  # noqa: E731
    return "\n".join([fmt(header), "  ".join("-" * x for x in w)] + [fmt(r) for r in rows])


def _render_pdf(report: Report) -> bytes:
    from matplotlib.backends.backend_pdf import PdfPages

    buf = io.BytesIO()
    with PdfPages(buf, metadata={"Title": report.title, "Creator": "infer report"}) as pdf:
        render_pages(report, pdf)
    return buf.getvalue()


def render_pages(report: Report, sink) -> None:
    """Lay the report out on pages, handing each finished Figure to ``sink.savefig``.

    ``sink`` is a matplotlib PdfPages (as :func:`write_report` uses) or any
    object with a ``savefig(figure)`` method (e.g. to preview pages as PNG).
    """
    pages = _Pages(sink)
    for b in report.blocks:
        if b.kind == "h1":
            pages.text(b.text, size=17, weight="bold", gap=0.1)
        elif b.kind == "h2":
            pages.y += 0.08
            pages.text(b.text, size=12.5, weight="bold", gap=0.04)
        elif b.kind == "p":
            pages.text(b.text, size=10, gap=0.1)
        elif b.kind == "li":
            pages.text(b.text, size=9.5, indent=0.25, bullet=True, gap=0.03)
        elif b.kind == "table":
            header, rows = b.data
            txt = _table_text(header, rows)
            size = min(9.0, 0.95 * (_PAGE[0] - 1.6) * 72 / (0.6 * max(map(len, txt.split("\n")))))
            pages.text(txt, size=size, family="monospace", gap=0.12)
        elif b.kind == "break":
            pages.flush()
        elif b.kind == "image":
            pages.image(report.fit_dir / b.text, b.data)
        elif b.kind == "band":
            fig = band_figure(report.band, title=report.region.name,
                              figsize=(_PAGE[0], 5.6))
            pages.image(fig, b.data)
    pages.flush()


def write_report(report: Report) -> list[Path]:
    """Write the band figure, any missing fit figures, report.pdf and report.md (atomically).

    Returns
    -------
    list of Path
        The files written.
    """
    from .files import atomic_write_bytes, atomic_write_text

    out = report.fit_dir
    written: list[Path] = []
    # everything is rendered in memory first; files are replaced only afterwards
    fig = band_figure(report.band, title=report.region.name)
    png = io.BytesIO()
    fig.savefig(png, format="png", dpi=110)
    md = render_markdown(report)
    if report.missing_figures:
        from .figures import write_figures

        written += write_figures(out, post=report.post, model=report.model, region=report.region)
    pdf = _render_pdf(report)
    atomic_write_bytes(out / BAND_FILE, png.getvalue())
    written.append(out / BAND_FILE)
    atomic_write_bytes(out / "report.pdf", pdf)
    atomic_write_text(out / "report.md", md)
    written += [out / "report.pdf", out / "report.md"]
    return written
