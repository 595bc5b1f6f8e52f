"""What a future measurement would teach: importance reweighting of existing posterior samples.

A hypothetical measurement of one quantity (the field strength, the
temperature, the column density) with a fractional precision p is modelled as
a log-normal likelihood, ln y ~ Normal(ln x, p^2), so "20%" means a 1-sigma
error of 0.2 in ln x. Plausible true values x_true are drawn from the current
posterior itself, a measurement y = x_true exp(p z), z ~ N(0, 1), is simulated
for each, and the posterior samples are reweighted by that likelihood,

    w_i  proportional to  exp(-(ln x_i - ln y)^2 / (2 p^2)).

The weights are the likelihood term of a measurement as data
(:func:`infer.inference.measurements.measurement_loglike`, the same function the fit uses
for a ``[measurements]`` entry), so reweighting by a given measurement
(:func:`measurement_weights`) approximates the fit with that measurement added.

The weighted 68% interval of each target quantity, compared with the current
one, gives the expected shrinkage; repeating for many draws gives its median
and spread. The effective sample size of the weights,
n_eff = (sum w)^2 / sum w^2 (the usual effective sample size of importance
weights), says whether the reweighting can be trusted: when
few samples carry the weight (n_eff below ``min_ess`` or below ``min_fraction``
of the samples) the forecast is too degenerate, and the measurement should be
added as a prior and the fit repeated instead.

For a normal posterior N(m, s0^2) of ln x the reweighted posterior is the
conjugate normal result with sd (s0^-2 + p^-2)^(-1/2), so the expected width
ratio is p / sqrt(s0^2 + p^2) (the tests check this).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InferError
from ..quantities import QUANTITIES
from .measurements import Measurement, measurement_loglike

__all__ = ["TargetForecast", "ForecastResult", "forecast", "parse_precision", "default_targets",
           "MEASURABLE", "kish_ess", "weighted_quantiles", "measurement_weights"]

#: command-line / API name of a measurable quantity -> sample column it constrains
MEASURABLE: dict[str, str] = {
    "field": "field",
    "temperature": "temperature",
    "column_density": "surface_density",
    "surface_density": "surface_density",
}


def _label(name: str) -> str:
    """A target's name with its unit for tables, from the registry ("field strength [mG]")."""
    q = QUANTITIES.get(name)
    return q.text_label if q is not None else name


def _short(name: str) -> str:
    """A target's plain-words name for sentences, from the registry ("field strength")."""
    q = QUANTITIES.get(name)
    return q.title if q is not None else name


_Q = (0.16, 0.84)
_NO_GAIN = 0.9          # a width ratio above this counts as "essentially unchanged"


@dataclass(frozen=True)
class TargetForecast:
    """Expected narrowing of one quantity's 68% interval.

    Attributes
    ----------
    name : str
    width_now : float
        Current 68% interval width (in ln of the quantity when ``log``; else in its unit).
    ratio_median, ratio_p16, ratio_p84 : float
        New width / current width: median and 16-84% spread over the draws.
    log : bool
        Whether widths are measured in ln (positive quantities).
    """

    name: str
    width_now: float
    ratio_median: float
    ratio_p16: float
    ratio_p84: float
    log: bool


