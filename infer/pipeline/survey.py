"""Many regions at once: one fit per catalog or per group, in parallel on a Dask cluster.

:func:`run_survey` reads every catalog, fits each region with
:func:`infer.pipeline.fit.fit_region` as one Dask task, and writes, in the output
folder ``DIR``:

* ``DIR/<folder>/`` -- the complete output of ``infer fit`` for each region;
  ``<folder>`` is the region name made safe for file systems (see
  :func:`folder_names`);
* ``survey.ecsv`` and ``survey.csv`` -- one row per region (see
  :func:`survey_table`);
* ``survey.png`` and ``survey.pdf`` -- the mass-to-flux ratio of every region
  and the field strength against radius (or surface density).

Reproducible: each region is sampled with its own seed, :func:`region_seed`
of the run seed (``[sampler] seed`` or ``--seed``) and the region name, so a
region gets the same chain on any cluster, in any order, and from
``infer fit --region NAME`` with that seed and the region's saved
``config.toml``.

Resumable and fault tolerant: a region is fitted in ``DIR/.partial-<folder>``
and renamed into place only once complete. Running the same survey again
skips the finished regions, continues interrupted chains from their last
checkpoint (and chains that stopped at ``max_steps`` without converging when
``max_steps`` is raised), and refits nothing else. A region whose catalog
rows or fit raise an :class:`~infer.errors.InferError` is recorded with its
message in the ``error`` column; the others go on. Tasks lost with a worker
are rerun by the scheduler (and resume from the checkpoint); other
exceptions are retried ``retries`` times, then recorded.

Per-region conditions: a region whose catalog metadata holds a
``local_conditions`` table (e.g. ``{stellar_mass: 0.6 solMass, radius: 70 au,
surface_density: 60 g/cm2}``, per group in the header's ``groups`` table)
gets its own priors, see :func:`region_config`.

The workers must see the same file system as the client (catalog paths are
not needed on the workers, the output folder is).
"""

from __future__ import annotations

import hashlib
import io
import os
import re
import shutil
import sys
import tempfile
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import astropy.units as u
import numpy as np
from astropy.table import Table

from ..errors import ChainError, InferError
from ..inference.config import RunConfig, load_config
from ..inference.priors import PARAMETERS, Prior, parse_prior
from ..outputs.files import atomic_write_text, save_figure
from ..outputs.fitfolder import SUMMARY_STATS, FitFolder
from ..quantities import QUANTITIES
from .fit import fit_region, run_hash

__all__ = ["SurveyResult", "RegionEntry", "run_survey", "region_seed", "region_config", "folder_names",
           "read_regions", "survey_table", "survey_figure", "TABLE_NAMES", "SUMMARY_ORDER"]

#: the files :func:`run_survey` writes into the output folder
TABLE_NAMES = ("survey.ecsv", "survey.csv", "survey.png", "survey.pdf")

#: summary quantities first in the table (others follow in parameter order)
SUMMARY_ORDER = ("mass_to_flux", "ionization", "eta_ad", "eta_ohm", "field", "eta_total", "tau_ni",
                 "wavelength", "fragment_mass", "growth_time", "toomre_q", "surface_density",
                 "temperature")

_STATS = ("median", "p16", "p84")
_PARTIAL = ".partial-"
_OLD = ".old-"
_THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


@dataclass(frozen=True)
class SurveyResult:
    """What :func:`run_survey` produced.

    Attributes
    ----------
    table : astropy.table.Table
        One row per region (the content of ``survey.ecsv``).
    out_dir : Path
    files : tuple of Path
        survey.ecsv, survey.csv and the figures written.
    fitted, skipped, failed : tuple of str
        Folder names (or, for regions without one, region names) of the
        regions fitted in this run, already finished before it, and failed.
    dashboard : str or None
        The dashboard address of the local cluster started (None otherwise).
    """

    table: Table
    out_dir: Path
    files: tuple[Path, ...]
    fitted: tuple[str, ...]
    skipped: tuple[str, ...]
    failed: tuple[str, ...]
    dashboard: str | None = None


# ------------------------------------------------------------ seeds, names ----

