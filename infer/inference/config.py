"""The run configuration (TOML): model options, catalog metadata, priors, sampler settings.

Read with the standard library's :mod:`tomllib`; every key is checked, unknown
keys are errors (:class:`~infer.errors.ConfigError` naming the key), and the
fully resolved configuration is written back with ``tomli_w`` into the output
folder of a fit.
"""

from __future__ import annotations

import hashlib
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import astropy.units as u
import numpy as np

from ..constants import MU_GAS
from ..errors import ConfigError
from ..units import parse_quantity
from .measurements import Measurement, parse_measurements
from .parameters import LINEAR, parse_signed_prior
from .priors import PARAMETERS, Prior, parse_prior

__all__ = [
    "ModelOptions",
    "SamplerOptions",
    "RunConfig",
    "load_config",
    "parse_config",
    "catalog_options",
    "DIFFUSION_MODES",
]

DIFFUSION_MODES = ("ionization", "free", "ideal")
#: values of [model] selection
SELECTION_MODES = ("auto", "off")
#: values of [model] profile
PROFILES = ("local", "power-law")
#: priors of the radial profile (profile = "power-law" only)
PROFILE_PRIORS = ("reference_radius", "surface_density_index", "temperature_index",
                  "mass_to_flux_index", "ionization_index")
#: more walkers than this is a typo, not a run (the sampler's arrays would not fit in memory)
MAX_WALKERS = 100_000
#: the sampler allocates check_every steps of the chain at once
MAX_CHECK_EVERY = 100_000

def _catalog_keys() -> tuple[str, ...]:
    from ..catalog.metadata import OVERRIDE_KEYS

    return tuple(OVERRIDE_KEYS)


#: priors used when the config does not mention them
DEFAULT_PRIORS: dict[str, Any] = {
    "external_pressure": {"value": "0 dyn / cm2"},
    "spacing_scatter": {"dist": "halfnormal", "scale_dex": 0.2},
    "mass_scatter": {"dist": "halfnormal", "scale_dex": 0.3},
    "spacing_calibration": {"value": 1.0},
    "mass_calibration": {"value": 1.0},
}


@dataclass(frozen=True)
class ModelOptions:
    """The ``[model]`` table.

    Attributes
    ----------
    diffusion : {"ionization", "free", "ideal"}
    spacing : {"mst", "nearest"}
    fragment_shape : {"square", "disk"}
    mu_gas : float
    use_spacings, use_masses : bool
        Which observables enter the likelihood.
    growth_time_max : float or None
        Upper limit on the growth time, yr (e.g. the system's age).
    growth_constraint : {"soft", "hard"}
    growth_width_dex : float
        Width of the soft (log-normal CDF) constraint, dex.
    selection : {"auto", "off"}
        "auto": model the catalog's beam, detection limit and searched area when it states
        them (truncated likelihood terms, expected number of clumps); "off": ignore them.
    profile : {"local", "power-law"}
        "local": one set of conditions for the whole region (at ``radius``); "power-law":
        surface density, temperature (and optionally mass-to-flux ratio and ionization) are
        power laws of radius about ``reference_radius``, rotation Keplerian at each clump.
    """

    diffusion: str = "ionization"
    spacing: str = "mst"
    fragment_shape: str = "square"
    mu_gas: float = MU_GAS
    use_spacings: bool = True
    use_masses: bool = True
    growth_time_max: float | None = None
    growth_constraint: str = "soft"
    growth_width_dex: float = 0.2
    selection: str = "auto"
    profile: str = "local"


@dataclass(frozen=True)
class SamplerOptions:
    """The ``[sampler]`` table.

    Attributes
    ----------
    walkers : int
    max_steps : int
        Cap on the chain length.
    seed : int
    moves : {"de", "stretch"}
        Differential-evolution mix (DEMove 0.8 + DESnookerMove 0.2) or the stretch move.
    tau_factor : float
        Converged when the chain is longer than tau_factor integrated autocorrelation times ...
    tau_rtol : float
        ... and the estimate changed by less than this fraction since the last check.
    check_every : int
        Steps between convergence checks and checkpoints (the first chunk).
    coordinates : {"original", "whitened"}
        Where the walkers move: in the ln-parameters themselves, or in
        coordinates whitened by the Laplace covariance at the MAP point (an
        affine map; the chain is stored in the ln-parameters either way).
    """

    walkers: int = 32
    max_steps: int = 20000
    seed: int = 1
    moves: str = "de"
    tau_factor: float = 50.0
    tau_rtol: float = 0.01
    check_every: int = 100
    coordinates: str = "original"


