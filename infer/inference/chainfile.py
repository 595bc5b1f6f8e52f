"""The chain file ``chain.h5``: emcee's HDF5 backend layout, written crash-safely.

The file has emcee's :class:`emcee.backends.HDFBackend` layout (group
``mcmc`` with ``chain``, ``log_prob``, ``accepted`` and the ``iteration``
attribute), so ``emcee.backends.HDFBackend(path, read_only=True)`` reads it.
Next to it, the group ``infer`` holds what a resume needs: the random-number
state after the last saved step, the run hash (catalog + config), the
parameter names and the history of autocorrelation estimates.

Each checkpoint appends one chunk of steps to a copy of the file and then
atomically replaces the original (``os.replace``), so a process killed at any
moment leaves either the previous or the new complete file: at most one chunk
is lost.
"""

from __future__ import annotations

import json
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ChainError

__all__ = ["ChainData", "create_chain", "append_chunk", "read_chain", "GROUP"]

GROUP = "mcmc"
_META = "infer"


@dataclass(frozen=True)
class ChainData:
    """Contents of a chain file.

    Attributes
    ----------
    chain : ndarray (n_steps, n_walkers, n_dim)
        ln of the sampled parameters.
    log_prob : ndarray (n_steps, n_walkers)
    accepted : ndarray (n_walkers,)
        Accepted proposals per walker.
    names : tuple of str
    run_hash : str
    random_state : tuple or None
        numpy RandomState state after the last step.
    tau_history : list of (steps, [tau per parameter])
    info : dict
        Free-form metadata (seed, moves, MAP point ...).
    """

    chain: np.ndarray
    log_prob: np.ndarray
    accepted: np.ndarray
    names: tuple[str, ...]
    run_hash: str
    random_state: tuple | None
    tau_history: list
    info: dict

    @property
    def iteration(self) -> int:
        return int(self.chain.shape[0])


def _h5py():
    import h5py

    return h5py


def create_chain(path: str | Path, *, names, n_walkers: int, run_hash: str, info: dict) -> None:
    """Write an empty chain file (atomically)."""
    path = Path(path)
    tmp = path.with_name(path.name + ".partial")
    try:
        _create(path, tmp, names=names, n_walkers=n_walkers, run_hash=run_hash, info=info)
    except OSError as exc:
        _discard(tmp)
        raise ChainError(f"{path}: cannot create the chain file ({_reason(exc)}); choose another "
                         f"--out folder or free some space") from None


def _create(path: Path, tmp: Path, *, names, n_walkers: int, run_hash: str, info: dict) -> None:
    h5py = _h5py()
    ndim = len(names)
    with h5py.File(tmp, "w") as f:
        g = f.create_group(GROUP)
        import emcee

        g.attrs["version"] = emcee.__version__
        g.attrs["nwalkers"] = n_walkers
        g.attrs["ndim"] = ndim
        g.attrs["has_blobs"] = False
        g.attrs["iteration"] = 0
        g.create_dataset("accepted", data=np.zeros(n_walkers))
        g.create_dataset("chain", (0, n_walkers, ndim), maxshape=(None, n_walkers, ndim),
                         dtype=np.float64, chunks=(64, n_walkers, ndim))
        g.create_dataset("log_prob", (0, n_walkers), maxshape=(None, n_walkers),
                         dtype=np.float64, chunks=(64, n_walkers))
        m = f.create_group(_META)
        m.attrs["names"] = json.dumps(list(names))
        m.attrs["run_hash"] = run_hash
        m.attrs["info"] = json.dumps(info)
        m.attrs["tau_history"] = "[]"
    _commit(tmp, path)