def region_seed(seed: int, name: str) -> int:
    """The seed of one region: a hash of the run seed and the region name.

    The first four bytes (big-endian) of SHA-256 of ``"<seed>:<name>"``
    (UTF-8), so a whole number in [0, 2**32), usable by numpy's generators.

    Parameters
    ----------
    seed : int
        The run seed (``[sampler] seed``, or ``--seed``).
    name : str
        The region name (the ``group`` value, or the catalog file's stem).
    """
    digest = hashlib.sha256(f"{int(seed)}:{name}".encode()).digest()
    return int.from_bytes(digest[:4], "big")


_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")
_RESERVED = {n.lower() for n in TABLE_NAMES}


def _slug(name: str) -> str:
    s = _UNSAFE.sub("_", name.strip()).strip("._-")[:80]
    return s or "region"


def folder_names(regions: Sequence[tuple[str, str]]) -> list[str]:
    """File-system-safe, unique folder names for (source, region name) pairs.

    Letters, digits, ``.``, ``_`` and ``-`` are kept, every other run of
    characters becomes ``_`` (``"Sablemoor A"`` -> ``"Sablemoor_A"``), at most
    80 characters. Names that would clash (ignoring case, for case-insensitive
    file systems) all get ``-`` and 8 hex digits of SHA-256 of
    ``"<source>\\0<name>"``, so the result does not depend on the order.
    """
    slugs = [_slug(name) for _, name in regions]
    counts: dict[str, int] = {}
    for s in slugs:
        counts[s.lower()] = counts.get(s.lower(), 0) + 1
    out = []
    for (source, name), s in zip(regions, slugs, strict=True):
        if counts[s.lower()] > 1 or s.lower() in _RESERVED:
            tag = hashlib.sha256(f"{source}\0{name}".encode()).hexdigest()[:8]
            s = f"{s}-{tag}"
        out.append(s)
    return out


# ------------------------------------------------------- per-region config ----

def _quantity_text(value: Any) -> Any:
    import astropy.units as u

    if isinstance(value, u.Quantity):
        return f"{value.value!r} {value.unit.to_string()}"
    return value


def region_config(config: RunConfig, region, *, local_conditions: bool = True) -> RunConfig:
    """The config one region is fitted with: its seed and its local conditions.

    The sampler seed becomes :func:`region_seed` of the config's seed and the
    region name. With ``local_conditions``, each entry ``name: value`` of the
    region's ``local_conditions`` metadata (a mapping) adjusts the config's
    prior of that parameter:

    * a fixed value is replaced by the local value;
    * a ``lognormal`` prior is re-centred: its median becomes the local value
      (the width in dex is kept);
    * a ``normal`` prior is re-centred: its mean becomes the local value and
      its sd is scaled by the same factor (the fractional width is kept);
    * other distributions (``uniform``, ``loguniform``, ``halfnormal``,
      ``truncnormal``) state a range meant for every region and are kept.

    Raises
    ------
    InferError
        If ``local_conditions`` is not a mapping, names a parameter the config
        has no prior for, or holds a value that cannot be read.
    """
    cfg = config.with_sampler(seed=region_seed(config.sampler.seed, region.name))
    local = region.meta.get("local_conditions") if local_conditions else None
    if local is None:
        return cfg
    where = f"{region.source}: region {region.name!r}: metadata local_conditions"
    if not isinstance(local, Mapping):
        raise InferError(f"{where}: must be a table of parameter = value, got {local!r}")
    priors = dict(cfg.priors)
    for key, raw in local.items():
        name = str(key).strip()
        if name not in priors:
            known = ", ".join(n for n in PARAMETERS if n in priors)
            raise InferError(f"{where}: {name!r} is not a parameter of this run config "
                             f"(its priors are {known}); remove it from the catalog's "
                             f"local_conditions or add a prior for it")
        try:
            value = parse_prior(name, {"value": _quantity_text(raw)}).value
        except InferError as exc:
            raise InferError(f"{where}: {' '.join(str(exc).split())}") from None
        priors[name] = _recentre(priors[name], value)
    return replace(cfg, priors=priors)


def _recentre(prior: Prior, value: float) -> Prior:
    a = dict(prior.args)
    if prior.fixed:
        a["value"] = value
    elif prior.dist == "lognormal":
        a["median"] = value
    elif prior.dist == "normal" and a["mean"] > 0:
        a["sd"] = a["sd"] * value / a["mean"]
        a["mean"] = value
    else:
        return prior
    return Prior(prior.name, prior.dist, a)


# --------------------------------------------------------------- catalogs ----

