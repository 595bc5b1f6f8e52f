"""The regions of a survey: read from the catalogs, named, seeded and given their priors.

* :func:`region_seed` -- each region's seed, from the run seed and the region name;
* :func:`folder_names` -- file-system-safe, unique folder names;
* :func:`region_config` -- the config one region is fitted with (seed, local conditions);
* :func:`read_regions` -- every region of the catalogs, or the error that stopped it.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from ...errors import InferError
from ...inference.config import RunConfig
from ...inference.priors import PARAMETERS, Prior, parse_prior
from .table import TABLE_NAMES

__all__ = ["RegionEntry", "region_seed", "folder_names", "region_config", "read_regions",
           "one_line"]


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
    from ...catalog.regions import read_catalog

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
    """Each group of a catalog validated on its own (after the whole file failed).

    The file is read once; each group's rows are validated from memory
    (:meth:`~infer.catalog.read.RawCatalog.subset`), so messages name the file itself.
    """
    from ...catalog.metadata import check_overrides
    from ...catalog.read import read_table
    from ...catalog.regions import regions_from_table

    src = str(path)
    whole = [RegionEntry(path.stem, src, error=one_line(first))]
    try:
        overrides = check_overrides(src, dict(config.catalog))
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
    for group in dict.fromkeys(labels.tolist()):
        rows = np.flatnonzero(labels == group)
        ov = {key: v for key, v in overrides.items() if key != "units"}
        if isinstance(exclude, (list, tuple)):
            ov["exclude"] = [e for e in exclude if str(e).strip() in set(ids[rows])]
        try:
            [region] = regions_from_table(raw.subset(rows), overrides=ov,
                                          spacing=config.model.spacing)
        except InferError as exc:
            msg = one_line(exc)
            if "row" in msg:
                msg += f" (rows counted within group {group!r})"
            out.append(RegionEntry(group, src, error=msg))
            continue
        except Exception:  # noqa: BLE001 - the group could not be isolated: report the file
            return whole
        out.append(RegionEntry(group, src, region, data))
    if all(not e.error for e in out):  # the file's problem is not one group's: report the file
        return whole
    return out


def one_line(exc: BaseException) -> str:
    """An exception's message on one line (its type name when it has none)."""
    return " ".join(str(exc).split()) or type(exc).__name__
