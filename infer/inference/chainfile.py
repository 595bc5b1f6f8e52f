"""The chain file ``chain.h5``: emcee's HDF5 backend layout, written crash-safely.

The file has emcee's :class:`emcee.backends.HDFBackend` layout (group
``mcmc`` with ``chain``, ``log_prob``, ``accepted`` and the ``iteration``
attribute), so ``emcee.backends.HDFBackend(path, read_only=True)`` reads it.
Next to it, the group ``infer`` holds what a resume needs: the random-number
state after the last saved step, the run hash (catalog + config), the
parameter names and the history of autocorrelation estimates.

Checkpoints never modify ``chain.h5`` in place. A :class:`ChainWriter` keeps a
second complete file, the shadow ``chain.h5.partial``, one checkpoint behind:
it appends the missing rows to the shadow, flushes it to disk and atomically
renames it over ``chain.h5`` (``os.replace``); the file it replaced survives
through a hard link and becomes the next shadow. A process killed at any
moment therefore leaves either the previous or the new complete file (at most
one chunk is lost), and a checkpoint costs O(chunk) instead of a copy of the
whole file. The shadow is scratch: it is discarded when a run starts, and the
first checkpoint of a process (or every checkpoint, where the file system has
no hard links) starts it as a copy of ``chain.h5``.
"""

from __future__ import annotations

import json
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ChainError