@dataclass(frozen=True)
class RegionEntry:
    """One region of a survey, as read: the region, or the error that prevented reading it.

    Attributes
    ----------
    name : str
        Region name (the group, or the file stem when the whole file failed).
    source : str
        The catalog file (absolute path).
    region : Region or None
        None when reading failed.
    catalog_bytes : bytes
        The catalog file's content (for :func:`infer.pipeline.fit.run_hash`).
    error : str
        Empty when the region was read.
    """

    name: str
    source: str
    region: Any = None
    catalog_bytes: bytes = b""
    error: str = ""


def read_regions(catalogs: Sequence[str | Path], config: RunConfig) -> list[RegionEntry]:
    """Read every catalog; one entry per region, with its error if it could not be read.

    A catalog with a ``group`` column whose full read fails is read again
    group by group, so that one bad group (e.g. a single clump) does not take
    the other groups down with it; the bad group's message then counts rows
    within the group.
    """
    from ..catalog.regions import read_catalog

    entries: list[RegionEntry] = []
    for cat in catalogs:
        path = Path(cat).resolve()
        src = str(path)
        try:
            data = path.read_bytes()
            regions = read_catalog(path, overrides=dict(config.catalog),
                                   spacing=config.model.spacing)
        except OSError as exc:
            entries.append(RegionEntry(path.stem, src, error=f"{path}: cannot be read ({exc.strerror})"))
            continue
        except InferError as exc:
            entries.extend(_read_by_group(path, config, exc))
            continue
        entries.extend(RegionEntry(r.name, src, r, data) for r in regions)
    return entries


def _read_by_group(path: Path, config: RunConfig, first: InferError) -> list[RegionEntry]:
    """Each group of a catalog read on its own (after the whole file failed)."""
    from astropy.table import Column, MaskedColumn

    from ..catalog.read import read_table
    from ..catalog.regions import read_catalog

    src = str(path)
    whole = [RegionEntry(path.stem, src, error=_one_line(first))]
    overrides = dict(config.catalog)
    try:
        raw = read_table(path, units=overrides.get("units"))
    except InferError:
        return whole
    if "group" not in raw.columns or "id" not in raw.columns:
        return whole
    labels = np.ma.getdata(raw.columns["group"]).astype(str)
    ids = np.ma.getdata(raw.columns["id"]).astype(str)
    if np.ma.getmaskarray(raw.columns["group"]).any() or any(not g.strip() for g in labels):
        return whole
    labels = np.char.strip(labels)
    ids = np.char.strip(ids)
    exclude = overrides.get("exclude")
    if isinstance(exclude, (list, tuple)) and not {str(e).strip() for e in exclude} <= set(ids):
        return whole
    data = path.read_bytes()
    out: list[RegionEntry] = []
    with tempfile.TemporaryDirectory(prefix="infer-group-") as tmp:
        for k, group in enumerate(dict.fromkeys(labels.tolist())):
            rows = np.flatnonzero(labels == group)
            t = Table(meta=dict(raw.meta))
            for name, col in raw.columns.items():
                cls = MaskedColumn if np.ma.isMaskedArray(col) else Column
                t[name] = cls(col[rows], unit=raw.units.get(name))
            part = Path(tmp) / f"group{k}.ecsv"
            ov = {key: v for key, v in overrides.items() if key != "units"}
            if isinstance(exclude, (list, tuple)):
                ov["exclude"] = [e for e in exclude if str(e).strip() in set(ids[rows])]
            try:
                t.write(part, format="ascii.ecsv")
                [region] = read_catalog(part, overrides=ov, spacing=config.model.spacing)
            except InferError as exc:
                msg = _one_line(exc).replace(str(part), src)
                if "row" in msg:
                    msg += f" (rows counted within group {group!r})"
                out.append(RegionEntry(group, src, error=msg))
                continue
            except Exception:  # noqa: BLE001 - the group could not be isolated: report the file
                return whole
            region = replace(region, source=src, warnings=tuple(
                w.replace(str(part), src) for w in region.warnings))
            out.append(RegionEntry(group, src, region, data))
    if all(not e.error for e in out):  # the file's problem is not one group's: report the file
        return whole
    return out


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__


# ------------------------------------------------------------------ tasks ----