@dataclass(frozen=True)
class ForecastResult:
    """A measurement forecast (see the module docstring).

    Attributes
    ----------
    measured : str
        The sample column measured.
    precision : float
        Fractional 1-sigma precision (sd of the ln-measurement).
    n_samples, n_draws : int
    targets : dict name -> TargetForecast
    ess : ndarray (n_draws,)
        effective sample size of the weights of each draw.
    min_ess, min_fraction : float
        Thresholds below which the reweighting is flagged.
    warnings : list of str
    """

    measured: str
    precision: float
    n_samples: int
    n_draws: int
    targets: dict
    ess: np.ndarray
    min_ess: float
    min_fraction: float
    warnings: list = field(default_factory=list)

    @property
    def ess_median(self) -> float:
        return float(np.median(self.ess))

    @property
    def degenerate(self) -> bool:
        """Whether the typical draw's weights are too concentrated to trust."""
        return self.ess_median < max(self.min_ess, self.min_fraction * self.n_samples)

    def title(self) -> str:
        what = {"surface_density": "column density"}.get(self.measured, self.measured)
        return f"Forecast: a {what} measurement with {self.precision:.0%} precision"

    def to_markdown(self) -> str:
        """The forecast as a Markdown section (heading, table, notes)."""
        lines = [f"### {self.title()}", "",
                 f"Importance reweighting of {self.n_samples} posterior samples, {self.n_draws} "
                 f"simulated measurements with true values drawn from the posterior. Width ratio = "
                 f"new / current 68% interval width (measured in ln for positive quantities); "
                 f"1 means no gain.", "",
                 "| quantity | width ratio (median) | 16-84% over draws |", "|---|---|---|"]
        for t in self.targets.values():
            lines.append(f"| {_label(t.name)} | {t.ratio_median:.2f} | "
                         f"{t.ratio_p16:.2f} - {t.ratio_p84:.2f} |")
        lines += ["", f"Effective sample size of the weights: median {self.ess_median:.0f} "
                      f"(16-84%: {np.quantile(self.ess, 0.16):.0f} - {np.quantile(self.ess, 0.84):.0f})"
                      f" of {self.n_samples}.", ""]
        lines += [f"**Warning:** {w}" for w in self.warnings]
        return "\n".join(lines).rstrip() + "\n"

    def to_text(self) -> str:
        """Plain-text rendering for the terminal."""
        out = [self.title(), f"  {'quantity':<32} {'width ratio':>11}  {'16-84% over draws':>18}"]
        for t in self.targets.values():
            out.append(f"  {_label(t.name):<32} {t.ratio_median:>11.2f}  "
                       f"{t.ratio_p16:>8.2f} - {t.ratio_p84:<8.2f}")
        out.append(f"  effective samples: median {self.ess_median:.0f} of {self.n_samples}")
        out += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(out)

    def sentence(self) -> str:
        """One or two sentences for a proposal: the expected gain on the key quantities."""
        order = ["mass_to_flux", "field", "ionization", "eta_ad", "eta_ohm", "eta_total",
                 "wavelength"]
        names = [n for n in order if n in self.targets and n != self.measured] or \
            [n for n in self.targets if n != self.measured] or list(self.targets)
        gain = [n for n in names if self.targets[n].ratio_median < _NO_GAIN]
        what = {"surface_density": "column-density"}.get(self.measured, self.measured)
        head = f"A {what} measurement with {self.precision:.0%} precision"
        if gain:
            parts = [f"the {_short(n)} to about {self.targets[n].ratio_median:.0%}"
                     for n in gain]
            whose = "its current width" if len(gain) == 1 else "their current widths"
            s = f"{head} would be expected to narrow the 68% interval of {_join(parts)} of {whose}"
            rest = [n for n in names if n not in gain]
            s += (f", and leave the {_join([_short(n) for n in rest])} essentially "
                  f"unchanged." if rest else ".")
        else:
            s = (f"{head} would leave the {_join([_short(n) for n in names])} "
                 f"essentially unchanged (all 68% intervals stay above {_NO_GAIN:.0%} of their "
                 f"current width).")
        if self.degenerate:
            s += (" The reweighting behind this estimate is degenerate; refit with the measurement "
                  "as a prior to confirm it.")
        return s


def _join(items: Sequence[str]) -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + " and " + items[-1]


def parse_precision(text: str | float, *, name: str = "precision") -> float:
    """A fractional precision from ``"20%"``, ``"0.2"`` or 0.2.

    Raises
    ------
    InferError
        Unless the value is a number in (0, 1] (or a percentage in (0%, 100%]).
    """
    s = str(text).strip()
    pct = s.endswith("%")
    try:
        v = float(s[:-1]) if pct else float(s)
    except ValueError:
        raise InferError(f"{name}: expected a fractional precision such as 20% or 0.2, "
                         f"got {text!r}") from None
    if pct:
        v /= 100.0
    elif v > 1.0:
        raise InferError(f"{name}: {s} is not a fraction; write {s}% for a percentage, "
                         f"or a number between 0 and 1")
    if not (np.isfinite(v) and 0.0 < v <= 1.0):
        raise InferError(f"{name}: the precision must lie between 0 and 100% (0 and 1), got {text!r}")
    return v


