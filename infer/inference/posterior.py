"""Posterior samples, derived quantities, summary tables and diagnostics of a fit."""

from __future__ import annotations

import platform
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from astropy.table import Table

from .chainfile import ChainData
from .model import DERIVED_UNITS, Model
from .priors import PARAMETERS

__all__ = [
    "Posterior",
    "posterior_from_chain",
    "summary_table",
    "identifiability_notes",
    "diagnostics",
    "write_summary",
    "QUANTILES",
]

#: columns of the summary tables and the quantiles they hold
QUANTILES = {"median": 0.5, "p16": 0.16, "p84": 0.84, "p02_5": 0.025, "p97_5": 0.975}

#: derived quantities shown in the summary (in this order)
SUMMARY_DERIVED = ("field", "eta_ad", "eta_ohm", "eta_total", "ionization", "tau_ni",
                   "wavelength", "growth_time", "fragment_mass", "toomre_q")


@dataclass(frozen=True)
class Posterior:
    """Thinned, burnt-in posterior samples with their derived quantities.

    Attributes
    ----------
    names : tuple of str
        Sampled parameters.
    theta : ndarray (n, ndim)
        ln of the sampled parameters.
    values : dict name -> ndarray (n,)
        Every parameter (fixed included) in its canonical unit.
    derived : dict name -> ndarray (n,)
        In the units of :data:`infer.inference.model.DERIVED_UNITS`.
    log_prob : ndarray (n,)
    burn, thin : int
        Steps discarded at the start, and thinning, of the chain.
    """

    names: tuple[str, ...]
    theta: np.ndarray
    values: dict
    derived: dict
    log_prob: np.ndarray
    burn: int
    thin: int

    @property
    def n(self) -> int:
        return int(self.theta.shape[0])

    def column(self, name: str) -> np.ndarray:
        """Samples of a parameter or derived quantity by name."""
        if name in self.values:
            return self.values[name]
        return self.derived[name]


def burn_and_thin(tau: np.ndarray, n_steps: int) -> tuple[int, int]:
    """Burn-in 2 max(tau) and thinning tau_min / 2 (emcee's suggestion); half the chain if tau is unknown."""
    tau = np.asarray(tau, dtype=float)
    if tau.size and np.all(np.isfinite(tau)) and np.max(tau) * 2 < n_steps:
        return int(np.ceil(2 * np.max(tau))), max(1, int(0.5 * np.min(tau)))
    return n_steps // 2, 1


def posterior_from_chain(model: Model, chain: ChainData, tau, *, max_samples: int = 20000,
                         rng_seed: int = 0) -> Posterior:
    """Posterior samples from a chain: burn-in, thinning, derived quantities.

    Parameters
    ----------
    model : Model
    chain : ChainData
    tau : array_like (ndim,)
        Integrated autocorrelation times, steps.
    max_samples : int
        Cap on the number of samples kept (a deterministic subset beyond it).
    """
    burn, thin = burn_and_thin(tau, chain.iteration)
    th = chain.chain[burn::thin].reshape(-1, chain.chain.shape[2])
    lp = chain.log_prob[burn::thin].reshape(-1)
    keep = np.isfinite(lp)
    th, lp = th[keep], lp[keep]
    if th.shape[0] > max_samples:
        idx = np.sort(np.random.default_rng(rng_seed).choice(th.shape[0], max_samples, replace=False))
        th, lp = th[idx], lp[idx]
    values = model.values(th)
    derived = model.derived(th)
    return Posterior(tuple(model.names), th, values, derived, lp, burn, thin)


def _quantiles(x: np.ndarray) -> dict[str, float]:
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {k: np.nan for k in QUANTILES}
    q = np.quantile(x, list(QUANTILES.values()))
    return dict(zip(QUANTILES, map(float, q), strict=True))