@dataclass(frozen=True)
class _Task:
    """Everything a worker needs to fit one region (small and picklable)."""

    region: Any
    config: RunConfig
    catalog_bytes: bytes
    folder: str
    out_dir: str
    plots: bool


def _finished(final: Path, rh: str, max_steps: int) -> bool | None:
    """None: no folder; True: holds this run, complete; False: holds this run, to continue.

    Raises InferError if the folder holds something else.
    """
    if not final.exists():
        return None
    folder = FitFolder(final)
    if folder.held_run_hash() != rh:
        raise InferError(f"{final}: the folder exists and holds another run (other catalog, "
                         f"config or seed) or no fit; move it away or choose another --out")
    try:
        diag = folder.diagnostics()
        return folder.is_complete() and (bool(diag["converged"]) or int(diag["steps"]) >= max_steps)
    except (ChainError, KeyError, TypeError, ValueError):
        return False


def _prepare_partial(partial: Path, final: Path, rh: str, redo: bool) -> bool:
    """Make the partial folder ready; True when it holds a chain to resume."""
    if partial.exists():
        if FitFolder(partial).held_run_hash() == rh and FitFolder(partial).has_chain():
            return True
        shutil.rmtree(partial)
    if redo:  # continue a finished folder's chain in a copy, swap when done
        tmp = partial.with_name(partial.name + ".copy")
        shutil.rmtree(tmp, ignore_errors=True)
        shutil.copytree(final, tmp)
        os.replace(tmp, partial)
        return FitFolder(partial).has_chain()
    return False


def _move_into_place(partial: Path, final: Path) -> None:
    old = final.with_name(_OLD + final.name)
    shutil.rmtree(old, ignore_errors=True)
    if final.exists():
        os.replace(final, old)
    os.replace(partial, final)
    shutil.rmtree(old, ignore_errors=True)


def _fit_task(task: _Task) -> dict:
    """One region, on a worker: fit (or resume) in the partial folder, then move into place.

    Returns the region's table row; an InferError becomes a row with its message.
    """
    region, cfg = task.region, task.config
    out = Path(task.out_dir)
    final, partial = out / task.folder, out / (_PARTIAL + task.folder)
    rh = run_hash(task.catalog_bytes, region.name, cfg)
    try:
        state = _finished(final, rh, cfg.sampler.max_steps)
        if state:
            return _row_from_folder(final, skipped=True)
        resume = _prepare_partial(partial, final, rh, redo=state is False)
        try:
            fit_region(region, cfg, partial, catalog_bytes=task.catalog_bytes, resume=resume,
                       progress=False, plots=task.plots)
        except ChainError:
            if not resume:
                raise
            shutil.rmtree(partial)  # an unreadable checkpoint: start this region again
            fit_region(region, cfg, partial, catalog_bytes=task.catalog_bytes, resume=False,
                       progress=False, plots=task.plots)
        _move_into_place(partial, final)
        return _row_from_folder(final, skipped=False)
    except InferError as exc:
        return _failed_row(region.name, region.source, _one_line(exc), n_clumps=len(region))
    except OSError as exc:  # the output folder: permissions, a full disk
        return _failed_row(region.name, region.source,
                           f"{exc.filename or out}: cannot write ({exc.strerror or exc}); free "
                           f"some space or fix the permissions, then run the survey again",
                           n_clumps=len(region))


def _row_from_folder(path: Path, *, skipped: bool) -> dict:
    """The table row of a finished region folder (its summary, diagnostics and run info)."""
    folder = FitFolder(path)
    try:
        summary = folder.summary()
        diag = folder.diagnostics()
        run = folder.run_info()
        at = {k: SUMMARY_STATS.index(k) for k in _STATS}
        stats = {name: {k: float(summary[name].value[i]) for k, i in at.items()}
                 for name in summary.colnames if name != "stat"}
        return {"region": run.region, "source": str(run.source),
                "n_clumps": int(diag.get("n_clumps", 0)), "stats": stats,
                "converged": bool(diag["converged"]), "steps": int(diag["steps"]), "error": "",
                "folder": path.name, "skipped": skipped}
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise InferError(f"{path}: the finished fit's summary is unreadable ({_one_line(exc)}); "
                         f"delete the folder to fit the region again") from None


def _failed_row(name: str, source: str, error: str, *, n_clumps: int = 0) -> dict:
    return {"region": name, "source": source, "n_clumps": n_clumps, "stats": {},
            "converged": False, "steps": 0, "error": error, "folder": "", "skipped": False}