def default_targets(samples: Mapping[str, np.ndarray], measured: str) -> list[str]:
    """The quantities a forecast reports: those of the list below that vary in ``samples``.

    mass_to_flux, ionization (or eta_ad, eta_ohm when the ionization is not
    sampled), eta_total, field, wavelength, then the measured quantity.
    """
    want = ["mass_to_flux"]
    ion = np.asarray(samples.get("ionization", []), dtype=float)
    if ion.size and np.all(np.isfinite(ion)):
        want += ["ionization", "eta_total"]
    else:
        want += ["eta_ad", "eta_ohm", "eta_total"]
    want += ["field", "wavelength", measured]
    out = []
    for n in want:
        if n in out or n not in samples:
            continue
        x = np.asarray(samples[n], dtype=float)
        if np.all(np.isfinite(x)) and np.ptp(x) > 1e-12 * max(abs(float(np.median(x))), 1e-300):
            out.append(n)
    return out


def kish_ess(w: np.ndarray, axis: int = -1) -> np.ndarray:
    """effective sample size (sum w)^2 / sum w^2 along ``axis``."""
    w = np.asarray(w, dtype=float)
    return np.sum(w, axis=axis) ** 2 / np.sum(w * w, axis=axis)


def weighted_quantiles(x: np.ndarray, w: np.ndarray, q: Sequence[float]) -> np.ndarray:
    """Quantiles of ``x`` (n,) under each row of weights ``w`` (m, n) -> (m, len(q)).

    The weighted empirical CDF at the i-th sorted sample is the cumulative
    weight up to it minus half its own weight (the midpoint rule, which gives
    the usual interpolated quantile for equal weights); quantiles interpolate
    it linearly.
    """
    x = np.asarray(x, dtype=float)
    w = np.atleast_2d(np.asarray(w, dtype=float))
    order = np.argsort(x)
    xs = x[order]
    ws = w[:, order]
    cw = np.cumsum(ws, axis=1)
    tot = cw[:, -1:]
    cdf = (cw - 0.5 * ws) / tot
    out = np.empty((w.shape[0], len(q)))
    n = xs.size
    rows = np.arange(w.shape[0])
    for j, qq in enumerate(q):
        hi = np.clip(np.sum(cdf < qq, axis=1), 1, n - 1)
        lo = hi - 1
        c_lo, c_hi = cdf[rows, lo], cdf[rows, hi]
        with np.errstate(invalid="ignore", divide="ignore"):
            f = np.clip((qq - c_lo) / (c_hi - c_lo), 0.0, 1.0)
        f = np.where(np.isfinite(f), f, 0.0)
        out[:, j] = xs[lo] + f * (xs[hi] - xs[lo])
    return out


