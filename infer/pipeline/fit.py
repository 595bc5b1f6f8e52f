"""One fit end to end: catalog + config -> output folder (chain, summaries, diagnostics, figures).

Used by ``infer fit`` and by each task of ``infer survey``.
"""

from __future__ import annotations

import hashlib
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InferError
from ..inference.config import RunConfig
from ..inference.model import Model, Observations, build_model
from ..inference.posterior import (
    Posterior,
    diagnostics,
    identifiability_notes,
    posterior_from_chain,
    summary_table,
    write_summary,
)
from ..inference.sampler import SampleResult, run_sampler
from ..outputs.files import RUN_FILE, atomic_write_text, prepare_out_dir, write_json

__all__ = ["FitOutcome", "fit_region", "fit_catalog", "run_hash", "load_fit", "select_region",
           "finish_outputs"]


@dataclass(frozen=True)
class FitOutcome:
    """What a fit produced."""

    out_dir: Path
    model: Model
    posterior: Posterior
    sample: SampleResult
    summary: object
    notes: list
    diagnostics: dict


def run_hash(catalog_bytes: bytes, region: str, config: RunConfig) -> str:
    """Hash of what determines a run: the catalog file, the region, the config (not max_steps)."""
    h = hashlib.sha256()
    h.update(catalog_bytes)
    h.update(b"\0" + region.encode() + b"\0")
    h.update(config.digest().encode())
    return h.hexdigest()


def select_region(regions, name: str | None):
    """The region to fit: the only one, or the one named ``name``."""
    if name is None:
        if len(regions) > 1:
            names = ", ".join(r.name for r in regions)
            raise InferError(f"the catalog holds {len(regions)} regions ({names}); pick one with "
                             f"--region NAME, or fit them all with `infer survey`")
        return regions[0]
    for r in regions:
        if r.name == name:
            return r
    raise InferError(f"--region {name}: no such region; the catalog has "
                     f"{', '.join(r.name for r in regions)}")


def fit_catalog(catalog: str | Path, config: RunConfig, out_dir: str | Path, *, resume: bool = False,
                region: str | None = None, progress: bool = True, plots: bool = True) -> FitOutcome:
    """Read a catalog, then :func:`fit_region` its (selected) region."""
    from ..catalog.regions import read_catalog

    catalog = Path(catalog)
    regions = read_catalog(catalog, overrides=dict(config.catalog), spacing=config.model.spacing)
    reg = select_region(regions, region)
    return fit_region(reg, config, out_dir, catalog_bytes=catalog.read_bytes(), resume=resume,
                      progress=progress, plots=plots)


def fit_region(region, config: RunConfig, out_dir: str | Path, *, catalog_bytes: bytes,
               resume: bool = False, progress: bool = True, plots: bool = True) -> FitOutcome:
    """Fit one region and write the complete output folder.

    The chain is checkpointed as it runs; everything else is written at the
    end, each file atomically. If the fit fails before anything useful was
    saved and the folder was created by this call, the folder is removed.
    """
    out = Path(out_dir)
    rh = run_hash(catalog_bytes, region.name, config)
    model = build_model(config, Observations.from_region(region))   # refuse bad input first
    top = out                       # the outermost folder that prepare_out_dir may create
    while not top.parent.exists() and top.parent != top:
        top = top.parent
    created = prepare_out_dir(out, run_hash=rh, resume=resume)
    try:
        write_json(out / RUN_FILE, {"run_hash": rh, "region": region.name,
                                    "source": str(Path(region.source).resolve())})
        atomic_write_text(out / "config.toml", config.to_toml())
        sample = run_sampler(model, names=model.names, prior_draws=model.prior_sample,
                             options=config.sampler, chain_path=out / "chain.h5", run_hash=rh,
                             resume=resume, progress=progress,
                             info={"region": region.name, "source": str(region.source)})
    except BaseException:
        if created and not (out / "chain.h5").exists():
            shutil.rmtree(top, ignore_errors=True)   # with the parents made for it
        raise
    return finish_outputs(out, model, sample, region=region, config=config, plots=plots)


