"""Prior distributions, one small class each, in the way scipy.stats organises them.

Each class is a distribution with its parameters fixed (like a frozen ``scipy.stats``
distribution) and offers

* ``logpdf(x)``: the normalised log density in x (-inf outside the support);
* ``logpdf_unnorm(x)``: the same up to its normalising constant (what a sampler needs);
* ``logpdf_ln(u)``: the log density of u = ln x up to a constant, Jacobian ``+ u``
  included (positive parameters are sampled in ln x; -inf outside the support and for
  non-finite u);
* ``ppf(q)``, ``sample(rng, n)`` and ``support()``.

:data:`POSITIVE` maps the ``dist`` names of a positive parameter's ``[priors]`` entry to
their classes, :data:`SIGNED` those of a parameter on the real line (a power-law index).
A ``normal`` prior on a positive parameter is the normal restricted to x > 0
(:class:`PositiveNormal`). Inputs are float arrays of any shape; outputs have their shape.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np
from scipy import special, stats

from ..errors import ConfigError

__all__ = ["Distribution", "HeldPrior", "Fixed", "Uniform", "LogUniform", "Normal", "TruncNormal",
           "PositiveNormal", "LogNormal", "HalfNormal", "POSITIVE", "SIGNED"]

_LN10 = np.log(10.0)
_HALF_LN_2PI = 0.5 * np.log(2.0 * np.pi)
_NEG_INF = -np.inf


def _quiet() -> np.errstate:
    """Constants computed once from extreme but valid parameters may overflow (as they would
    in every call): quietly, the densities are then 0 or -inf as before."""
    return np.errstate(over="ignore", divide="ignore", invalid="ignore")


@dataclass(frozen=True)
class Distribution(ABC):
    """The interface shared by every prior distribution (parameters are the fields).

    Subclasses set :attr:`name` (the config's ``dist``), :attr:`keys` (its config keys, in
    order) and implement :attr:`log_norm`, :meth:`logpdf_unnorm`, :meth:`ppf` and
    :meth:`support`, and :meth:`logpdf_ln` where the support is positive.
    """

    name: ClassVar[str] = ""
    keys: ClassVar[tuple[str, ...]] = ()

    @property
    @abstractmethod
    def log_norm(self) -> float:
        """ln of the normalising constant: logpdf = logpdf_unnorm - log_norm."""

    @abstractmethod
    def logpdf_unnorm(self, x) -> np.ndarray:
        """Log density in x up to the constant :attr:`log_norm`; x an ndarray of any shape."""

    def logpdf(self, x) -> np.ndarray:
        """Normalised log density in x (-inf outside the support), the shape of x."""
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return self.logpdf_unnorm(np.asarray(x, dtype=float)) - self.log_norm

    def logpdf_ln(self, lnx) -> np.ndarray:
        """Log density of u = ln x up to a constant (Jacobian included), the shape of u."""
        lnx = np.asarray(lnx, dtype=float)
        with _quiet():
            lp = self.ln_terms(lnx, np.exp(lnx))
        return _finite(lnx, lp)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        """:meth:`logpdf_ln` for finite u = ``lnx`` given also x = e^u (float arrays).

        The hot path of the log-posterior: no conversion, no floating-point error state
        (the caller holds one) and no mask of non-finite u (the caller applies one).
        """
        raise TypeError(f"{self.name}: a distribution on the real line has no density in ln x")

    @abstractmethod
    def ppf(self, q) -> np.ndarray:
        """Quantile function: x with P(X <= x) = q, q in [0, 1]; the shape of q."""

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """n draws, shape (n,): the quantiles of n uniform numbers in (1e-9, 1 - 1e-9)."""
        return self.ppf(rng.uniform(1e-9, 1.0 - 1e-9, size=n))

    @abstractmethod
    def support(self) -> tuple[float, float]:
        """(low, high) of the support."""

    def describe(self, unit: str = "", *, scatter: bool = False) -> str:
        """E.g. ``uniform(low 0.5, high 4)`` followed by ``unit`` (or `` dex`` for a scatter)."""
        inner = ", ".join(f"{k} {getattr(self, k):.4g}" for k in self.keys)
        return f"{self.name}({inner}){' dex' if scatter else unit}"

    @classmethod
    def check(cls, where: str, args: dict[str, float]) -> None:
        """Refuse parameters without support (ConfigError naming ``where``); none by default."""
        return None


def _check_range(where: str, args: dict[str, float]) -> None:
    if not args["low"] < args["high"]:
        raise ConfigError(f"{where}: low must be below high (got {args['low']:.4g} >= "
                          f"{args['high']:.4g}); the prior has no support")


def _finite(lnx: np.ndarray, lp) -> np.ndarray:
    return np.where(np.isfinite(lnx), lp, _NEG_INF)


@dataclass(frozen=True)
class Fixed(Distribution):
    """A point mass at ``value`` (a parameter that is not sampled); logpdf is the log pmf."""

    name: ClassVar[str] = "fixed"
    keys: ClassVar[tuple[str, ...]] = ("value",)
    value: float

    @property
    def log_norm(self) -> float:
        return 0.0

    def logpdf_unnorm(self, x) -> np.ndarray:
        return np.where(np.asarray(x, dtype=float) == self.value, 0.0, _NEG_INF)

    def logpdf_ln(self, lnx) -> np.ndarray:
        raise ValueError("a fixed value has no density: it is not sampled")

    def ppf(self, q) -> np.ndarray:
        return np.full(np.asarray(q, dtype=float).shape, self.value)

    def support(self) -> tuple[float, float]:
        return self.value, self.value

    def describe(self, unit: str = "", *, scatter: bool = False) -> str:
        return f"fixed at {self.value:.4g}{unit}"


@dataclass(frozen=True)
class Uniform(Distribution):
    """Uniform on [low, high] (scipy.stats.uniform(low, high - low))."""

    name: ClassVar[str] = "uniform"
    keys: ClassVar[tuple[str, ...]] = ("low", "high")
    low: float
    high: float
    _width: float = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_width", self.high - self.low)

    @property
    def log_norm(self) -> float:
        return float(np.log(self._width))

    def logpdf_unnorm(self, x) -> np.ndarray:
        return np.where((x >= self.low) & (x <= self.high), 0.0, _NEG_INF)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        return np.where((x >= self.low) & (x <= self.high), lnx, _NEG_INF)

    def ppf(self, q) -> np.ndarray:
        return self.low + np.asarray(q, dtype=float) * self._width

    def support(self) -> tuple[float, float]:
        return self.low, self.high

    @classmethod
    def check(cls, where: str, args: dict[str, float]) -> None:
        _check_range(where, args)


@dataclass(frozen=True)
class LogUniform(Distribution):
    """Uniform in ln x on [low, high], low > 0 (scipy.stats.loguniform(low, high))."""

    name: ClassVar[str] = "loguniform"
    keys: ClassVar[tuple[str, ...]] = ("low", "high")
    low: float
    high: float
    _ln_low: float = field(init=False, repr=False, compare=False)
    _ln_span: float = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        with _quiet():
            object.__setattr__(self, "_ln_low", np.log(self.low))
            object.__setattr__(self, "_ln_span", np.log(self.high) - np.log(self.low))

    @property
    def log_norm(self) -> float:
        return float(np.log(self._ln_span))

    def logpdf_unnorm(self, x) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where((x >= self.low) & (x <= self.high), -np.log(x), _NEG_INF)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        return np.where((x >= self.low) & (x <= self.high), 0.0, _NEG_INF)

    def ppf(self, q) -> np.ndarray:
        return np.exp(self._ln_low + np.asarray(q, dtype=float) * self._ln_span)

    def support(self) -> tuple[float, float]:
        return self.low, self.high

    @classmethod
    def check(cls, where: str, args: dict[str, float]) -> None:
        _check_range(where, args)
        if args["low"] <= 0:
            raise ConfigError(f"{where}: loguniform needs low > 0")


@dataclass(frozen=True)
class Normal(Distribution):
    """Normal on the real line (scipy.stats.norm(mean, sd)); for a parameter that may be negative."""

    name: ClassVar[str] = "normal"
    keys: ClassVar[tuple[str, ...]] = ("mean", "sd")
    mean: float
    sd: float

    @property
    def log_norm(self) -> float:
        return float(np.log(self.sd) + _HALF_LN_2PI)

    def logpdf_unnorm(self, x) -> np.ndarray:
        return -0.5 * ((x - self.mean) / self.sd) ** 2

    def ppf(self, q) -> np.ndarray:
        return stats.norm.ppf(np.asarray(q, dtype=float), loc=self.mean, scale=self.sd)

    def support(self) -> tuple[float, float]:
        return -np.inf, np.inf


@dataclass(frozen=True)
class TruncNormal(Distribution):
    """Normal(mean, sd) restricted to [low, high] and to x >= 0 (scipy.stats.truncnorm)."""

    name: ClassVar[str] = "truncnormal"
    keys: ClassVar[tuple[str, ...]] = ("mean", "sd", "low", "high")
    mean: float
    sd: float
    low: float = 0.0
    high: float = np.inf
    _alpha: float = field(init=False, repr=False, compare=False)
    _beta: float = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        lo = max(self.low, 0.0)
        with _quiet():
            object.__setattr__(self, "_alpha", (lo - self.mean) / self.sd)
            object.__setattr__(self, "_beta", (self.high - self.mean) / self.sd)

    @property
    def log_norm(self) -> float:
        a, b = self._alpha, self._beta
        mass = special.ndtr(-a) - special.ndtr(-b) if a > 0 else special.ndtr(b) - special.ndtr(a)
        return float(np.log(self.sd) + _HALF_LN_2PI + np.log(mass))

    def logpdf_unnorm(self, x) -> np.ndarray:
        inside = (x >= max(self.low, 0.0)) & (x <= self.high)
        return np.where(inside, -0.5 * ((x - self.mean) / self.sd) ** 2, _NEG_INF)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        inside = (x >= self.low) & (x <= self.high)
        return np.where(inside, -0.5 * ((x - self.mean) / self.sd) ** 2 + lnx, _NEG_INF)

    def ppf(self, q) -> np.ndarray:
        return stats.truncnorm.ppf(np.asarray(q, dtype=float), self._alpha, self._beta,
                                   loc=self.mean, scale=self.sd)

    def support(self) -> tuple[float, float]:
        return max(self.low, 0.0), self.high

    @classmethod
    def check(cls, where: str, args: dict[str, float]) -> None:
        _check_range(where, args)
        if args["sd"] <= 0:
            raise ConfigError(f"{where}: sd must be positive")
        if args["high"] <= 0:
            raise ConfigError(f"{where}: the truncated range has no positive values")


@dataclass(frozen=True)
class PositiveNormal(TruncNormal):
    """The ``normal`` prior of a positive parameter: Normal(mean, sd) restricted to x > 0."""

    name: ClassVar[str] = "normal"
    keys: ClassVar[tuple[str, ...]] = ("mean", "sd")

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        return -0.5 * ((x - self.mean) / self.sd) ** 2 + lnx   # x = e^u > 0: always inside

    @classmethod
    def check(cls, where: str, args: dict[str, float]) -> None:
        if args["sd"] <= 0:
            raise ConfigError(f"{where}: sd must be positive")
        if args["mean"] + 8 * args["sd"] <= 0:
            raise ConfigError(f"{where}: the normal prior has essentially no mass at positive "
                              f"values; the parameter must be positive")


@dataclass(frozen=True)
class LogNormal(Distribution):
    """ln x ~ Normal(ln median, (sigma_dex ln 10)^2) (scipy.stats.lognorm(s, scale=median))."""

    name: ClassVar[str] = "lognormal"
    keys: ClassVar[tuple[str, ...]] = ("median", "sigma_dex")
    median: float
    sigma_dex: float
    _ln_median: float = field(init=False, repr=False, compare=False)
    _s: float = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        with _quiet():
            object.__setattr__(self, "_ln_median", np.log(self.median))
            object.__setattr__(self, "_s", self.sigma_dex * _LN10)

    @property
    def log_norm(self) -> float:
        return float(np.log(self._s) + _HALF_LN_2PI)

    def logpdf_unnorm(self, x) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            lnx = np.log(x)
            return np.where(x > 0, -0.5 * ((lnx - self._ln_median) / self._s) ** 2 - lnx,
                            _NEG_INF)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        return -0.5 * ((lnx - self._ln_median) / self._s) ** 2

    def ppf(self, q) -> np.ndarray:
        return self.median * 10 ** (self.sigma_dex * special.ndtri(np.asarray(q, dtype=float)))

    def support(self) -> tuple[float, float]:
        return 0.0, np.inf

    def describe(self, unit: str = "", *, scatter: bool = False) -> str:
        return f"lognormal(median {self.median:.4g}{unit}, {self.sigma_dex:.3g} dex)"


@dataclass(frozen=True)
class HalfNormal(Distribution):
    """|Normal(0, scale)| on x >= 0 (scipy.stats.halfnorm(scale=scale))."""

    name: ClassVar[str] = "halfnormal"
    keys: ClassVar[tuple[str, ...]] = ("scale",)
    scale: float

    @property
    def log_norm(self) -> float:
        return float(np.log(self.scale) + _HALF_LN_2PI - np.log(2.0))

    def logpdf_unnorm(self, x) -> np.ndarray:
        return np.where(x >= 0, -0.5 * (x / self.scale) ** 2, _NEG_INF)

    def ln_terms(self, lnx: np.ndarray, x: np.ndarray) -> np.ndarray:
        return -0.5 * (x / self.scale) ** 2 + lnx

    def ppf(self, q) -> np.ndarray:
        return self.scale * special.ndtri(0.5 + 0.5 * np.asarray(q, dtype=float))

    def support(self) -> tuple[float, float]:
        return 0.0, np.inf


#: ``dist`` of a positive parameter's prior -> its class ("fixed" for a value)
POSITIVE: dict[str, type[Distribution]] = {
    cls.name: cls for cls in (Uniform, LogUniform, PositiveNormal, LogNormal, HalfNormal,
                              TruncNormal, Fixed)
}
#: ``dist`` of a real-line parameter's prior (a power-law index) -> its class
SIGNED: dict[str, type[Distribution]] = {cls.name: cls for cls in (Uniform, Normal, Fixed)}


@dataclass(frozen=True)
class HeldPrior:
    """One parameter's prior: its name, the config's ``dist`` and ``args``, and the
    distribution object built from them out of :attr:`TABLE` (set by each subclass).

    Attributes
    ----------
    name : str
    dist : str
        ``"fixed"`` or a key of the subclass's table.
    args : dict of float
        Distribution arguments in the canonical unit.
    distribution : Distribution
        Built from ``dist`` and ``args``.
    """

    TABLE: ClassVar[dict[str, type[Distribution]]] = {}

    name: str
    dist: str
    args: Mapping[str, float] = field(default_factory=dict)
    distribution: Distribution = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "distribution", self.TABLE[self.dist](**self.args))

    @property
    def fixed(self) -> bool:
        return self.dist == "fixed"

    @property
    def value(self) -> float:
        """The fixed value (only for fixed priors)."""
        return float(self.args["value"])

    def support(self) -> tuple[float, float]:
        """(low, high) of the support in x."""
        return self.distribution.support()

    def logpdf(self, x) -> np.ndarray:
        """Normalised log density in x (-inf outside the support)."""
        return self.distribution.logpdf(x)

    def ppf(self, q) -> np.ndarray:
        """Quantile function in x (used for starting points and prior widths)."""
        return self.distribution.ppf(q)

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """n draws in x."""
        return self.distribution.sample(rng, n)
