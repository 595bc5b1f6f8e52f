"""Writing files safely: atomic replacement (a temporary file in the same folder, then rename).

The layout of a fit folder, and the guard that refuses to mix runs in one, live in
:mod:`infer.outputs.fitfolder`.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..errors import InferError

__all__ = ["atomic_write_text", "atomic_write_bytes", "jsonable", "write_json"]


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