@dataclass(frozen=True)
class RunConfig:
    """A validated run configuration."""

    model: ModelOptions
    priors: Mapping[str, Prior]
    sampler: SamplerOptions
    catalog: Mapping[str, Any] = field(default_factory=dict)
    source: str = "<config>"
    measurements: Mapping[str, Measurement] = field(default_factory=dict)

    @property
    def sampled(self) -> list[str]:
        """Names of the sampled (non-fixed) parameters, in a stable order."""
        return [n for n in PARAMETERS if n in self.priors and not self.priors[n].fixed]

    def to_dict(self) -> dict[str, Any]:
        """The fully resolved configuration as plain TOML-ready data."""
        m = {k: v for k, v in self.model.__dict__.items() if v is not None}
        if self.model.growth_time_max is not None:
            m["growth_time_max"] = f"{self.model.growth_time_max:.17g} yr"
        out = {
            "model": m,
            "catalog": dict(self.catalog),
            "priors": {n: self.priors[n].to_config() for n in PARAMETERS if n in self.priors},
            "sampler": dict(self.sampler.__dict__),
        }
        if self.measurements:
            out["measurements"] = {k: v.to_config() for k, v in self.measurements.items()}
        return out

    def to_toml(self) -> str:
        import tomli_w

        return tomli_w.dumps(self.to_dict())

    def digest(self) -> str:
        """SHA-256 of what determines the posterior (everything but the chain length)."""
        d = self.to_dict()
        d["sampler"] = {k: v for k, v in d["sampler"].items() if k not in ("max_steps",)}
        import tomli_w

        return hashlib.sha256(tomli_w.dumps(d).encode()).hexdigest()

    def with_sampler(self, **changes: Any) -> RunConfig:
        """A copy with sampler settings replaced (None values are ignored)."""
        changes = {k: v for k, v in changes.items() if v is not None}
        if not changes:
            return self
        s = replace(self.sampler, **changes)
        _check_sampler(s, len(self.sampled))
        return replace(self, sampler=s)


def load_config(path: str | Path) -> RunConfig:
    """Read and validate a TOML run configuration file.

    Raises
    ------
    ConfigError
        If the file is missing, not TOML, or any key or value is invalid.
    """
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise ConfigError(f"{p}: config file not found") from None
    except IsADirectoryError:
        raise ConfigError(f"{p}: is a folder, not a config file") from None
    except UnicodeDecodeError:
        raise ConfigError(f"{p}: not a text (UTF-8) TOML file") from None
    except OSError as exc:
        raise ConfigError(f"{p}: cannot read ({exc.strerror})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{p}: not valid TOML ({exc})") from None
    try:
        return parse_config(data, source=str(p))
    except ConfigError as exc:
        raise ConfigError(f"{p}: {exc}") from None


def catalog_options(path: str | Path) -> tuple[dict[str, Any], str]:
    """The ``[catalog]`` overrides and the spacing mode of a config file."""
    cfg = load_config(path)
    return dict(cfg.catalog), cfg.model.spacing


def _table(data: Mapping[str, Any], key: str) -> dict[str, Any]:
    v = data.get(key, {})
    if not isinstance(v, Mapping):
        raise ConfigError(f"[{key}] must be a table")
    return dict(v)


def _choice(where: str, value: Any, choices: tuple[str, ...]) -> str:
    if value not in choices:
        raise ConfigError(f"{where}: must be one of {', '.join(map(repr, choices))}, got {value!r}")
    return value


def _bool(where: str, value: Any) -> bool:
    if not isinstance(value, bool):
        raise ConfigError(f"{where}: must be true or false, got {value!r}")
    return value