def summary_table(post: Posterior, model: Model) -> Table:
    """One row per parameter (sampled, then fixed) and derived quantity.

    Columns: name, unit, median, p16, p84, p02_5, p97_5, kind
    ("sampled" | "fixed" | "derived").
    """
    rows = []
    for name in PARAMETERS:
        if name in post.names:
            rows.append((name, PARAMETERS[name].unit, _quantiles(post.values[name]), "sampled"))
    for name in PARAMETERS:
        if name in model.priors and model.priors[name].fixed:
            v = model.priors[name].value
            rows.append((name, PARAMETERS[name].unit, dict.fromkeys(QUANTILES, v), "fixed"))
    for name in SUMMARY_DERIVED:
        if name in post.names or name not in post.derived:
            continue
        qs = _quantiles(post.derived[name])
        if not np.isfinite(qs["median"]):
            continue
        if model.options.diffusion == "ideal" and name.startswith("eta_"):
            continue  # flux freezing: the diffusivities are zero by assumption
        rows.append((name, DERIVED_UNITS[name], qs, "derived"))
    t = Table()
    t["name"] = [r[0] for r in rows]
    t["unit"] = [r[1] for r in rows]
    for k in QUANTILES:
        t[k] = np.array([r[2][k] for r in rows], dtype=float)
    t["kind"] = [r[3] for r in rows]
    return t


def ln_width(x: np.ndarray, *, min_size: int = 2) -> float:
    """Width of the central 68% interval of ln x (positive, finite samples only)."""
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x) & (x > 0)]
    if x.size < min_size:
        return np.nan
    a, b = np.quantile(np.log(x), [0.16, 0.84])
    return float(b - a)


def identifiability_notes(post: Posterior, model: Model) -> list[str]:
    """Plain-language notes on what the data constrain, detected from the samples.

    * a sampled parameter whose 68% interval (in ln) is at least 90% as wide as
      the prior's is flagged as not constrained by the data;
    * two sampled parameters with |correlation of ln| > 0.7 are flagged as degenerate;
    * in ``free`` mode, when the sum eta_AD + eta_OD is much better determined
      than either term, the note says that only the sum is constrained.
    """
    notes: list[str] = []
    rng = np.random.default_rng(0)
    for name in post.names:
        prior = model.priors[name]
        pw = ln_width(prior.sample(rng, 20000))
        w = ln_width(post.values[name])
        if np.isfinite(pw) and np.isfinite(w) and w >= 0.9 * pw:
            notes.append(f"{name}: not constrained by the data (posterior 68% interval is "
                         f"{w / pw:.0%} of the prior's width); its summary reflects the prior.")
    if len(post.names) >= 2 and post.n > 10:
        c = np.corrcoef(post.theta.T)
        for i in range(len(post.names)):
            for j in range(i + 1, len(post.names)):
                if np.isfinite(c[i, j]) and abs(c[i, j]) > 0.7:
                    notes.append(f"{post.names[i]} and {post.names[j]} are degenerate "
                                 f"(correlation of their logarithms {c[i, j]:+.2f}); the corner plot "
                                 f"shows the ridge; quote them jointly.")
    if model.options.diffusion == "free":
        w_ad = ln_width(post.values["eta_ad"])
        w_o = ln_width(post.values["eta_ohm"])
        w_t = ln_width(post.derived["eta_total"])
        if np.isfinite(w_t) and w_t < 0.5 * min(w_ad, w_o):
            notes.append(f"eta_ad and eta_ohm: the fragmentation constrains only their sum "
                         f"eta_total (68% width {w_t:.2f} in ln against {w_ad:.2f} and {w_o:.2f} for "
                         f"the two terms); the split between them comes from the priors. Use "
                         f'diffusion = "ionization" to tie them through the ionization fraction.')
        else:
            notes.append("eta_ad and eta_ohm: the model depends on them only through their sum "
                         "eta_total; the split between them is set by the priors.")
    if model.options.diffusion == "ideal":
        notes.append("flux freezing assumed (diffusion = \"ideal\"): no diffusivities are inferred.")
    return notes


def diagnostics(*, chain: ChainData, tau, converged: bool, post: Posterior, options, wall_time: float,
                resumed_from: int, run_hash: str, extra: Mapping | None = None) -> dict:
    """The content of diagnostics.json."""
    import astropy
    import emcee
    import scipy

    from .. import __version__

    tau = np.asarray(tau, dtype=float)
    n_steps = chain.iteration
    n_after = max(n_steps - post.burn, 0)
    n_eff = {n: (float(chain.chain.shape[1] * n_after / t) if np.isfinite(t) and t > 0 else None)
             for n, t in zip(chain.names, tau, strict=True)}
    acc = chain.accepted / max(n_steps, 1)
    d = {
        "steps": int(n_steps),
        "walkers": int(chain.chain.shape[1]),
        "acceptance_fraction": float(np.mean(acc)),
        "acceptance_fraction_per_walker": [float(a) for a in acc],
        "autocorrelation_time": {n: (float(t) if np.isfinite(t) else None)
                                 for n, t in zip(chain.names, tau, strict=True)},
        "effective_samples": n_eff,
        "converged": bool(converged),
        "convergence_rule": f"chain longer than {options.tau_factor:g} autocorrelation times and the "
                            f"estimate changed by less than {options.tau_rtol:.0%} between checks",
        "burn_in": int(post.burn),
        "thin": int(post.thin),
        "posterior_samples": int(post.n),
        "seed": int(options.seed),
        "moves": options.moves,
        "max_steps": int(options.max_steps),
        "wall_time_s": float(wall_time),
        "resumed_from_step": int(resumed_from),
        "run_hash": run_hash,
        "versions": {"infer": __version__, "python": platform.python_version(),
                     "numpy": np.__version__, "scipy": scipy.__version__, "emcee": emcee.__version__,
                     "astropy": astropy.__version__},
    }
    if extra:
        d.update(extra)
    return d


