"""The summary files of a fit: summary.ecsv (the table), summary.md and summary.tex."""

from __future__ import annotations

import io
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
from astropy.table import Table

from .files import atomic_write_text
from .fitfolder import FitFolder

__all__ = ["write_summary"]


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


def write_summary(table: Table, notes: list[str], out_dir: str | Path, *,
                  header: Mapping[str, Any]) -> list[Path]:
    """Write summary.ecsv, summary.md and summary.tex into a fit folder (each atomically).

    Parameters
    ----------
    table : astropy.table.Table
        :func:`infer.inference.posterior.summary_table` (columns name, unit, median, p16,
        p84, p02_5, p97_5, kind).
    notes : list of str
        Identifiability notes (stored in the ECSV header, listed in the Markdown).
    out_dir : path
        The fit folder.
    header : mapping
        Metadata of the fit (region, catalog, diffusion, ...), stored in the ECSV header.

    Returns
    -------
    list of Path
        The three files written.
    """
    ecsv, md, tex_file = FitFolder(Path(out_dir)).summary_files
    t = table.copy()
    t.meta.update({k: v for k, v in header.items()})
    t.meta["identifiability"] = list(notes)
    buf = io.StringIO()
    t.write(buf, format="ascii.ecsv")
    atomic_write_text(ecsv, buf.getvalue())

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
    atomic_write_text(md, "\n".join(lines))

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
    atomic_write_text(tex_file, "\n".join(tex))
    return [ecsv, md, tex_file]
