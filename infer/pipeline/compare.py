"""Two fit folders of the same catalog compared by PSIS-LOO (``infer report --compare``).

The statistics are :mod:`infer.inference.comparison`; this module reads the two folders
(:class:`~infer.outputs.fitfolder.FitFolder`) and checks that they are comparable.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from ..errors import ChainError, InferError
from ..inference.comparison import Comparison, compare_loo, psis_loo
from ..outputs.fitfolder import FitFolder

__all__ = ["compare_fits"]


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def _fit_name(folder: FitFolder) -> str:
    """The folder name with its diffusion mode, e.g. ``"fit-a (ionization)"``."""
    try:
        mode = folder.config().model.diffusion
    except InferError:
        return folder.path.name
    return f"{folder.path.name} ({mode})"


def compare_fits(dir1: str | Path, dir2: str | Path) -> Comparison:
    """PSIS-LOO comparison of two fit folders of the same catalog and observations.

    Parameters
    ----------
    dir1, dir2 : path
        Finished ``infer fit`` folders; the difference is the first minus the second.

    Returns
    -------
    Comparison

    Raises
    ------
    ChainError
        A folder is not a finished fit.
    InferError
        The fits are of different catalogs, regions or observations.
    """
    f1, f2 = FitFolder(Path(dir1)), FitFolder(Path(dir2))
    for f in (f1, f2):
        if not f.exists():
            raise ChainError(f"{f.path}: no such fit folder")
    r1, r2 = f1.run_info(), f2.run_info()
    if r1.region != r2.region:
        raise InferError(f"the fits are of different regions ({r1.region} and {r2.region}); "
                         f"compare fits of the same catalog and region")
    s1, s2 = r1.source, r2.source
    h1, h2 = _digest(s1), _digest(s2)
    if h1 is None or h2 is None:
        if s1.resolve() != s2.resolve():
            raise InferError(f"cannot check that the fits used the same catalog ({s1} and {s2}; "
                             f"{s1 if h1 is None else s2} is no longer there)")
    elif h1 != h2:
        raise InferError(f"the fits used different catalogs ({s1} and {s2}); compare fits of the "
                         f"same catalog")
    p1, p2 = f1.pointwise(), f2.pointwise()
    if p1.labels != p2.labels:
        raise InferError(f"the fits are not over the same observations ({len(p1.labels)} and "
                         f"{len(p2.labels)}; spacing method or exclusions differ); compare fits "
                         f"with the same observations")
    n1, n2 = _fit_name(f1), _fit_name(f2)
    if n1 == n2:
        n1, n2 = f"{n1} [1]", f"{n2} [2]"
    return compare_loo(psis_loo(p1.loglike, labels=p1.labels),
                       psis_loo(p2.loglike, labels=p2.labels), names=(n1, n2))