def forecast(samples: Mapping[str, np.ndarray], measured: str, precision: float, *,
             targets: Sequence[str] | None = None, n_draws: int = 200, seed: int = 0,
             min_ess: float = 100.0, min_fraction: float = 0.01) -> ForecastResult:
    """Expected narrowing of posteriors by a future measurement of ``measured``.

    Parameters
    ----------
    samples : mapping name -> ndarray (n,)
        Posterior samples (parameters and derived quantities, e.g.
        ``{**post.values, **post.derived}``).
    measured : str
        The sample column measured (``"field"``, ``"temperature"``,
        ``"surface_density"``; ``"column_density"`` is an alias of the last:
        a fractional error on N(H2) is the same on Sigma). Must be positive.
    precision : float
        Fractional 1-sigma precision, the sd of ln(measurement), in (0, 1].
    targets : sequence of str, optional
        Quantities to report (default :func:`default_targets`).
    n_draws : int
        Simulated measurements.
    seed : int
        Seed of the true values and measurement noise.
    min_ess, min_fraction : float
        The forecast warns when the median effective sample size is
        below ``min_ess`` or below ``min_fraction`` of the samples.

    Returns
    -------
    ForecastResult

    Raises
    ------
    InferError
        Unknown or non-positive measured quantity, bad precision or targets.
    """
    col = MEASURABLE.get(measured, measured)
    if col not in samples:
        raise InferError(f"forecast: no samples of {measured!r}; available: "
                         f"{', '.join(sorted(samples))}")
    x = np.asarray(samples[col], dtype=float)
    n = x.size
    if n < 10:
        raise InferError(f"forecast: {n} posterior samples are too few to reweight")
    if not np.all(np.isfinite(x) & (x > 0)):
        raise InferError(f"forecast: {measured} must be positive and finite in every sample")
    if isinstance(precision, bool) or not (np.isfinite(precision) and 0.0 < precision <= 1.0):
        raise InferError(f"forecast: precision must be a fraction in (0, 1], got {precision!r}")
    if isinstance(n_draws, bool) or int(n_draws) != n_draws or n_draws < 1:
        raise InferError(f"forecast: n_draws must be a positive whole number, got {n_draws!r}")
    names = list(targets) if targets is not None else default_targets(samples, col)
    for t in names:
        if t not in samples or np.asarray(samples[t]).shape != x.shape:
            raise InferError(f"forecast: target {t!r} has no samples matching {measured!r}")
    rng = np.random.default_rng(seed)
    lnx = np.log(x)
    truth = lnx[rng.integers(0, n, int(n_draws))]
    ln_y = truth + precision * rng.standard_normal(int(n_draws))
    logw = measurement_loglike(x[None, :], value=np.exp(ln_y)[:, None], sd_ln=precision)
    w = np.exp(logw - logw.max(axis=1, keepdims=True))
    ess = kish_ess(w)
    results: dict[str, TargetForecast] = {}
    for t in names:
        v = np.asarray(samples[t], dtype=float)
        good = np.isfinite(v)
        log = bool(np.all(v[good] > 0))
        z = np.log(v[good]) if log else v[good]
        now = np.quantile(z, _Q)
        width_now = float(now[1] - now[0])
        q = weighted_quantiles(z, w[:, good], _Q)
        ratio = (q[:, 1] - q[:, 0]) / width_now if width_now > 0 else np.full(len(q), np.nan)
        r16, r50, r84 = np.quantile(ratio, [0.16, 0.5, 0.84])
        results[t] = TargetForecast(t, width_now, float(r50), float(r16), float(r84), log)
    res = ForecastResult(col, float(precision), int(n), int(n_draws), results, ess,
                         float(min_ess), float(min_fraction))
    if res.degenerate:
        res.warnings.append(
            f"the weights are concentrated on few samples (median effective sample size "
            f"{res.ess_median:.0f} of {n}, below {max(min_ess, min_fraction * n):.0f}): the "
            f"reweighting is too degenerate to trust. {_refit_advice(col, precision)}")
    return res


def measurement_weights(samples: Mapping[str, np.ndarray], measurement: Measurement) -> np.ndarray:
    """Importance weights of posterior samples under one measurement, normalised to sum 1.

    Parameters
    ----------
    samples : mapping name -> ndarray (n,)
        Posterior samples; must hold ``measurement.name`` in its canonical unit.
    measurement : Measurement

    Returns
    -------
    ndarray (n,)
        exp(measurement log-likelihood), normalised.

    Raises
    ------
    InferError
        If the samples do not hold the measured quantity or no sample has weight.
    """
    if measurement.name not in samples:
        raise InferError(f"no samples of {measurement.name!r} to reweight")
    logw = measurement.loglike(np.asarray(samples[measurement.name], dtype=float))
    if not np.any(np.isfinite(logw)):
        raise InferError(f"the measurement of {measurement.name} gives every sample zero weight")
    w = np.exp(logw - np.max(logw))
    return w / w.sum()


def _refit_advice(col: str, precision: float) -> str:
    dex = precision / np.log(10.0)
    return (f"Refit with the measurement as data instead: a [measurements] entry "
            f"{col} = {{ value = ..., error_dex = {dex:.2g} }} in the run config.")
