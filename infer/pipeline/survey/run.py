"""``run_survey``: every region of the catalogs fitted on a Dask cluster, then the table and
the figure (see :mod:`infer.pipeline.survey`)."""

from __future__ import annotations

import sys
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from astropy.table import Table

from ...errors import InferError
from ...inference.config import RunConfig, load_config
from ..fit import run_hash
from .cluster import cluster_client, core_count, run_tasks
from .figure import write_figure
from .regions import folder_names, one_line, read_regions, region_config
from .table import survey_table, write_tables
from .tasks import FitTask, failed_row, folder_state, row_from_folder

__all__ = ["SurveyResult", "run_survey"]


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
    tasks: dict[int, FitTask] = {}
    for i, (e, folder) in enumerate(zip(entries, folders, strict=True)):
        if e.error:
            rows[i] = failed_row(e.name, e.source, e.error)
            continue
        try:
            cfg = region_config(config, e.region, local_conditions=local_conditions)
            rh = run_hash(e.catalog_bytes, e.region.name, cfg)
            if folder_state(out / folder, rh, cfg.sampler.max_steps):
                rows[i] = row_from_folder(out / folder, skipped=True)
                continue
        except InferError as exc:
            rows[i] = failed_row(e.name, e.source, one_line(exc), n_clumps=len(e.region))
            continue
        tasks[i] = FitTask(e.region, cfg, e.catalog_bytes, folder, str(out), plots)

    dashboard = None
    if tasks:
        n = n_workers or min(core_count(), len(tasks))
        with cluster_client(scheduler, n, say) as (client, dashboard):
            make_folder(out)
            rows = run_tasks(client, tasks, rows, retries=retries, progress=progress)
    make_folder(out)
    final = [r for r in rows if r is not None]
    table = survey_table(final)
    table.meta.update({"seed": int(config.sampler.seed), "config": str(config.source),
                       "local_conditions": bool(local_conditions),
                       "catalogs": [str(c) for c in catalogs]})
    files = write_tables(table, out) + write_figure(table, out)
    label = [r["folder"] or r["region"] for r in final]
    return SurveyResult(
        table=table, out_dir=out, files=tuple(files),
        fitted=tuple(x for x, r in zip(label, final, strict=True)
                     if not r["error"] and not r["skipped"]),
        skipped=tuple(x for x, r in zip(label, final, strict=True) if r["skipped"]),
        failed=tuple(x for x, r in zip(label, final, strict=True) if r["error"]),
        dashboard=dashboard)


def make_folder(out: Path) -> None:
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InferError(f"--out {out}: cannot create the folder ({exc.strerror})") from None
