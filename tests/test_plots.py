"""Figures of a fit (infer.outputs.corner, .predictive, .figures), the predictive statistics
(infer.inference.predictive) and the ``infer plot`` command.

The fit is synthetic and small: clump spacings around 50 au and masses
around 20 Jupiter masses, a Posterior built from prior draws (no sampler
run, no catalog file). References outside the project: scipy.stats.lognorm
for the predictive draws, numpy quantiles for the panel titles,
astropy.constants (through infer.constants) for au and the Jupiter mass,
matplotlib.image for reading the PNG back.
"""

from __future__ import annotations

import types

import numpy as np
import pytest
from scipy import stats

from infer.cli import main
from infer.constants import AU, M_JUP
from infer.inference.chainfile import ChainData
from infer.inference.config import parse_config
from infer.inference.model import Observations, build_model
from infer.inference.posterior import Posterior
from infer.inference.predictive import ecdf_check, predictive_draws
from infer.outputs import corner
from infer.outputs import figures as plots
from infer.outputs.canvas import close_figure
from infer.outputs.fitfolder import LoadedFit
from infer.outputs.predictive import predictive_figure

LN10 = np.log(10.0)


def _config(diffusion="ionization", *, scatter=None, **model):
    """Run config with Sigma, T and the rotation fixed; scatters fixed when ``scatter`` is given."""
    priors = {
        "mass_to_flux": {"dist": "loguniform", "low": 0.3, "high": 10},
        "surface_density": {"value": "80 g/cm2"},
        "temperature": {"value": "40 K"},
        "stellar_mass": {"value": "0.3 solMass"},
        "radius": {"value": "120 au"},
        "spacing_scatter": {"dist": "halfnormal", "scale_dex": 0.2},
        "mass_scatter": {"dist": "halfnormal", "scale_dex": 0.3},
    }
    if scatter is not None:
        priors["spacing_scatter"] = {"value": scatter}
        priors["mass_scatter"] = {"value": scatter}
    if diffusion == "ionization":
        priors["ionization"] = {"dist": "loguniform", "low": 1e-12, "high": 1e-7}
    return parse_config({"model": {"diffusion": diffusion, **model}, "priors": priors,
                         "sampler": {"walkers": 16, "max_steps": 300, "seed": 1}})


def _observations(errors=True):
    rng = np.random.default_rng(7)
    s = 50.0 * AU * np.exp(0.2 * rng.standard_normal(9))
    m = 20.0 * M_JUP * np.exp(0.3 * rng.standard_normal(10))
    if not errors:
        return Observations.from_arrays(spacings=s, masses=m)
    return Observations.from_arrays(spacings=s, spacing_errors=0.1 * s, masses=m,
                                    mass_errors=0.2 * m)


def _posterior(model, theta) -> Posterior:
    """A Posterior of the given ln-parameter rows, derived as posterior_from_chain does."""
    theta = np.atleast_2d(theta)
    return Posterior(tuple(model.names), theta, model.values(theta), model.derived(theta),
                     model(theta), 0, 1)


def _prior_theta(model, n=600, seed=3):
    th = model.prior_sample(np.random.default_rng(seed), 3 * n)
    th = th[np.isfinite(model(th))]
    return th[:n]


@pytest.fixture(scope="module")
def fit():
    model = build_model(_config(scatter=0.15), _observations())
    return model, _posterior(model, _prior_theta(model))


@pytest.fixture(scope="module")
def corner_fig(fit):
    model, post = fit
    fig = corner.corner_figure(post, model, title="synthetic",
                              truths={"wavelength": 50.0, "ionization": 1e-9})
    yield fig
    close_figure(fig)


# ------------------------------------------------------------------- corner
def test_corner_has_one_panel_per_pair_of_columns(fit, corner_fig):
    model, post = fit
    cols = corner.corner_columns(post, model)
    # 2 sampled (mass_to_flux, ionization) + B, eta_total, lambda_m, M_frag
    assert [c.name for c in cols] == ["mass_to_flux", "ionization", "field", "eta_total",
                                      "wavelength", "fragment_mass"]
    assert len(corner_fig.axes) == len(cols) ** 2


def test_corner_labels_carry_units(fit, corner_fig):
    model, post = fit
    k = len(corner.corner_columns(post, model))
    bottom = [ax.get_xlabel() for ax in corner_fig.axes[k * (k - 1):]]
    for unit in ("[mG]", "[cm$^2$ s$^{-1}$]", "[au]", "[$M_\\mathrm{J}$]"):
        assert any(unit in lab for lab in bottom), (unit, bottom)
    # the first column's y labels are the same labels, rows 1..k-1
    left = [corner_fig.axes[i * k].get_ylabel() for i in range(1, k)]
    assert left == bottom[1:]
    assert "log_{10}" in bottom[1] and "x_e" in bottom[1]


