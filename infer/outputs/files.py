"""Writing into output folders safely: atomic files, refusing to clobber another run."""

from __future__ import annotations

import json
import math
import os
import tempfile
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..errors import ChainError, InferError

__all__ = ["atomic_write_text", "atomic_write_bytes", "jsonable", "write_json", "prepare_out_dir",
           "RUN_FILE"]

#: small JSON file identifying the run a folder holds (catalog + config hash)
RUN_FILE = "run.json"


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` via a temporary file in the same folder and os.replace."""
    path = Path(path)
    try:
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    except OSError as exc:
        raise InferError(f"{path.parent}: cannot write here ({exc.strerror}); choose another "
                         f"folder or free some space") from None
    try:
        os.chmod(tmp, 0o666 & ~_umask())
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise InferError(f"{path}: cannot write ({exc.strerror}); earlier files are unchanged") from None


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def atomic_write_text(path: str | Path, text: str) -> None:
    atomic_write_bytes(path, text.encode("utf-8"))


def jsonable(obj: Any) -> Any:
    """Recursively replace NaN/inf by None and numpy scalars/arrays by Python values."""
    import numpy as np

    if isinstance(obj, Mapping):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return jsonable(obj.tolist())
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return v if math.isfinite(v) else None
    return obj


def write_json(path: str | Path, data: Mapping) -> None:
    atomic_write_text(path, json.dumps(jsonable(data), indent=2, allow_nan=False) + "\n")


def prepare_out_dir(out_dir: str | Path, *, run_hash: str, resume: bool) -> bool:
    """Check that ``out_dir`` may receive this run; create it if needed.

    Returns True when the folder was created (so a failed fit may remove it).

    Raises
    ------
    ChainError
        The folder holds another run, holds other files, or the user asked to
        resume a run that is not there.
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InferError(f"--out {out}: exists and is not a folder")
    if not out.exists():
        if resume:
            raise ChainError(f"--out {out}: nothing to resume (the folder does not exist); "
                             f"run without --resume")
        try:
            out.mkdir(parents=True)
        except OSError as exc:
            raise InferError(f"--out {out}: cannot create the folder ({exc.strerror})") from None
        return True
    entries = [p for p in out.iterdir() if not p.name.startswith(".")]
    if not entries:
        if resume:
            raise ChainError(f"--out {out}: nothing to resume (the folder is empty)")
        return False
    run_file = out / RUN_FILE
    if not run_file.exists():
        raise ChainError(f"--out {out}: the folder is not empty and holds no fit of this package; "
                         f"choose a new or empty folder")
    try:
        held = json.loads(run_file.read_text()).get("run_hash")
    except (OSError, ValueError, AttributeError):
        raise ChainError(f"--out {out}: {RUN_FILE} is unreadable; choose a new folder") from None
    if held != run_hash:
        raise ChainError(f"--out {out}: the folder holds a different run (other catalog, config or "
                         f"seed); choose another --out folder")
    if not resume and (out / "chain.h5").exists():
        raise ChainError(f"--out {out}: the folder already holds this run; add --resume to "
                         f"continue it, or choose another --out folder")
    if not os.access(out, os.W_OK):
        raise InferError(f"--out {out}: the folder is not writable")
    return False