def finish_outputs(out: Path, model: Model, sample: SampleResult, *, region, config: RunConfig,
                   plots: bool = True) -> FitOutcome:
    """Posterior, summaries, diagnostics, pointwise log-likelihood and figures from a chain."""
    post = posterior_from_chain(model, sample.chain, sample.tau)
    table = summary_table(post, model)
    notes = identifiability_notes(post, model)
    if not sample.converged:
        notes.insert(0, f"NOT CONVERGED: the chain reached max_steps = {config.sampler.max_steps} "
                        f"before {config.sampler.tau_factor:g} autocorrelation times; treat the "
                        f"intervals as provisional and rerun with --resume --max-steps N.")
    header = {
        "region": region.name,
        "catalog": str(region.source),
        "diffusion": config.model.diffusion,
        "fragment_mass_convention": ("Sigma * lambda_m^2" if config.model.fragment_shape == "square"
                                     else "Sigma * pi * (lambda_m / 2)^2"),
        "spacing": config.model.spacing,
        "selection": model.selection_text(),
        "derived_quantities": _derived_where(config),
        "measurements": "; ".join(m.describe() for m in model.measurements) or "none",
        "converged": bool(sample.converged),
        "intervals": "central posterior quantiles: p16-p84 (68%), p02_5-p97_5 (95%)",
    }
    write_summary(table, notes, out, header=header)
    diag = diagnostics(chain=sample.chain, tau=sample.tau, converged=sample.converged, post=post,
                       options=config.sampler, wall_time=sample.wall_time,
                       resumed_from=sample.resumed_from, run_hash=sample.chain.run_hash,
                       extra={"region": region.name, "n_clumps": len(region.ids),
                              "n_spacings": model.obs.n_spacings,
                              "map": _map_values(model, sample)})
    write_json(out / "diagnostics.json", diag)
    _write_pointwise(out, model, post)
    if plots:
        from ..outputs.figures import write_figures

        write_figures(out, post=post, model=model, region=region)
    return FitOutcome(out, model, post, sample, table, notes, diag)


def _derived_where(config: RunConfig) -> str:
    """Where the derived quantities of the summary hold (one radius, or the reference radius)."""
    p = config.priors
    if config.model.profile == "power-law":
        return (f"at reference_radius = {p['reference_radius'].value:.4g} au (power-law profile; "
                f"the radial figure shows them against radius)")
    if "radius" in p and p["radius"].fixed:
        return f"at radius = {p['radius'].value:.4g} au (local conditions)"
    return "for the local conditions of the priors"


def _map_values(model: Model, sample: SampleResult) -> dict[str, float]:
    """The maximum-a-posteriori parameters found before sampling, in their canonical units."""
    th = np.asarray(sample.chain.info.get("map", [np.nan] * model.ndim), dtype=float)
    if th.size != model.ndim:
        return {}
    v = model.values(th[None, :])
    return {n: float(v[n][0]) for n in model.names}


def _write_pointwise(out: Path, model: Model, post: Posterior, n_max: int = 2000) -> None:
    """pointwise.npz: per-observation log-likelihood of (up to n_max) posterior samples."""
    import io

    from ..outputs.files import atomic_write_bytes

    th = post.theta[:: max(1, post.n // n_max)][:n_max]
    ll = model.pointwise_loglike(th)
    buf = io.BytesIO()
    np.savez(buf, loglike=ll, theta=th, labels=np.array(model.obs.labels, dtype=str),
             names=np.array(model.names, dtype=str))
    atomic_write_bytes(out / "pointwise.npz", buf.getvalue())


def load_fit(out_dir: str | Path):
    """Reload a finished (or interrupted) fit folder: (config, model, region, chain data, tau).

    Raises
    ------
    ChainError
        If the folder, its config or its chain is missing or corrupted.
    """
    from ..catalog.regions import read_catalog
    from ..errors import ChainError
    from ..inference.chainfile import read_chain
    from ..inference.config import load_config
    from ..inference.sampler import autocorr_times

    out = Path(out_dir)
    if not out.is_dir():
        raise ChainError(f"{out}: no such fit folder")
    for f in ("config.toml", "chain.h5", RUN_FILE):
        if not (out / f).exists():
            raise ChainError(f"{out}: {f} is missing; this is not a complete fit folder "
                             f"(run `infer fit` again)")
    try:
        config = load_config(out / "config.toml")
    except InferError as exc:
        raise ChainError(f"{out}: the saved config is unreadable ({exc})") from None
    chain = read_chain(out / "chain.h5")
    import json

    try:
        run = json.loads((out / RUN_FILE).read_text())
        source = Path(run["source"])
        region_name = run["region"]
    except (OSError, ValueError, KeyError, TypeError):
        raise ChainError(f"{out}: {RUN_FILE} is unreadable") from None
    if not source.exists():
        raise ChainError(f"{out}: the catalog {source} it was fitted to is no longer there")
    regions = read_catalog(source, overrides=dict(config.catalog), spacing=config.model.spacing)
    region = select_region(regions, region_name)
    if run_hash(source.read_bytes(), region.name, config) != chain.run_hash:
        raise ChainError(f"{out}: the catalog {source} changed since the fit; fit again")
    model = build_model(config, Observations.from_region(region))
    if chain.iteration == 0:
        raise ChainError(f"{out}: the chain is empty; resume the fit with `infer fit ... --resume`")
    tau = (np.asarray(chain.tau_history[-1][1], dtype=float) if chain.tau_history
           else autocorr_times(chain.chain))
    return config, model, region, chain, tau