def test_corner_titles_are_medians_and_68_percent_intervals(fit, corner_fig):
    model, post = fit
    cols = corner.corner_columns(post, model)
    k = len(cols)
    i = [c.name for c in cols].index("wavelength")
    title = corner_fig.axes[i * k + i].get_title()
    x = cols[i].values            # lambda_m in au, or its log10 when the column is logged
    expect = np.log10(post.derived["wavelength"]) if cols[i].log else post.derived["wavelength"]
    np.testing.assert_allclose(x, expect)
    lo, mid, hi = np.quantile(x, [0.16, 0.5, 0.84])   # numpy reference
    fmt = corner._title_format(x)
    assert f"{mid:{fmt}}" in title
    assert f"-{mid - lo:{fmt}}" in title and f"+{hi - mid:{fmt}}" in title
    note = "\n".join(t.get_text() for t in corner_fig.texts)
    assert "16-84%" in note and "39.3%" in note and "86.5%" in note
    assert "synthetic" in corner_fig.get_suptitle()


def test_log_columns_are_log10_of_the_values(fit):
    model, post = fit
    cols = {c.name: c for c in corner.corner_columns(post, model)}
    np.testing.assert_allclose(cols["ionization"].values, np.log10(post.values["ionization"]))
    np.testing.assert_allclose(cols["eta_total"].values, np.log10(post.derived["eta_total"]))
    assert cols["ionization"].transform(1e-9) == pytest.approx(-9.0)
    # a narrow positive quantity stays linear, one spanning two decades is logged
    narrow = corner._column("temperature", np.linspace(30.0, 50.0, 101), "$T$ [K]")
    wide = corner._column("wavelength", np.geomspace(10.0, 1000.0, 101), "$\\lambda$ [au]")
    assert not narrow.log and narrow.transform(40.0) == 40.0 and narrow.label == "$T$ [K]"
    assert wide.log and wide.label == "$\\log_{10}\\,\\lambda$ [au]"
    np.testing.assert_allclose(wide.values, np.linspace(1.0, 3.0, 101))


def test_ideal_mode_drops_the_zero_diffusivity():
    model = build_model(_config("ideal"), _observations())
    post = _posterior(model, _prior_theta(model, n=200))
    cols = {c.name: c for c in corner.corner_columns(post, model)}
    assert list(cols) == ["mass_to_flux", "spacing_scatter", "mass_scatter", "field",
                          "wavelength", "fragment_mass"]        # no eta_total: it is 0
    assert not cols["spacing_scatter"].log            # a width in dex is never logged again
    assert "[dex]" in cols["mass_scatter"].label


# --------------------------------------------------------------- predictive
@pytest.mark.parametrize("key, derived, scatter_dex, rel_err",
                         [("spacing", "wavelength", 0.15, 0.0), ("mass", "fragment_mass", 0.25, 0.2)])
def test_predictive_draws_match_the_lognormal(key, derived, scatter_dex, rel_err):
    """One fixed parameter point: the predictive is exactly lognormal (scipy reference).

    ln x ~ Normal(ln c, (scatter ln10)^2 + (dx/x)^2) with c the model's
    wavelength or fragment mass at that point (calibration fixed at 1).
    """
    obs = _observations(errors=False)
    if rel_err:
        s, m = np.exp(obs.ln_spacing), np.exp(obs.ln_mass)
        obs = Observations.from_arrays(spacings=s, spacing_errors=rel_err * s, masses=m,
                                       mass_errors=rel_err * m)
    model = build_model(_config(scatter=scatter_dex), obs)
    point = {"mass_to_flux": 2.0, "ionization": 1e-9}
    theta = np.log([[point[n] for n in model.names]] * 50)
    post = _posterior(model, theta)
    centre = float(post.derived[derived][0])
    assert np.isfinite(centre)
    n = 40000
    x = predictive_draws(post, model, observable=key, n_draws=n, seed=11)
    shape = np.sqrt((scatter_dex * LN10) ** 2 + rel_err ** 2)
    ref = stats.lognorm(s=shape, scale=centre)
    p = np.array([0.025, 0.16, 0.5, 0.84, 0.975])
    got = np.log(np.quantile(x, p))
    want = np.log(ref.ppf(p))
    # sampling error of a quantile of ln x: shape * sqrt(p (1 - p) / n) / phi(z_p); allow 5 of them
    se = shape * np.sqrt(p * (1 - p) / n) / stats.norm.pdf(stats.norm.ppf(p))
    assert np.all(np.abs(got - want) < 5 * se), (got - want) / se
    assert stats.kstest(x, ref.cdf).pvalue > 1e-3   # fixed seed; fails only on a real mismatch


def test_predictive_p_value_flags_a_misfit():
    rng = np.random.default_rng(5)
    mu, sd = np.zeros(400), np.full(400, 0.3)
    grid = np.linspace(-2, 2, 50)
    _, _, p_ok = ecdf_check(mu, sd, 0.3 * rng.standard_normal(12), grid, rng)
    _, _, p_bad = ecdf_check(mu, sd, 1.5 + 0.3 * rng.standard_normal(12), grid, rng)
    assert p_ok > 0.05 and p_bad < 0.01


