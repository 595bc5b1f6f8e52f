"""Writing files safely: atomic replacement (a temporary file in the same folder, then rename).

:func:`save_figure` writes a figure as PNG and PDF through the same writer; matplotlib is
not imported here (a figure renders itself).

The layout of a fit folder, and the guard that refuses to mix runs in one, live in
:mod:`infer.outputs.fitfolder`.
"""

from __future__ import annotations

import io
import json
import math
import os
import tempfile
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..errors import InferError

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["atomic_write_text", "atomic_write_bytes", "jsonable", "write_json", "render_figure",
           "save_figure", "PDF_METADATA"]


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
    """Write ``text`` (UTF-8) to ``path`` atomically (see :func:`atomic_write_bytes`)."""
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
    """Write ``data`` as indented JSON atomically; NaN and inf become null (:func:`jsonable`)."""
    atomic_write_text(path, json.dumps(jsonable(data), indent=2, allow_nan=False) + "\n")


#: PDF metadata of the package's figures (PNG files keep matplotlib's own)
PDF_METADATA = {"Creator": "infer"}


def render_figure(fig: Figure, fmt: str, *, dpi: float,
                  metadata: Mapping[str, str] | None = None) -> bytes:
    """The bytes of ``fig`` in format ``fmt`` ("png" or "pdf"), rendered in memory.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    fmt : str
        A format matplotlib's ``savefig`` knows.
    dpi : float
        Dots per inch (raster formats; also sets the size of raster parts of a PDF).
    metadata : mapping, optional
        File metadata passed to ``savefig`` (None: matplotlib's defaults).
    """
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=dpi, metadata=None if metadata is None else dict(metadata))
    return buf.getvalue()


def save_figure(fig: Figure, folder: str | Path, stem: str, *,
                formats: Sequence[str] = ("png", "pdf"), dpi: float = 130) -> list[Path]:
    """Write ``fig`` as ``folder/stem.<fmt>`` for each format, each file atomically.

    Every format is rendered in memory before the first file is replaced, so a failure
    while drawing leaves all earlier files as they were. PDFs carry :data:`PDF_METADATA`.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    folder : path
        An existing folder.
    stem : str
        File name without suffix, e.g. ``"corner"``.
    formats : sequence of {"png", "pdf"}
        In the order the files are written (and returned).
    dpi : float

    Returns
    -------
    list of Path
        The files written, in the order of ``formats``.
    """
    folder = Path(folder)
    data = [(folder / f"{stem}.{fmt}",
             render_figure(fig, fmt, dpi=dpi, metadata=PDF_METADATA if fmt == "pdf" else None))
            for fmt in formats]
    for path, content in data:
        atomic_write_bytes(path, content)
    return [path for path, _ in data]