def _int(where: str, value: Any, low: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < low:
        raise ConfigError(f"{where}: must be a whole number >= {low}, got {value!r}")
    return value


def _float(where: str, value: Any, low: float = 0.0) -> float:
    try:
        v = float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None
    except OverflowError:  # an integer beyond the float range
        v = None
    if v is None or not np.isfinite(v) or v <= low:
        raise ConfigError(f"{where}: must be a number > {low}, got {value!r}")
    return v


def parse_config(data: Mapping[str, Any], *, source: str = "<config>") -> RunConfig:
    """Validate config data (as from :func:`tomllib.loads`)."""
    if not isinstance(data, Mapping):
        raise ConfigError("the config must be a TOML document of tables")
    unknown = set(data) - {"model", "priors", "sampler", "catalog", "measurements"}
    if unknown:
        raise ConfigError(f"unknown table(s) {', '.join(sorted(map(str, unknown)))}; "
                          f"use [model], [catalog], [priors], [measurements], [sampler]")
    model = _parse_model(_table(data, "model"))
    catalog = _parse_catalog(_table(data, "catalog"))
    priors = _parse_priors(_table(data, "priors"), model)
    sampler_tab = _table(data, "sampler")
    known = set(SamplerOptions.__dataclass_fields__)
    bad = set(sampler_tab) - known
    if bad:
        raise ConfigError(f"sampler.{sorted(bad)[0]}: unknown key; known: {', '.join(sorted(known))}")
    s = SamplerOptions()
    kw: dict[str, Any] = {}
    for k, v in sampler_tab.items():
        if k in ("walkers", "max_steps", "check_every"):
            kw[k] = _int(f"sampler.{k}", v, 1)
        elif k == "seed":
            kw[k] = _int("sampler.seed", v, 0)
        elif k == "moves":
            kw[k] = _choice("sampler.moves", v, ("de", "stretch"))
        elif k == "coordinates":
            kw[k] = _choice("sampler.coordinates", v, ("original", "whitened"))
        else:
            kw[k] = _float(f"sampler.{k}", v)
    s = replace(s, **kw)
    measurements = parse_measurements(_table(data, "measurements"))
    cfg = RunConfig(model=model, priors=priors, sampler=s, catalog=catalog, source=source,
                    measurements=measurements)
    _check_sampler(s, len(cfg.sampled))
    return cfg


def _check_sampler(s: SamplerOptions, ndim: int) -> None:
    if s.walkers < 2 * max(ndim, 1):
        raise ConfigError(f"sampler.walkers: need at least twice the number of sampled "
                          f"parameters ({2 * ndim}), got {s.walkers}")
    if s.walkers % 2:
        raise ConfigError(f"sampler.walkers: must be even, got {s.walkers}")
    if s.max_steps < 10:
        raise ConfigError(f"sampler.max_steps: must be at least 10, got {s.max_steps}")
    if s.walkers > MAX_WALKERS:
        raise ConfigError(f"sampler.walkers: at most {MAX_WALKERS}, got {s.walkers}")
    if s.check_every > MAX_CHECK_EVERY:
        raise ConfigError(f"sampler.check_every: at most {MAX_CHECK_EVERY} (each block of steps "
                          f"is held in memory at once), got {s.check_every}")
    if not 0 <= s.seed < 2**32:
        raise ConfigError(f"sampler.seed: must be a whole number from 0 to {2**32 - 1}, got {s.seed}")


def _parse_model(tab: dict[str, Any]) -> ModelOptions:
    known = set(ModelOptions.__dataclass_fields__)
    bad = set(tab) - known
    if bad:
        raise ConfigError(f"model.{sorted(bad)[0]}: unknown key; known: {', '.join(sorted(known))}")
    kw: dict[str, Any] = {}
    for k, v in tab.items():
        where = f"model.{k}"
        if k == "diffusion":
            kw[k] = _choice(where, v, DIFFUSION_MODES)
        elif k == "spacing":
            kw[k] = _choice(where, v, ("mst", "nearest"))
        elif k == "fragment_shape":
            kw[k] = _choice(where, v, ("square", "disk"))
        elif k == "growth_constraint":
            kw[k] = _choice(where, v, ("soft", "hard"))
        elif k == "selection":
            kw[k] = _choice(where, v, SELECTION_MODES)
        elif k == "profile":
            kw[k] = _choice(where, v, PROFILES)
        elif k in ("use_spacings", "use_masses"):
            kw[k] = _bool(where, v)
        elif k in ("mu_gas", "growth_width_dex"):
            kw[k] = _float(where, v)
        elif k == "growth_time_max":
            try:
                q = parse_quantity(v, name=where, unit=u.yr)
            except ValueError as exc:
                raise ConfigError(str(exc)) from None
            val = float(np.asarray(q.value))
            if not (np.isfinite(val) and val > 0):
                raise ConfigError(f"{where}: must be a positive time, got {v!r}")
            kw[k] = val
    m = ModelOptions(**kw)
    if not (m.use_spacings or m.use_masses):
        raise ConfigError("model: at least one of use_spacings and use_masses must be true")
    return m


def _parse_catalog(tab: dict[str, Any]) -> dict[str, Any]:
    keys = _catalog_keys()
    bad = [k for k in tab if k not in keys]
    if bad:
        raise ConfigError(f"catalog.{bad[0]}: unknown key; known: {', '.join(keys)}")
    for k, v in tab.items():
        if k == "units":
            if not isinstance(v, Mapping) or not all(isinstance(x, str) for x in v.values()):
                raise ConfigError('catalog.units: expected a table of column = "unit", '
                                  'e.g. units = { mass = "solMass" }')
        elif k == "exclude":
            if not isinstance(v, list) or not all(isinstance(x, (str, int)) for x in v):
                raise ConfigError('catalog.exclude: expected a list of clump ids, e.g. ["C3", "C7"]')
        elif isinstance(v, bool) or not isinstance(v, (str, int, float)):
            raise ConfigError(f"catalog.{k}: expected a number or a string with a unit, got {v!r}")
    return tab


def _parse_priors(tab: dict[str, Any], model: ModelOptions) -> dict[str, Prior]:
    for k in tab:
        if k not in PARAMETERS:
            raise ConfigError(f"priors.{k}: unknown parameter; known: {', '.join(PARAMETERS)}")
    mode = model.diffusion
    needs = {"mass_to_flux", "surface_density", "temperature"}
    if mode == "ionization":
        needs.add("ionization")
        forbidden = {"eta_ad", "eta_ohm"}
    elif mode == "free":
        needs |= {"eta_ad", "eta_ohm"}
        forbidden = {"ionization"}
    else:
        forbidden = {"ionization", "eta_ad", "eta_ohm"}
    for k in sorted(forbidden & set(tab)):
        raise ConfigError(f"priors.{k}: not used with model.diffusion = {mode!r} "
                          f"({'eta_ad and eta_ohm replace ionization' if mode == 'free' else ''}"
                          f"{'ionization sets both diffusivities' if mode == 'ionization' else ''}"
                          f"{'flux freezing has no diffusivities' if mode == 'ideal' else ''}); remove it")
    missing = sorted(needs - set(tab))
    if missing:
        raise ConfigError(f"priors.{missing[0]}: required with model.diffusion = {mode!r}; give a value "
                          f"or a distribution")
    if model.profile == "power-law":
        return _profile_priors(tab, mode)
    for k in PROFILE_PRIORS:
        if k in tab:
            raise ConfigError(f"priors.{k}: only used with model.profile = \"power-law\"; remove "
                              f"it, or set profile = \"power-law\" in [model]")
    has_kep = {"stellar_mass", "radius"} & set(tab)
    if "kappa" in tab and has_kep:
        raise ConfigError("priors.kappa: give either kappa or stellar_mass with radius, not both")
    if has_kep and len(has_kep) == 1:
        other = ({"stellar_mass", "radius"} - has_kep).pop()
        raise ConfigError(f"priors.{other}: required with priors.{has_kep.pop()} (Keplerian kappa)")
    if "kappa" not in tab and not has_kep:
        raise ConfigError('priors.kappa: rotation not given; set stellar_mass and radius (Keplerian '
                          'disk) or kappa (use kappa = { value = "0 1/s" } for a non-rotating sheet)')
    return _build_priors(tab)


def _build_priors(tab: dict[str, Any], extra_defaults: Mapping[str, Any] | None = None
                  ) -> dict[str, Prior]:
    merged = dict(DEFAULT_PRIORS)
    merged.update(extra_defaults or {})
    merged.update(tab)
    return {k: (parse_signed_prior if k in LINEAR else parse_prior)(k, v) for k, v in merged.items()}


def _profile_priors(tab: dict[str, Any], mode: str) -> dict[str, Prior]:
    """The priors of ``profile = "power-law"`` (checked on top of the diffusion mode's)."""
    where = 'with model.profile = "power-law"'
    if "stellar_mass" not in tab:
        raise ConfigError(f"priors.stellar_mass: required {where}: the rotation is Keplerian at "
                          f"each clump's radius; give e.g. stellar_mass = {{ value = \"0.5 solMass\" }}")
    for k, why in (("kappa", "the epicyclic frequency is Keplerian at each clump's radius"),
                   ("radius", "each clump's radius comes from its position; the conditions are "
                              "given at reference_radius")):
        if k in tab:
            raise ConfigError(f"priors.{k}: not used {where} ({why}); remove it")
    for k in ("reference_radius", "surface_density_index", "temperature_index"):
        if k not in tab:
            example = {"reference_radius": '{ value = "100 au" }',
                       "surface_density_index": '{ dist = "uniform", low = 0, high = 2 }',
                       "temperature_index": "{ value = 0.5 }"}[k]
            raise ConfigError(f"priors.{k}: required {where}, e.g. {k} = {example}")
    if "ionization_index" in tab and mode != "ionization":
        raise ConfigError(f"priors.ionization_index: only used with model.diffusion = "
                          f"\"ionization\" (got {mode!r}); remove it")
    defaults: dict[str, Any] = {"mass_to_flux_index": {"value": 0.0}}
    if mode == "ionization":
        defaults["ionization_index"] = {"value": 0.0}
    priors = _build_priors(tab, defaults)
    if not priors["reference_radius"].fixed:
        raise ConfigError('priors.reference_radius: must be a fixed value, e.g. { value = "100 au" }')
    return priors