# ------------------------------------------------------------------ table ----

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
        for k in _STATS:
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


def _write_tables(t: Table, out: Path) -> list[Path]:
    buf = io.StringIO()
    t.write(buf, format="ascii.ecsv")
    atomic_write_text(out / "survey.ecsv", buf.getvalue())
    df = t.to_pandas()
    atomic_write_text(out / "survey.csv", df.to_csv(index=False))
    return [out / "survey.ecsv", out / "survey.csv"]


# ----------------------------------------------------------------- figure ----

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


def _write_figures(t: Table, out: Path) -> list[Path]:
    fig = survey_figure(t)
    try:
        return save_figure(fig, out, "survey", formats=("png", "pdf"), dpi=130)
    finally:
        fig.clear()


# ---------------------------------------------------------------- cluster ----

def _core_count() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not on Linux
        return os.cpu_count() or 1


def _infer_version() -> str:
    from .. import __version__

    return __version__


def _check_workers(client, say: Callable[[str], None]) -> None:
    """Refuse workers that cannot import this package; say so when their version differs."""
    from .. import __version__

    try:
        versions = client.run(_infer_version)
    except Exception as exc:  # noqa: BLE001 - whatever the worker sent back
        raise InferError(f"the workers of the Dask cluster cannot run infer ({_one_line(exc)}); "
                         f"start them from the environment infer is installed in") from None
    other = sorted({v for v in versions.values() if v != __version__})
    if other:
        say(f"warning: some workers run infer {', '.join(other)}, this client {__version__}")
    if not versions:
        say("the cluster has no workers yet; the regions wait until workers join")


@contextmanager
def _client(scheduler: str | None, n_workers: int, say: Callable[[str], None]) -> Iterator[Any]:
    """A dask.distributed Client: to ``scheduler``, or to a new local cluster of processes."""
    import logging

    from dask.distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="20s", set_as_default=False)
        except (OSError, TimeoutError, ValueError, TypeError) as exc:
            raise InferError(f"--scheduler {scheduler}: cannot connect ({_one_line(exc)}); give "
                             f"the address the scheduler prints, e.g. tcp://host:8786") from None
        try:
            _check_workers(client, say)
            yield client, None
        finally:
            client.close()
        return
    cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                           env=dict(_THREAD_ENV), silence_logs=logging.ERROR)
    client = Client(cluster, set_as_default=False)
    link = cluster.dashboard_link
    import importlib.util

    extra = "" if importlib.util.find_spec("bokeh") else " (install bokeh to see its pages)"
    say(f"local Dask cluster: {n_workers} worker process{'es' if n_workers != 1 else ''}; "
        f"dashboard {link}{extra}")
    try:
        yield client, link
    finally:
        client.close()
        cluster.close()


# ---------------------------------------------------------------- survey ----

