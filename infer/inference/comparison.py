"""Leave-one-out comparison of two fits of the same catalog (PSIS-LOO).

Each fit folder holds ``pointwise.npz``: the log-likelihood of every
observation (clump spacings, then masses) for posterior samples. Pareto-smoothed
importance sampling turns it into the expected log pointwise predictive
density of each observation left out (elpd_i) without refitting (Vehtari,
Gelman & Gabry 2017, Stat. Comput. 27, 1413). The computation is done by
arviz-stats (its NumPy layer, ``arviz_stats.base.array_stats.loo``, which needs
neither xarray nor arviz-base); the difference of two fits and its standard
error come from the pointwise differences, se = sqrt(n var(elpd_1,i - elpd_2,i)),
which is the usual paired estimate.

The observations are treated as conditionally independent given the
parameters, as in the likelihood. The growth-time constraint (a property of
the parameters, not of an observation) is not part of the pointwise
log-likelihood.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ChainError, InferError

__all__ = ["LooResult", "Comparison", "psis_loo", "compare_loo", "compare_fits",
           "load_pointwise", "K_WARN", "MIN_DELTA", "N_SE"]

#: Pareto k above which an observation's importance-sampling estimate is unreliable
#: (Vehtari, Gelman & Gabry 2017, Stat. Comput. 27, 1413; Vehtari et al. 2024, JMLR 25(72), 1,
#: whose sample-size-dependent bound min(1 - 1/log10(S), 0.7) is 0.7 for S > 2154 draws)
K_WARN = 0.7
#: an |elpd difference| below this is never called meaningful (the "smaller than 4" guidance
#: of Sivula, Magnusson, Matamoros & Vehtari, arXiv:2008.10296) ...
MIN_DELTA = 4.0
#: ... nor one within this many standard errors of zero (common practice)
N_SE = 2.0


@dataclass(frozen=True)
class LooResult:
    """PSIS-LOO of one fit.

    Attributes
    ----------
    elpd : float
        Sum of the pointwise elpd_i.
    se : float
        Its standard error, sqrt(n var(elpd_i)).
    p_loo : float
        Effective number of parameters.
    elpd_i, pareto_k, p_loo_i : ndarray (n_obs,)
    n_samples : int
    labels : tuple of str
        The observations, in order.
    """

    elpd: float
    se: float
    p_loo: float
    elpd_i: np.ndarray
    pareto_k: np.ndarray
    p_loo_i: np.ndarray
    n_samples: int
    labels: tuple[str, ...] = ()

    @property
    def n_obs(self) -> int:
        return int(self.elpd_i.size)

    def bad_k(self, threshold: float = K_WARN) -> list[str]:
        """Labels (or indices) of observations whose Pareto k exceeds ``threshold``."""
        labels = self.labels or tuple(str(i) for i in range(self.n_obs))
        return [labels[i] for i in np.flatnonzero(self.pareto_k > threshold)]


def _array_stats():
    try:
        from arviz_stats.base import array_stats
    except ImportError:
        raise InferError("model comparison needs arviz-stats; install it with "
                         "pip install 'infer-sheetfrag[report]' (or pip install arviz-stats)") from None
    return array_stats


def psis_loo(loglike, *, labels=(), r_eff: float = 1.0) -> LooResult:
    """PSIS-LOO from a pointwise log-likelihood array.

    Parameters
    ----------
    loglike : array_like (n_samples, n_obs)
        Log-likelihood of each observation for each posterior sample.
    labels : sequence of str, optional
        Names of the observations.
    r_eff : float
        Relative efficiency of the samples (1 for the thinned, nearly
        independent posterior samples a fit stores).

    Raises
    ------
    InferError
        For a wrongly shaped or non-finite array.
    """
    ll = np.asarray(loglike, dtype=float)
    if ll.ndim != 2 or ll.shape[0] < 10 or ll.shape[1] < 1:
        raise InferError(f"pointwise log-likelihood must be (n_samples >= 10, n_obs >= 1), got "
                         f"shape {ll.shape}")
    if not np.all(np.isfinite(ll)):
        raise InferError("pointwise log-likelihood holds non-finite values; the fit kept samples "
                         "the model rules out (refit)")
    stats = _array_stats()
    elpd_i, k, p_i = stats.loo(ll.T, chain_axis=None, draw_axis=-1, r_eff=r_eff)
    elpd_i = np.asarray(elpd_i, dtype=float)
    n = elpd_i.size
    return LooResult(elpd=float(elpd_i.sum()), se=float(np.sqrt(n * np.var(elpd_i))),
                     p_loo=float(np.sum(p_i)), elpd_i=elpd_i, pareto_k=np.asarray(k, dtype=float),
                     p_loo_i=np.asarray(p_i, dtype=float), n_samples=int(ll.shape[0]),
                     labels=tuple(str(x) for x in labels))


@dataclass(frozen=True)
class Comparison:
    """Two fits compared by PSIS-LOO.

    Attributes
    ----------
    names : (str, str)
    loo : (LooResult, LooResult)
    delta : float
        elpd of the first minus elpd of the second.
    se : float
        Standard error of ``delta`` from the pointwise differences.
    preferred : int or None
        0 or 1 when the difference is meaningful, else None.
    verdict : str
        Plain-language conclusion.
    warnings : list of str
    """

    names: tuple[str, str]
    loo: tuple[LooResult, LooResult]
    delta: float
    se: float
    preferred: int | None
    verdict: str
    warnings: list = field(default_factory=list)

    def to_markdown(self, *, title: str = "Model comparison (PSIS-LOO)") -> str:
        """compare.md: table, verdict, Pareto k diagnostics, method."""
        a, b = self.loo
        lines = [f"# {title}", "",
                 "| fit | elpd_loo | SE | p_loo | observations | Pareto k > 0.7 |",
                 "|---|---|---|---|---|---|"]
        for name, r in zip(self.names, self.loo, strict=True):
            lines.append(f"| {name} | {r.elpd:.2f} | {r.se:.2f} | {r.p_loo:.2f} | {r.n_obs} | "
                         f"{len(r.bad_k())} |")
        lines += ["", f"elpd difference ({self.names[0]} minus {self.names[1]}): "
                      f"**{self.delta:+.2f} +- {self.se:.2f}** (standard error of the paired "
                      f"pointwise differences).", "", "## Verdict", "", self.verdict, ""]
        if self.warnings:
            lines += ["## Warnings", ""] + [f"* {w}" for w in self.warnings] + [""]
        lines += ["## Pointwise diagnostics", "",
                  f"| observation | elpd_i {self.names[0]} | elpd_i {self.names[1]} | difference | "
                  f"k {self.names[0]} | k {self.names[1]} |", "|---|---|---|---|---|---|"]
        labels = a.labels or tuple(str(i) for i in range(a.n_obs))
        for i, lab in enumerate(labels):
            lines.append(f"| {lab} | {a.elpd_i[i]:.2f} | {b.elpd_i[i]:.2f} | "
                         f"{a.elpd_i[i] - b.elpd_i[i]:+.2f} | {a.pareto_k[i]:.2f} | "
                         f"{b.pareto_k[i]:.2f} |")
        lines += ["", "## Method", "",
                  "Pareto-smoothed importance-sampling leave-one-out cross-validation (Vehtari, "
                  "Gelman & Gabry 2017, Stat. Comput. 27, 1413), computed with arviz-stats from "
                  f"the stored pointwise log-likelihoods ({a.n_samples} and {b.n_samples} posterior "
                  "samples). elpd_loo is the expected log predictive density of each observation "
                  "(clump spacing or mass) when it is left out, summed; higher is better. A "
                  f"difference is called meaningful only when it exceeds both {MIN_DELTA:g} (the "
                  "guidance of Sivula et al., arXiv:2008.10296) and "
                  f"{N_SE:g} standard errors (common practice). Pareto k > {K_WARN:g} marks "
                  "observations whose leave-one-out estimate is unreliable (Vehtari et al. "
                  "2017).", ""]
        return "\n".join(lines)

    def to_text(self) -> str:
        """Short terminal rendering."""
        out = [f"{'fit':<32} {'elpd_loo':>9} {'SE':>6} {'p_loo':>6} {'k>0.7':>6}"]
        for name, r in zip(self.names, self.loo, strict=True):
            out.append(f"{name:<32} {r.elpd:>9.2f} {r.se:>6.2f} {r.p_loo:>6.2f} "
                       f"{len(r.bad_k()):>6d}")
        out.append(f"difference ({self.names[0]} - {self.names[1]}): {self.delta:+.2f} "
                   f"+- {self.se:.2f}")
        out.append(self.verdict)
        out += [f"warning: {w}" for w in self.warnings]
        return "\n".join(out)


def compare_loo(a: LooResult, b: LooResult, *, names: tuple[str, str] = ("fit 1", "fit 2"),
                min_delta: float = MIN_DELTA, n_se: float = N_SE) -> Comparison:
    """Compare two PSIS-LOO results on the same observations.

    The difference is called meaningful only when |delta| > ``min_delta`` and
    |delta| > ``n_se`` standard errors; otherwise the verdict is "no meaningful
    preference".

    Raises
    ------
    InferError
        If the two results are not over the same observations.
    """
    if a.n_obs != b.n_obs or (a.labels and b.labels and a.labels != b.labels):
        raise InferError("the two fits are not over the same observations; compare fits of the "
                         "same catalog and spacing method")
    diff = a.elpd_i - b.elpd_i
    delta = float(diff.sum())
    se = float(np.sqrt(diff.size * np.var(diff)))
    z = abs(delta) / se if se > 0 else np.inf
    n1, n2 = names
    if abs(delta) <= min_delta or z <= n_se:
        preferred = None
        why = [w for w, c in ((f"smaller than {min_delta:g}", abs(delta) <= min_delta),
                              (f"within {n_se:g} standard errors of zero", z <= n_se)) if c]
        verdict = (f"No meaningful preference: the elpd difference {delta:+.2f} +- {se:.2f} is "
                   f"{' and '.join(why)}. The clump spacings and masses do not distinguish {n1} "
                   f"from {n2}; report both, or prefer the simpler one on other grounds.")
    else:
        preferred = 0 if delta > 0 else 1
        win, lose = (n1, n2) if delta > 0 else (n2, n1)
        verdict = (f"The data favour {win}: its elpd is higher by {abs(delta):.2f} +- {se:.2f} "
                   f"({z:.1f} standard errors). This says that {win} predicts left-out clump "
                   f"spacings and masses better than {lose}; it does not by itself show that "
                   f"the physics of {lose} is wrong.")
    warnings = []
    for name, r in zip(names, (a, b), strict=True):
        bad = r.bad_k()
        if bad:
            shown = ", ".join(bad[:6]) + (" ..." if len(bad) > 6 else "")
            verb = "has" if len(bad) == 1 else "have"
            warnings.append(f"{name}: {len(bad)} of {r.n_obs} observations {verb} Pareto k > "
                            f"{K_WARN:g} ({shown}); {'its' if len(bad) == 1 else 'their'} leave-one-out "
                            f"{'estimate is' if len(bad) == 1 else 'estimates are'} unreliable "
                            f"and the comparison may be off. Check by refitting without them, or "
                            f"with more posterior samples.")
    if a.n_obs < 30:
        warnings.append(f"only {a.n_obs} observations: the standard error of the difference is "
                        f"itself rough; do not read much into differences of a few units.")
    return Comparison((n1, n2), (a, b), delta, se, preferred, verdict, warnings)


def load_pointwise(fit_dir: str | Path) -> tuple[np.ndarray, tuple[str, ...]]:
    """(loglike, labels) of a fit folder's pointwise.npz.

    Raises
    ------
    ChainError
        If the file is missing or unreadable.
    """
    p = Path(fit_dir) / "pointwise.npz"
    if not p.is_file():
        raise ChainError(f"{fit_dir}: pointwise.npz is missing; this is not a finished fit "
                         f"folder (run `infer fit` to the end)")
    try:
        with np.load(p, allow_pickle=False) as z:
            ll = np.asarray(z["loglike"], dtype=float)
            labels = tuple(str(x) for x in z["labels"])
    except (OSError, KeyError, ValueError, TypeError) as exc:
        raise ChainError(f"{p}: unreadable ({type(exc).__name__}); refit the folder") from None
    if ll.ndim != 2 or ll.shape[1] != len(labels):
        raise ChainError(f"{p}: inconsistent shapes; refit the folder")
    return ll, labels


def _run_info(fit_dir: Path) -> dict:
    from ..outputs.files import RUN_FILE

    p = fit_dir / RUN_FILE
    try:
        info = json.loads(p.read_text())
        str(info["source"])
        str(info["region"])
    except (OSError, ValueError, KeyError, TypeError):
        raise ChainError(f"{fit_dir}: {RUN_FILE} is missing or unreadable; not a fit folder") from None
    return info


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def _fit_name(fit_dir: Path) -> str:
    from .config import load_config

    try:
        mode = load_config(fit_dir / "config.toml").model.diffusion
    except InferError:
        return fit_dir.name
    return f"{fit_dir.name} ({mode})"


def compare_fits(dir1: str | Path, dir2: str | Path) -> Comparison:
    """PSIS-LOO comparison of two fit folders of the same catalog and observations.

    Raises
    ------
    ChainError
        A folder is not a finished fit.
    InferError
        The fits are of different catalogs, regions or observations.
    """
    d1, d2 = Path(dir1), Path(dir2)
    for d in (d1, d2):
        if not d.is_dir():
            raise ChainError(f"{d}: no such fit folder")
    r1, r2 = _run_info(d1), _run_info(d2)
    if r1["region"] != r2["region"]:
        raise InferError(f"the fits are of different regions ({r1['region']} and {r2['region']}); "
                         f"compare fits of the same catalog and region")
    s1, s2 = Path(r1["source"]), Path(r2["source"])
    h1, h2 = _digest(s1), _digest(s2)
    if h1 is None or h2 is None:
        if s1.resolve() != s2.resolve():
            raise InferError(f"cannot check that the fits used the same catalog ({s1} and {s2}; "
                             f"{s1 if h1 is None else s2} is no longer there)")
    elif h1 != h2:
        raise InferError(f"the fits used different catalogs ({s1} and {s2}); compare fits of the "
                         f"same catalog")
    ll1, lab1 = load_pointwise(d1)
    ll2, lab2 = load_pointwise(d2)
    if lab1 != lab2:
        raise InferError(f"the fits are not over the same observations ({len(lab1)} and "
                         f"{len(lab2)}; spacing method or exclusions differ); compare fits with "
                         f"the same observations")
    n1, n2 = _fit_name(d1), _fit_name(d2)
    if n1 == n2:
        n1, n2 = f"{n1} [1]", f"{n2} [2]"
    return compare_loo(psis_loo(ll1, labels=lab1), psis_loo(ll2, labels=lab2), names=(n1, n2))