def _fmt(v: float) -> str:
    if not np.isfinite(v):
        return "n/a"
    return f"{v:.3g}"


def _tex_num(v: float) -> str:
    if not np.isfinite(v):
        return "--"
    s = f"{v:.3g}"
    if "e" in s:
        m, e = s.split("e")
        return f"{m}\\times10^{{{int(e)}}}"
    return s


_TEX_UNITS = {"": "", "dex": "dex", "g / cm2": r"g\,cm$^{-2}$", "K": "K", "solMass": r"M$_\odot$",
              "au": "au", "1 / s": r"s$^{-1}$", "dyn / cm2": r"dyn\,cm$^{-2}$", "mG": "mG",
              "cm2 / s": r"cm$^2$\,s$^{-1}$", "yr": "yr", "jupiterMass": r"M$_\mathrm{J}$"}


def write_summary(table: Table, notes: list[str], out_dir: str | Path, *, header: Mapping) -> None:
    """Write summary.ecsv, summary.md and summary.tex (each atomically)."""
    from ..outputs.files import atomic_write_text

    out_dir = Path(out_dir)
    t = table.copy()
    t.meta.update({k: v for k, v in header.items()})
    t.meta["identifiability"] = list(notes)
    import io

    buf = io.StringIO()
    t.write(buf, format="ascii.ecsv")
    atomic_write_text(out_dir / "summary.ecsv", buf.getvalue())

    lines = [f"# Posterior summary: {header.get('region', '')}", ""]
    for key in ("catalog", "diffusion", "fragment_mass_convention", "derived_quantities",
                "selection", "measurements", "converged"):
        if key in header:
            lines.append(f"* {key.replace('_', ' ')}: {header[key]}")
    lines += ["", "| quantity | unit | median | 68% interval | 95% interval | kind |",
              "|---|---|---|---|---|---|"]
    for r in t:
        lines.append(f"| {r['name']} | {r['unit'] or '-'} | {_fmt(r['median'])} | "
                     f"{_fmt(r['p16'])} - {_fmt(r['p84'])} | {_fmt(r['p02_5'])} - {_fmt(r['p97_5'])} | "
                     f"{r['kind']} |")
    lines += ["", "Intervals are central posterior quantiles (16-84% and 2.5-97.5%).", ""]
    if notes:
        lines += ["## What the data do and do not constrain", ""] + [f"* {n}" for n in notes] + [""]
    atomic_write_text(out_dir / "summary.md", "\n".join(lines))

    tex = [r"\begin{table}", r"\centering",
           rf"\caption{{Posterior medians with 68\% intervals, {header.get('region', '')}.}}",
           r"\begin{tabular}{llc}", r"\hline", r"Quantity & Unit & Value \\", r"\hline"]
    for r in t:
        name = str(r["name"]).replace("_", r"\_")
        unit = _TEX_UNITS.get(str(r["unit"]), str(r["unit"]))
        if r["kind"] == "fixed":
            val = f"${_tex_num(r['median'])}$ (fixed)"
        else:
            lo = r["median"] - r["p16"]
            hi = r["p84"] - r["median"]
            val = f"${_tex_num(r['median'])}^{{+{_tex_num(hi)}}}_{{-{_tex_num(lo)}}}$"
        tex.append(f"{name} & {unit} & {val} \\\\")
    tex += [r"\hline", r"\end{tabular}", r"\end{table}", ""]
    atomic_write_text(out_dir / "summary.tex", "\n".join(tex))