__all__ = ["ChainData", "ChainWriter", "create_chain", "append_chunk", "read_chain", "GROUP"]

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
    sampler_coords : ndarray (n_walkers, n_dim) or None
        The walkers after the last step in the coordinates the sampler moves in
        (see :mod:`infer.inference.sampler`), so a resume continues bit for bit;
        None in files that do not store them.
    """

    chain: np.ndarray
    log_prob: np.ndarray
    accepted: np.ndarray
    names: tuple[str, ...]
    run_hash: str
    random_state: tuple | None
    tau_history: list
    info: dict
    sampler_coords: np.ndarray | None = None

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
    _fsync(tmp)
    _commit(tmp, path)


def append_chunk(path: str | Path, *, coords, log_prob, accepted, random_state, tau_history,
                 info: dict | None = None, sampler_coords=None) -> None:
    """Append steps to the chain file crash-safely (copy, append, fsync, replace).

    A one-off checkpoint; a run that checkpoints repeatedly uses a
    :class:`ChainWriter`, which does not copy the file each time.

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
    sampler_coords : ndarray (n_walkers, n_dim), optional
        The walkers after the last step in the sampler's coordinates.
    """
    writer = ChainWriter(path, links=False)
    writer.append(coords=coords, log_prob=log_prob, accepted=accepted, random_state=random_state,
                  tau_history=tau_history, info=info, sampler_coords=sampler_coords)


class ChainWriter:
    """Checkpoints of one run into an existing chain file, O(chunk) each, crash-safe.

    Parameters
    ----------
    path : path
        The chain file (made by :func:`create_chain`).
    links : bool
        Keep the replaced file as the next shadow (needs hard links); False
        copies the whole file at every checkpoint.
    """

    def __init__(self, path: str | Path, *, links: bool = True):
        self.path = Path(path)
        self.shadow = self.path.with_name(self.path.name + ".partial")
        self._previous = self.path.with_name(self.path.name + ".previous")
        self._links = links
        # rows in chain.h5 but not yet in the shadow; None: no usable shadow
        self._behind: list[tuple[np.ndarray, np.ndarray]] | None = None
        for scratch in (self.shadow, self._previous):   # left by a killed run
            _discard(scratch)

    def append(self, *, coords, log_prob, accepted, random_state, tau_history,
               info: dict | None = None, sampler_coords=None) -> None:
        """Append steps (arguments as for :func:`append_chunk`) and commit them."""
        chunk = (np.asarray(coords, dtype=float), np.asarray(log_prob, dtype=float))
        try:
            if self._behind is None:
                shutil.copyfile(self.path, self.shadow)
                self._behind = []
            _write(self.shadow, [*self._behind, chunk], accepted=accepted,
                   random_state=random_state, tau_history=tau_history, info=info,
                   sampler_coords=sampler_coords)
            kept = self._links and _link(self.path, self._previous)
            _commit(self.shadow, self.path)
        except OSError as exc:
            self._behind = None
            _discard(self.shadow)
            _discard(self._previous)
            raise ChainError(f"{self.path}: cannot save the checkpoint ({_reason(exc)}); the chain "
                             f"saved so far is intact: free space or fix permissions, then rerun "
                             f"with --resume") from None
        self._behind = None
        if kept:
            try:
                os.replace(self._previous, self.shadow)
                self._behind = [chunk]
            except OSError:
                _discard(self._previous)

    def close(self) -> None:
        """Remove the shadow (the chain file stays as it is)."""
        self._behind = None
        _discard(self.shadow)
        _discard(self._previous)


def _link(src: Path, dst: Path) -> bool:
    """Hard-link ``dst`` to ``src``; False where the file system cannot."""
    _discard(dst)
    try:
        os.link(src, dst)
    except OSError:
        return False
    return True


def _reason(exc: OSError) -> str:
    return exc.strerror or " ".join(str(exc).split()) or type(exc).__name__


def _discard(tmp: Path) -> None:
    try:
        tmp.unlink()
    except OSError:
        pass


def _write(path: Path, chunks, *, accepted, random_state, tau_history, info, sampler_coords) -> None:
    """Append ``chunks`` [(coords, log_prob), ...] to ``path`` in place and set the state."""
    h5py = _h5py()
    n = sum(c.shape[0] for c, _ in chunks)
    with h5py.File(path, "r+") as f:
        g = f[GROUP]
        it = int(g.attrs["iteration"])
        g["chain"].resize(it + n, axis=0)
        g["log_prob"].resize(it + n, axis=0)
        for coords, log_prob in chunks:
            k = coords.shape[0]
            g["chain"][it:it + k] = coords
            g["log_prob"][it:it + k] = log_prob
            it += k
        g["accepted"][:] = accepted
        g.attrs["iteration"] = it
        m = f[_META]
        name, keys, pos, has_gauss, cached = random_state
        _put(m, "rng_keys", np.asarray(keys, dtype=np.uint32))
        m.attrs["rng"] = json.dumps([str(name), int(pos), int(has_gauss), float(cached)])
        m.attrs["tau_history"] = json.dumps(tau_history)
        if sampler_coords is not None:
            _put(m, "sampler_coords", np.asarray(sampler_coords, dtype=np.float64))
        if info is not None:
            m.attrs["info"] = json.dumps(info)
    _fsync(path)


def _put(group, name: str, value: np.ndarray) -> None:
    """Write a small dataset, in place when its shape is unchanged."""
    if name in group and group[name].shape == value.shape and group[name].dtype == value.dtype:
        group[name][...] = value
        return
    if name in group:
        del group[name]
    group.create_dataset(name, data=value)


def _fsync(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _commit(tmp: Path, path: Path) -> None:
    """Atomically put the complete, flushed file ``tmp`` in place of ``path``."""
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
            sampler_coords = (np.asarray(m["sampler_coords"][:], dtype=float)
                              if "sampler_coords" in m else None)
    except (OSError, KeyError, ValueError, TypeError) as exc:
        raise ChainError(f"{path}: unreadable or corrupted chain file ({type(exc).__name__}: "
                         f"{' '.join(str(exc).split())}); delete the folder and fit again") from None
    if chain.ndim != 3 or chain.shape[2] != len(names) or log_prob.shape != chain.shape[:2]:
        raise ChainError(f"{path}: chain file has inconsistent shapes; delete the folder and fit again")
    return ChainData(chain, log_prob, accepted, names, run_hash, rstate, tau_history, info,
                     sampler_coords)
