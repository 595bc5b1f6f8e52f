"""One survey task: a region fitted (or resumed) on a worker, in its own folder.

A region is fitted in ``DIR/.partial-<folder>`` and renamed into place only once complete;
:func:`folder_state` says whether a folder holds this run finished, to continue, or nothing.
The folders are read through :class:`~infer.outputs.fitfolder.FitFolder`.
"""

from __future__ import annotations

import os
import shutil
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ...errors import ChainError, InferError
from ...inference.config import RunConfig
from ...outputs.fitfolder import SUMMARY_STATS, FitFolder
from ..fit import fit_region, run_hash
from .regions import one_line
from .table import STATS

__all__ = ["FitTask", "fit_task", "folder_state", "row_from_folder", "failed_row", "PARTIAL"]

#: prefix of the folder a region is fitted in until it is complete
PARTIAL = ".partial-"
_OLD = ".old-"


@dataclass(frozen=True)
class FitTask:
    """Everything a worker needs to fit one region (small and picklable)."""

    region: Any
    config: RunConfig
    catalog_bytes: bytes
    folder: str
    out_dir: str
    plots: bool


def folder_state(final: Path, rh: str, max_steps: int) -> bool | None:
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


def fit_task(task: FitTask) -> dict:
    """One region, on a worker: fit (or resume) in the partial folder, then move into place.

    Returns the region's table row; an InferError becomes a row with its message.
    """
    region, cfg = task.region, task.config
    out = Path(task.out_dir)
    final, partial = out / task.folder, out / (PARTIAL + task.folder)
    rh = run_hash(task.catalog_bytes, region.name, cfg)
    try:
        state = folder_state(final, rh, cfg.sampler.max_steps)
        if state:
            return row_from_folder(final, skipped=True)
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
        return row_from_folder(final, skipped=False)
    except InferError as exc:
        return failed_row(region.name, region.source, one_line(exc), n_clumps=len(region))
    except OSError as exc:  # the output folder: permissions, a full disk
        return failed_row(region.name, region.source,
                           f"{exc.filename or out}: cannot write ({exc.strerror or exc}); free "
                           f"some space or fix the permissions, then run the survey again",
                           n_clumps=len(region))


def row_from_folder(path: Path, *, skipped: bool) -> dict:
    """The table row of a finished region folder (its summary, diagnostics and run info)."""
    folder = FitFolder(path)
    try:
        summary = folder.summary()
        diag = folder.diagnostics()
        run = folder.run_info()
        at = {k: SUMMARY_STATS.index(k) for k in STATS}
        stats = {name: {k: float(summary[name].value[i]) for k, i in at.items()}
                 for name in summary.colnames if name != "stat"}
        return {"region": run.region, "source": str(run.source),
                "n_clumps": int(diag.get("n_clumps", 0)), "stats": stats,
                "converged": bool(diag["converged"]), "steps": int(diag["steps"]), "error": "",
                "folder": path.name, "skipped": skipped}
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise InferError(f"{path}: the finished fit's summary is unreadable ({one_line(exc)}); "
                         f"delete the folder to fit the region again") from None


def failed_row(name: str, source: str, error: str, *, n_clumps: int = 0) -> dict:
    return {"region": name, "source": source, "n_clumps": n_clumps, "stats": {},
            "converged": False, "steps": 0, "error": error, "folder": "", "skipped": False}