def test_predictive_figure_panels_units_and_data(fit):
    model, post = fit
    fig = predictive_figure(post, model, n_draws=500, title="synthetic")
    try:
        assert len(fig.axes) == 6            # per observable: density, observed strip, ECDF
        xlabels = [ax.get_xlabel() for ax in fig.axes]
        assert "spacing [au]" in xlabels and "mass [$M_\\mathrm{J}$]" in xlabels
        strip = fig.axes[1]
        xs = np.sort(np.concatenate([ln.get_xdata() for ln in strip.get_lines()]))
        np.testing.assert_allclose(xs, np.sort(np.exp(model.obs.ln_spacing)) / AU, rtol=1e-12)
    finally:
        close_figure(fig)


def test_predictive_figure_skips_an_unused_observable():
    model = build_model(_config(scatter=0.2, use_masses=False), _observations())
    post = _posterior(model, _prior_theta(model, n=200))
    fig = predictive_figure(post, model, n_draws=300)
    try:
        assert len(fig.axes) == 3
        assert all("mass" not in ax.get_xlabel() for ax in fig.axes)
    finally:
        close_figure(fig)


# ---------------------------------------------------------- writer and CLI
def _fake_chain(model, theta, n_walkers=16):
    n_steps = theta.shape[0] // n_walkers
    th = theta[: n_steps * n_walkers].reshape(n_steps, n_walkers, -1)
    lp = model(th.reshape(-1, th.shape[2])).reshape(n_steps, n_walkers)
    return ChainData(th, lp, np.zeros(n_walkers), tuple(model.names), "x", None, [], {})


def test_infer_plot_writes_the_four_figures(tmp_path, monkeypatch, capsys):
    import matplotlib.image as mpimg

    model = build_model(_config("ideal", scatter=0.2), _observations())
    chain = _fake_chain(model, _prior_theta(model, n=480))
    region = types.SimpleNamespace(name="synthetic region")
    tau = np.ones(model.ndim)
    calls = []

    def fake_load(folder):
        calls.append(str(folder.path))
        return LoadedFit(None, model, region, chain, tau)

    monkeypatch.setattr("infer.outputs.fitfolder.FitFolder.load", fake_load)
    (tmp_path / "chain.h5").write_bytes(b"placeholder")
    assert main(["plot", str(tmp_path)]) == 0
    assert calls == [str(tmp_path)]
    out = capsys.readouterr().out.split()
    names = ["corner.pdf", "corner.png", "predictive.pdf", "predictive.png"]
    assert [p.rsplit("/", 1)[-1] for p in out] == names
    # atomic writes leave nothing else behind (no temporary files)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(names + ["chain.h5"])
    for n in names:
        assert (tmp_path / n).stat().st_size > 1000
    assert (tmp_path / "corner.pdf").read_bytes()[:5] == b"%PDF-"
    img = mpimg.imread(tmp_path / "predictive.png")
    assert img.ndim == 3 and img.shape[2] in (3, 4)
    assert img.shape[1] == round(12.5 * 130)          # figure width (in) times dpi
    img = mpimg.imread(tmp_path / "corner.png")
    assert img.shape[0] > img.shape[1] > 1000   # square-ish, title band on top


def test_infer_plot_format_option_reaches_the_writer(tmp_path, monkeypatch, capsys):
    model = build_model(_config("ideal", scatter=0.2, use_masses=False), _observations())
    chain = _fake_chain(model, _prior_theta(model, n=160))
    monkeypatch.setattr("infer.outputs.fitfolder.FitFolder.load",
                        lambda folder: LoadedFit(None, model, "r", chain, np.ones(model.ndim)))
    seen = {}

    def fake_write(out_dir, *, post, model, region, formats):
        seen.update(out_dir=out_dir, n=post.n, region=region, formats=formats)
        return [tmp_path / "corner.png"]

    monkeypatch.setattr("infer.outputs.figures.write_figures", fake_write)
    assert main(["plot", str(tmp_path), "--format", " PNG, png"]) == 0
    assert seen["formats"] == ("png",) and seen["region"] == "r" and seen["n"] > 0
    assert capsys.readouterr().out.strip() == str(tmp_path / "corner.png")


def test_infer_plot_missing_folder_is_a_user_error(tmp_path, capsys):
    assert main(["plot", str(tmp_path / "nope")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "nope" in err and "Traceback" not in err


def test_infer_plot_bad_format(tmp_path, capsys):
    assert main(["plot", str(tmp_path), "--format", "gif"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--format" in err and "gif" in err
    assert list(tmp_path.iterdir()) == []


def test_write_figures_rejects_unknown_format(fit, tmp_path):
    model, post = fit
    with pytest.raises(ValueError, match="pdf, png"):
        plots.write_figures(tmp_path, post=post, model=model, formats=("svg",))
    assert list(tmp_path.iterdir()) == []