def run_survey(catalogs: Sequence[str | Path], config: RunConfig | str | Path,
               out_dir: str | Path, *, scheduler: str | None = None, n_workers: int | None = None,
               progress: bool = True, plots: bool = True, local_conditions: bool = True,
               retries: int = 2) -> SurveyResult:
    """Fit every region of ``catalogs`` in parallel and write the survey table and figure.

    Parameters
    ----------
    catalogs : sequence of path
        Catalog files; each gives one region, or one per value of its ``group`` column.
    config : RunConfig or path
        The run config (a TOML file is read with :func:`infer.inference.config.load_config`).
    out_dir : path
        Output folder (created if needed); see the module docstring for its content.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://host:8786``). Without it a
        local cluster of ``n_workers`` processes (one thread each) is started
        for the run and its dashboard address is printed.
    n_workers : int, optional
        Local worker processes (default: the cores available, at most one per
        region to fit). Not used with ``scheduler``.
    progress : bool
        A progress bar over regions and the dashboard address, on stderr.
    plots : bool
        Write each region's corner and predictive figures (as ``infer fit`` does).
    local_conditions : bool
        Apply each region's ``local_conditions`` metadata (see :func:`region_config`).
    retries : int
        How often the scheduler reruns a task that raised something other
        than an InferError (a task lost with its worker is rerun regardless).

    Returns
    -------
    SurveyResult

    Raises
    ------
    InferError
        A missing catalog file, an unusable output folder or scheduler
        address, or ``n_workers`` given with ``scheduler``. Problems of single
        regions are recorded in the table instead.
    """
    if not isinstance(config, RunConfig):
        config = load_config(config)
    if not catalogs:
        raise InferError("no catalog given; pass one or more catalog files")
    for cat in catalogs:
        if not Path(cat).is_file():
            what = "is a folder, not a catalog file" if Path(cat).is_dir() else "no such file"
            raise InferError(f"{cat}: {what}; check the path")
    if scheduler is not None and n_workers is not None:
        raise InferError("--workers sets the size of the local cluster and does not apply with "
                         "--scheduler; size the remote cluster there instead")
    if n_workers is not None and n_workers < 1:
        raise InferError(f"--workers: must be at least 1, got {n_workers}")
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InferError(f"--out {out}: exists and is not a folder")

    say = (lambda s: print(s, file=sys.stderr, flush=True)) if progress else (lambda s: None)
    entries = read_regions(catalogs, config)
    folders = folder_names([(e.source, e.name) for e in entries])
    rows: list[dict | None] = [None] * len(entries)
    tasks: dict[int, _Task] = {}
    for i, (e, folder) in enumerate(zip(entries, folders, strict=True)):
        if e.error:
            rows[i] = _failed_row(e.name, e.source, e.error)
            continue
        try:
            cfg = region_config(config, e.region, local_conditions=local_conditions)
            rh = run_hash(e.catalog_bytes, e.region.name, cfg)
            if _finished(out / folder, rh, cfg.sampler.max_steps):
                rows[i] = _row_from_folder(out / folder, skipped=True)
                continue
        except InferError as exc:
            rows[i] = _failed_row(e.name, e.source, _one_line(exc), n_clumps=len(e.region))
            continue
        tasks[i] = _Task(e.region, cfg, e.catalog_bytes, folder, str(out), plots)

    dashboard = None
    if tasks:
        n = n_workers or min(_core_count(), len(tasks))
        with _client(scheduler, n, say) as (client, dashboard):
            _make_folder(out)
            rows = _run_tasks(client, tasks, rows, retries=retries, progress=progress)
    _make_folder(out)
    final = [r for r in rows if r is not None]
    table = survey_table(final)
    table.meta.update({"seed": int(config.sampler.seed), "config": str(config.source),
                       "local_conditions": bool(local_conditions),
                       "catalogs": [str(c) for c in catalogs]})
    files = _write_tables(table, out) + _write_figures(table, out)
    label = [r["folder"] or r["region"] for r in final]
    return SurveyResult(
        table=table, out_dir=out, files=tuple(files),
        fitted=tuple(x for x, r in zip(label, final, strict=True)
                     if not r["error"] and not r["skipped"]),
        skipped=tuple(x for x, r in zip(label, final, strict=True) if r["skipped"]),
        failed=tuple(x for x, r in zip(label, final, strict=True) if r["error"]),
        dashboard=dashboard)


def _make_folder(out: Path) -> None:
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InferError(f"--out {out}: cannot create the folder ({exc.strerror})") from None


def _run_tasks(client, tasks: Mapping[int, _Task], rows: list, *, retries: int,
               progress: bool) -> list:
    from dask.distributed import as_completed
    from tqdm.auto import tqdm

    futures = {}
    for i, task in tasks.items():
        futures[client.submit(_fit_task, task, pure=False, retries=retries)] = i
    done = sum(r is not None for r in rows)
    bar = tqdm(total=len(rows), initial=done, unit="region", desc="survey", disable=not progress,
               dynamic_ncols=True, mininterval=0.5 if sys.stderr.isatty() else 30.0)
    try:
        for fut in as_completed(futures, loop=client.loop):
            i = futures[fut]
            task = tasks[i]
            try:
                rows[i] = fut.result()
            except Exception as exc:  # noqa: BLE001 - a bug or a lost cluster: record, go on
                rows[i] = _failed_row(task.region.name, task.region.source,
                                      f"internal error ({type(exc).__name__}: {_one_line(exc)})",
                                      n_clumps=len(task.region))
            fut.release()
            bar.update(1)
            if rows[i]["error"] and progress:
                bar.write(f"{rows[i]['region']}: failed: {rows[i]['error']}", file=sys.stderr)
    finally:
        bar.close()
    return rows