def append_chunk(path: str | Path, *, coords, log_prob, accepted, random_state, tau_history,
                 info: dict | None = None) -> None:
    """Append steps to the chain file crash-safely (copy, append, fsync, replace).

    Parameters
    ----------
    coords : ndarray (n, n_walkers, n_dim)
    log_prob : ndarray (n, n_walkers)
    accepted : ndarray (n_walkers,)
        Total accepted counts after these steps.
    random_state : tuple
        numpy RandomState state after the last of these steps.
    tau_history : list
    info : dict, optional
        Replaces the stored info.
    """
    path = Path(path)
    tmp = path.with_name(path.name + ".partial")
    try:
        _append(path, tmp, coords=coords, log_prob=log_prob, accepted=accepted,
                random_state=random_state, tau_history=tau_history, info=info)
    except OSError as exc:
        _discard(tmp)
        raise ChainError(f"{path}: cannot save the checkpoint ({_reason(exc)}); the chain saved so far "
                         f"is intact: free space or fix permissions, then rerun with --resume") from None


def _reason(exc: OSError) -> str:
    return exc.strerror or " ".join(str(exc).split()) or type(exc).__name__


def _discard(tmp: Path) -> None:
    try:
        tmp.unlink()
    except OSError:
        pass


def _append(path: Path, tmp: Path, *, coords, log_prob, accepted, random_state, tau_history, info):
    h5py = _h5py()
    shutil.copyfile(path, tmp)
    coords = np.asarray(coords, dtype=float)
    log_prob = np.asarray(log_prob, dtype=float)
    n = coords.shape[0]
    with h5py.File(tmp, "r+") as f:
        g = f[GROUP]
        it = int(g.attrs["iteration"])
        g["chain"].resize(it + n, axis=0)
        g["log_prob"].resize(it + n, axis=0)
        g["chain"][it:it + n] = coords
        g["log_prob"][it:it + n] = log_prob
        g["accepted"][:] = accepted
        g.attrs["iteration"] = it + n
        m = f[_META]
        name, keys, pos, has_gauss, cached = random_state
        for key in ("rng_keys",):
            if key in m:
                del m[key]
        m.create_dataset("rng_keys", data=np.asarray(keys, dtype=np.uint32))
        m.attrs["rng"] = json.dumps([str(name), int(pos), int(has_gauss), float(cached)])
        m.attrs["tau_history"] = json.dumps(tau_history)
        if info is not None:
            m.attrs["info"] = json.dumps(info)
    _commit(tmp, path)


def _commit(tmp: Path, path: Path) -> None:
    fd = os.open(tmp, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
    os.replace(tmp, path)
    try:
        dfd = os.open(path.parent, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:  # some file systems refuse fsync on folders
        pass


def read_chain(path: str | Path) -> ChainData:
    """Read a chain file.

    Raises
    ------
    ChainError
        If the file is missing, not HDF5, or not a chain written by this package.
    """
    path = Path(path)
    if not path.is_file():
        raise ChainError(f"{path}: no chain file; run `infer fit` first")
    h5py = _h5py()
    try:
        with h5py.File(path, "r") as f:
            g = f[GROUP]
            m = f[_META]
            it = int(g.attrs["iteration"])
            chain = np.asarray(g["chain"][:it])
            log_prob = np.asarray(g["log_prob"][:it])
            accepted = np.asarray(g["accepted"][:])
            names = tuple(json.loads(m.attrs["names"]))
            run_hash = str(m.attrs["run_hash"])
            info = json.loads(m.attrs["info"])
            tau_history = json.loads(m.attrs["tau_history"])
            if "rng_keys" in m:
                name, pos, has_gauss, cached = json.loads(m.attrs["rng"])
                rstate = (name, np.asarray(m["rng_keys"][:], dtype=np.uint32), pos, has_gauss, cached)
            else:
                rstate = None
    except (OSError, KeyError, ValueError, TypeError) as exc:
        raise ChainError(f"{path}: unreadable or corrupted chain file ({type(exc).__name__}: "
                         f"{' '.join(str(exc).split())}); delete the folder and fit again") from None
    if chain.ndim != 3 or chain.shape[2] != len(names) or log_prob.shape != chain.shape[:2]:
        raise ChainError(f"{path}: chain file has inconsistent shapes; delete the folder and fit again")
    return ChainData(chain, log_prob, accepted, names, run_hash, rstate, tau_history, info)
