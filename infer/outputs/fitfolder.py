"""The fit folder: the name of every file a fit leaves behind, and reading them back.

:class:`FitFolder` owns the layout of an ``infer fit`` output folder, in the way emcee's HDF5
backend owns the layout of its file: every other module asks it for a path or for the content
of a file instead of spelling a file name. The file names are contracts (README, "Stable
names"); they are listed once, below.

* run.json -- what the folder holds (:func:`run_hash` of catalog, region and config);
* config.toml -- the run config as fitted; chain.h5 -- the chain (:mod:`infer.inference.chainfile`);
* summary.ecsv / .md / .tex, diagnostics.json, pointwise.npz -- written when the chain is done;
* corner, predictive (and radial) as .pdf / .png; spectrum_band.png, report.pdf / .md and
  compare.md -- written by ``infer report``.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np

from ..errors import ChainError, InferError
from .files import atomic_write_bytes, atomic_write_text, write_json

if TYPE_CHECKING:  # pragma: no cover - typing only
    from astropy.table import QTable

    from ..catalog.regions import Region
    from ..inference.chainfile import ChainData
    from ..inference.config import RunConfig
    from ..inference.model import Model
    from ..inference.posterior import Posterior

__all__ = ["FitFolder", "open_fit", "LoadedFit", "RunInfo", "Pointwise", "run_hash", "RUN_FILE",
           "CONFIG_FILE", "CHAIN_FILE", "SUMMARY_FILES", "DIAGNOSTICS_FILE", "POINTWISE_FILE",
           "FIGURE_STEMS", "RADIAL_STEM", "BAND_FILE", "REPORT_FILES", "COMPARE_FILE",
           "SUMMARY_STATS"]

#: small JSON file identifying the run a folder holds (catalog + config hash)
RUN_FILE = "run.json"
CONFIG_FILE = "config.toml"
CHAIN_FILE = "chain.h5"
#: the summary table and its Markdown and LaTeX renderings
SUMMARY_FILES = ("summary.ecsv", "summary.md", "summary.tex")
DIAGNOSTICS_FILE = "diagnostics.json"
POINTWISE_FILE = "pointwise.npz"
#: base names of the fit's figures (one file per format); radial only for a power-law profile
FIGURE_STEMS = ("corner", "predictive")
RADIAL_STEM = "radial"
#: the growth-rate band figure of ``infer report``, referenced by report.md
BAND_FILE = "spectrum_band.png"
REPORT_FILES = ("report.pdf", "report.md")
COMPARE_FILE = "compare.md"
#: statistic columns of summary.ecsv, in file order
SUMMARY_STATS = ("median", "p16", "p84", "p02_5", "p97_5")


def run_hash(catalog_bytes: bytes, region: str, config: RunConfig) -> str:
    """Hash of what determines a run: the catalog file, the region, the config (not max_steps).

    Parameters
    ----------
    catalog_bytes : bytes
        The catalog file's content.
    region : str
        The region name.
    config : RunConfig

    Returns
    -------
    str
        64 hex digits (SHA-256).
    """
    h = hashlib.sha256()
    h.update(catalog_bytes)
    h.update(b"\0" + region.encode() + b"\0")
    h.update(config.digest().encode())
    return h.hexdigest()


@dataclass(frozen=True)
class RunInfo:
    """The content of run.json: which run a folder holds."""

    run_hash: str | None
    region: str
    source: Path


@dataclass(frozen=True)
class Pointwise:
    """The content of pointwise.npz.

    Attributes
    ----------
    loglike : ndarray (n_samples, n_obs)
        Log-likelihood of each observation for posterior samples.
    labels : tuple of str, length n_obs
        The observations (``spacing:<a>-<b>``, ``mass:<id>``), in order.
    theta : ndarray (n_samples, n_dim) or None
        ln of the sampled parameters of those samples.
    names : tuple of str
        The sampled parameters (empty when the file does not say).
    """

    loglike: np.ndarray
    labels: tuple[str, ...]
    theta: np.ndarray | None = None
    names: tuple[str, ...] = ()


class LoadedFit(NamedTuple):
    """A fit reassembled from its folder; unpacks as ``config, model, region, chain, tau``."""

    config: RunConfig
    model: Model
    region: Region
    chain: ChainData
    tau: np.ndarray

    def posterior(self) -> Posterior:
        """Burnt-in, thinned posterior samples with derived quantities."""
        from ..inference.posterior import posterior_from_chain

        return posterior_from_chain(self.model, self.chain, self.tau)


@dataclass(frozen=True)
class FitFolder:
    """An ``infer fit`` output folder: the paths of its files and readers for each.

    Readers raise :class:`~infer.errors.ChainError` (a user error) naming the folder and the
    file when it is missing or unreadable.

    Parameters
    ----------
    path : str or Path
    """

    path: Path

    def __post_init__(self) -> None:
        object.__setattr__(self, "path", Path(self.path))

    # ------------------------------------------------------------- paths ----
    run_file = property(lambda self: self.path / RUN_FILE, doc="run.json")
    config_file = property(lambda self: self.path / CONFIG_FILE, doc="config.toml")
    chain_file = property(lambda self: self.path / CHAIN_FILE, doc="chain.h5")
    summary_file = property(lambda self: self.path / SUMMARY_FILES[0], doc="summary.ecsv")
    summary_files = property(lambda self: tuple(self.path / n for n in SUMMARY_FILES),
                             doc="summary.ecsv, summary.md, summary.tex")
    diagnostics_file = property(lambda self: self.path / DIAGNOSTICS_FILE, doc="diagnostics.json")
    pointwise_file = property(lambda self: self.path / POINTWISE_FILE, doc="pointwise.npz")
    band_file = property(lambda self: self.path / BAND_FILE, doc="spectrum_band.png")
    report_files = property(lambda self: tuple(self.path / n for n in REPORT_FILES),
                            doc="report.pdf, report.md")
    compare_file = property(lambda self: self.path / COMPARE_FILE, doc="compare.md")

    def figure(self, stem: str, fmt: str = "png") -> Path:
        """The file of one figure, e.g. ``figure("corner", "pdf")``."""
        return self.path / f"{stem}.{fmt}"

    def figure_stems(self, *, radial: bool) -> tuple[str, ...]:
        """The fit's figures: corner, predictive, and radial for a power-law profile."""
        return (*FIGURE_STEMS, RADIAL_STEM) if radial else FIGURE_STEMS

    # ----------------------------------------------------------- states ----
    def exists(self) -> bool:
        return self.path.is_dir()

    def has_chain(self) -> bool:
        return self.chain_file.exists()

    def is_complete(self) -> bool:
        """Whether the files written at the end of a fit are there (summary, chain, config)."""
        return all(p.exists() for p in (self.summary_file, self.chain_file, self.config_file))

    def held_run_hash(self) -> str | None:
        """The run hash in run.json, or None when the file is missing or unreadable."""
        try:
            held = json.loads(self.run_file.read_text()).get("run_hash")
        except (OSError, ValueError, AttributeError):
            return None
        return held if isinstance(held, str) else None

    def prepare(self, *, run_hash: str, resume: bool) -> bool:
        """Check that the folder may receive this run; create it if needed.

        Returns
        -------
        bool
            True when the folder was created (so a failed fit may remove it).

        Raises
        ------
        ChainError
            The folder holds another run, holds other files, or the user asked to
            resume a run that is not there.
        """
        out = self.path
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
        if not self.run_file.exists():
            raise ChainError(f"--out {out}: the folder is not empty and holds no fit of this "
                             f"package; choose a new or empty folder")
        try:
            held = json.loads(self.run_file.read_text()).get("run_hash")
        except (OSError, ValueError, AttributeError):
            raise ChainError(f"--out {out}: {RUN_FILE} is unreadable; choose a new folder") from None
        if held != run_hash:
            raise ChainError(f"--out {out}: the folder holds a different run (other catalog, "
                             f"config or seed); choose another --out folder")
        if not resume and self.has_chain():
            raise ChainError(f"--out {out}: the folder already holds this run; add --resume to "
                             f"continue it, or choose another --out folder")
        if not os.access(out, os.W_OK):
            raise InferError(f"--out {out}: the folder is not writable")
        return False

    # ---------------------------------------------------------- readers ----
    def run_info(self) -> RunInfo:
        """run.json: the run hash, the region name and the catalog file."""
        try:
            run = json.loads(self.run_file.read_text())
            held = run.get("run_hash")
            return RunInfo(held if isinstance(held, str) else None, str(run["region"]),
                           Path(run["source"]))
        except (OSError, ValueError, KeyError, TypeError, AttributeError):
            raise ChainError(f"{self.path}: {RUN_FILE} is missing or unreadable; not a fit "
                             f"folder") from None

    def diagnostics(self) -> dict[str, Any]:
        """diagnostics.json as a dict (see :func:`infer.inference.posterior.diagnostics`)."""
        try:
            d = json.loads(self.diagnostics_file.read_text())
        except (OSError, ValueError):
            d = None
        if not isinstance(d, dict):
            raise ChainError(f"{self.path}: {DIAGNOSTICS_FILE} is missing or unreadable; run "
                             f"`infer fit ... --resume` to finish the fit")
        return d

    def config(self) -> RunConfig:
        """The run config the folder was fitted with."""
        from ..inference.config import load_config

        try:
            return load_config(self.config_file)
        except InferError as exc:
            raise ChainError(f"{self.path}: the saved config is unreadable ({exc})") from None

    def chain(self) -> ChainData:
        """The chain (:func:`infer.inference.chainfile.read_chain`)."""
        from ..inference.chainfile import read_chain

        return read_chain(self.chain_file)

    def summary_table(self):
        """summary.ecsv as written: one row per quantity, unit as a string (astropy Table)."""
        from astropy.table import Table

        try:
            return Table.read(self.summary_file, format="ascii.ecsv")
        except (OSError, ValueError, KeyError, TypeError) as exc:
            raise ChainError(f"{self.summary_file}: unreadable ({' '.join(str(exc).split())}); "
                             f"refit the folder") from None

    def summary(self) -> QTable:
        """The posterior summary as a QTable with units.

        Returns
        -------
        astropy.table.QTable
            One row per statistic (column ``stat``: median, p16, p84, p02_5, p97_5; indexed,
            so ``summary.loc["median"]``), one Quantity column per summary quantity in its
            unit from :mod:`infer.quantities` (``dex`` for the scatters). ``meta`` holds the
            file's header and ``kind`` (name -> "sampled" | "fixed" | "derived").

        Raises
        ------
        ChainError
            The file is missing or unreadable, or names a quantity or unit this version
            does not know.
        """
        from astropy.table import QTable

        from ..quantities import QUANTITIES

        raw = self.summary_table()
        t = QTable(meta=dict(raw.meta))
        t["stat"] = list(SUMMARY_STATS)
        kinds = {}
        for r in raw:
            name = str(r["name"])
            written = "" if np.ma.is_masked(r["unit"]) else str(r["unit"])
            q = QUANTITIES.get(name)
            if q is None or q.unit != written:
                raise ChainError(f"{self.summary_file}: quantity {name!r} in unit {written!r} is "
                                 f"not one this version writes; refit the folder")
            t[name] = np.array([float(r[k]) for k in SUMMARY_STATS]) * q.column_unit
            kinds[name] = str(r["kind"])
        t.meta["kind"] = kinds
        t.add_index("stat")
        return t

    def pointwise(self) -> Pointwise:
        """pointwise.npz: per-observation log-likelihood of posterior samples."""
        p = self.pointwise_file
        if not p.is_file():
            raise ChainError(f"{self.path}: {POINTWISE_FILE} is missing; this is not a finished "
                             f"fit folder (run `infer fit` to the end)")
        try:
            with np.load(p, allow_pickle=False) as z:
                ll = np.asarray(z["loglike"], dtype=float)
                labels = tuple(str(x) for x in z["labels"])
                theta = np.asarray(z["theta"], dtype=float) if "theta" in z.files else None
                names = tuple(str(x) for x in z["names"]) if "names" in z.files else ()
        except (OSError, KeyError, ValueError, TypeError) as exc:
            raise ChainError(f"{p}: unreadable ({type(exc).__name__}); refit the folder") from None
        if ll.ndim != 2 or ll.shape[1] != len(labels):
            raise ChainError(f"{p}: inconsistent shapes; refit the folder")
        return Pointwise(ll, labels, theta, names)

    def load(self) -> LoadedFit:
        """Reassemble a finished (or interrupted) fit: config, model, region, chain, tau.

        The catalog is read again from the path in run.json and must be unchanged.

        Raises
        ------
        ChainError
            If the folder, its config or its chain is missing or corrupted, the catalog is
            gone or changed, or the chain is empty.
        """
        from ..catalog.regions import read_catalog, select_region
        from ..inference.model import Observations, build_model
        from ..inference.sampler import autocorr_times

        out = self.path
        if not out.is_dir():
            raise ChainError(f"{out}: no such fit folder")
        for f in (self.config_file, self.chain_file, self.run_file):
            if not f.exists():
                raise ChainError(f"{out}: {f.name} is missing; this is not a complete fit folder "
                                 f"(run `infer fit` again)")
        config = self.config()
        chain = self.chain()
        try:
            run = self.run_info()
        except ChainError:
            raise ChainError(f"{out}: {RUN_FILE} is unreadable") from None
        if not run.source.exists():
            raise ChainError(f"{out}: the catalog {run.source} it was fitted to is no longer there")
        regions = read_catalog(run.source, overrides=dict(config.catalog),
                               spacing=config.model.spacing)
        region = select_region(regions, run.region)
        if run_hash(run.source.read_bytes(), region.name, config) != chain.run_hash:
            raise ChainError(f"{out}: the catalog {run.source} changed since the fit; fit again")
        model = build_model(config, Observations.from_region(region))
        if chain.iteration == 0:
            raise ChainError(f"{out}: the chain is empty; resume the fit with `infer fit ... "
                             f"--resume`")
        tau = (np.asarray(chain.tau_history[-1][1], dtype=float) if chain.tau_history
               else autocorr_times(chain.chain))
        return LoadedFit(config, model, region, chain, tau)

    # ---------------------------------------------------------- writers ----
    def write_run_info(self, *, run_hash: str, region: str, source: str | Path) -> None:
        """run.json (atomically); ``source`` is stored as an absolute path."""
        write_json(self.run_file, {"run_hash": run_hash, "region": region,
                                   "source": str(Path(source).resolve())})

    def write_config(self, config: RunConfig) -> None:
        """config.toml (atomically)."""
        atomic_write_text(self.config_file, config.to_toml())

    def write_diagnostics(self, diagnostics: dict[str, Any]) -> None:
        """diagnostics.json (atomically; NaN and inf become null)."""
        write_json(self.diagnostics_file, diagnostics)

    def write_pointwise(self, *, loglike: np.ndarray, theta: np.ndarray, labels, names) -> None:
        """pointwise.npz (atomically): arrays loglike, theta, labels, names."""
        buf = io.BytesIO()
        np.savez(buf, loglike=loglike, theta=theta, labels=np.array(labels, dtype=str),
                 names=np.array(names, dtype=str))
        atomic_write_bytes(self.pointwise_file, buf.getvalue())


def open_fit(path: str | Path) -> FitFolder:
    """The fit folder at ``path`` (nothing is read until asked).

    Examples
    --------
    >>> fit = open_fit("fit-out")                              # doctest: +SKIP
    >>> fit.summary().loc["median"]["field"]                   # doctest: +SKIP
    <Quantity 49.9 mG>
    """
    return FitFolder(Path(path))
