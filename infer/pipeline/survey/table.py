"""The survey table: one row per region (survey.ecsv, survey.csv)."""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path

import astropy.units as u
import numpy as np
from astropy.table import Table

from ...inference.priors import PARAMETERS
from ...outputs.files import atomic_write_text
from ...quantities import QUANTITIES

__all__ = ["survey_table", "write_tables", "TABLE_NAMES", "SUMMARY_ORDER", "STATS"]

#: the files :func:`infer.pipeline.survey.run_survey` writes into the output folder
TABLE_NAMES = ("survey.ecsv", "survey.csv", "survey.png", "survey.pdf")

#: summary quantities first in the table (others follow in parameter order)
SUMMARY_ORDER = ("mass_to_flux", "ionization", "eta_ad", "eta_ohm", "field", "eta_total", "tau_ni",
                 "wavelength", "fragment_mass", "growth_time", "toomre_q", "surface_density",
                 "temperature")

#: the statistics of each quantity in the table
STATS = ("median", "p16", "p84")


def _ordered_names(rows: Sequence[dict]) -> list[str]:
    seen = {n for r in rows for n in r["stats"]}
    order = list(SUMMARY_ORDER) + [n for n in PARAMETERS if n not in SUMMARY_ORDER]
    return [n for n in order if n in seen] + sorted(seen - set(order))


def survey_table(rows: Sequence[dict]) -> Table:
    """The survey table from per-region rows.

    Columns: ``region``, ``source`` (catalog file), ``n_clumps``, then for
    each summary quantity ``<name>_median``, ``<name>_p16``, ``<name>_p84``
    (posterior median and 68% central interval; fixed parameters repeat their
    value; NaN where a region has no such quantity or failed), then
    ``converged`` (bool), ``steps`` (chain length), ``error`` (empty when the
    fit succeeded) and ``folder`` (the region's sub-folder, empty on failure).
    Each quantity's columns carry its unit from :mod:`infer.quantities`.
    """
    names = _ordered_names(rows)
    t = Table()
    t["region"] = [str(r["region"]) for r in rows] or np.array([], dtype=str)
    t["source"] = [str(r["source"]) for r in rows] or np.array([], dtype=str)
    t["n_clumps"] = np.array([int(r["n_clumps"]) for r in rows], dtype=int)
    for n in names:
        unit = QUANTITIES[n].column_unit if n in QUANTITIES else None
        for k in STATS:
            col = np.array([r["stats"].get(n, {}).get(k, np.nan) for r in rows], dtype=float)
            t[f"{n}_{k}"] = col
            if unit is not None and unit != u.dimensionless_unscaled:
                t[f"{n}_{k}"].unit = unit
    t["converged"] = np.array([bool(r["converged"]) for r in rows], dtype=bool)
    t["steps"] = np.array([int(r["steps"]) for r in rows], dtype=int)
    t["error"] = [str(r["error"]) for r in rows] or np.array([], dtype=str)
    t["folder"] = [str(r["folder"]) for r in rows] or np.array([], dtype=str)
    t.meta["intervals"] = "posterior median and central 68% interval (p16-p84)"
    return t


def write_tables(t: Table, out: Path) -> list[Path]:
    buf = io.StringIO()
    t.write(buf, format="ascii.ecsv")
    atomic_write_text(out / "survey.ecsv", buf.getvalue())
    df = t.to_pandas()
    atomic_write_text(out / "survey.csv", df.to_csv(index=False))
    return [out / "survey.ecsv", out / "survey.csv"]
