"""``infer report``: the PDF/Markdown bundle of a real (tiny) fit, the growth-rate band, and errors.

The growth-rate band is checked against the closed-form flux-frozen growth
rate of the thin sheet, gamma^2 = 2 pi G Sigma k (1 - mu0^-2) - kappa^2 -
(c_s^2 + v_A^2) k^2 (docs/physics.md, "Flux freezing"; the non-magnetic limit is the
rotating-disk relation of Toomre 1964, ApJ 139, 1217), with constants from
astropy.constants.
"""

from __future__ import annotations

import copy
import shutil
from pathlib import Path

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from conftest import BASE_CONFIG  # noqa: E402  (the shared example config)

from infer.cli import main


def _config(diffusion: str, walkers: int, steps: int, seed: int):
    from infer.inference.config import parse_config

    d = copy.deepcopy(BASE_CONFIG)
    d["model"]["diffusion"] = diffusion
    if diffusion == "ideal":
        del d["priors"]["ionization"]
    d["sampler"] = {"walkers": walkers, "max_steps": steps, "seed": seed}
    return parse_config(d)


@pytest.fixture(scope="module")
def fits(demo_fit, tmp_path_factory):
    """The session's shared fit (diffusion by ionization, 16 walkers x 300 steps) and one tiny
    ideal-MHD fit of the same catalog, made here."""
    from infer.pipeline.fit import fit_catalog

    root = tmp_path_factory.mktemp("report")
    ideal = fit_catalog(demo_fit.catalog, _config("ideal", 10, 200, seed=2), root / "ideal",
                        progress=False, plots=False).out_dir
    return {"ionization": demo_fit.path, "ideal": ideal}


def _copy(src: Path, dst: Path) -> Path:
    """A private copy of a fit folder, without figures (the report must make them)."""
    shutil.copytree(src, dst, ignore=shutil.ignore_patterns("corner.*", "predictive.*"))
    return dst


def _snapshot(d: Path):
    return {p.name: (p.stat().st_size, p.stat().st_mtime_ns) for p in sorted(d.iterdir())}


@pytest.mark.slow
def test_report_bundle(fits, tmp_path, capsys):
    d = _copy(fits["ionization"], tmp_path / "fit")
    assert not (d / "corner.png").exists()
    rc = main(["report", str(d), "--forecast-field", "20%", "--forecast-temperature", "0.1"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    for name in ("report.pdf", "report.md", "spectrum_band.png", "corner.png", "predictive.png"):
        assert (d / name).is_file(), name
    pdf = (d / "report.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")
    # inputs, table, corner, predictive, band, summary + forecasts: at least six pages
    assert pdf.count(b"/Type /Page") - pdf.count(b"/Type /Pages") >= 6
    md = (d / "report.md").read_text()
    for section in ("## Model", "## Priors", "## Geometry and dust conventions", "## Catalog",
                    "## Posterior summary", "## What the data do and do not constrain",
                    "## Forecast: a field measurement with 20% precision",
                    "## Forecast: a temperature measurement with 10% precision"):
        assert section in md, section
    for ref in ("(corner.png)", "(predictive.png)", "(spectrum_band.png)", "summary.tex",
                "mass_to_flux: loguniform(low 0.1, high 10) (sampled)"):
        assert ref in md, ref
    assert "| mass_to_flux | - |" in md and "| field | mG |" in md
    assert "Effective sample size of the weights" in md
    # the paragraph is printed and says what the result is conditional on
    assert "conditional on the model" in out
    assert "Forecast: a field measurement with 20% precision" in out


def test_band_matches_flux_frozen_closed_form():
    from infer.inference.model import Observations, build_model
    from infer.outputs.band import growth_rate_grid

    model = build_model(_config("ideal", 10, 100, 1),
                        Observations.from_arrays(spacings=[7e14], masses=[3e31]))
    theta = model.prior_sample(np.random.default_rng(0), 64)
    lam = np.geomspace(5.0, 800.0, 120)
    rate, _ = growth_rate_grid(model, theta, lam)

    v = model.values(theta)
    g = const.G.cgs.value
    sigma, temp, mu0 = v["surface_density"][:, None], v["temperature"][:, None], v["mass_to_flux"][:, None]
    kappa = np.sqrt(g * v["stellar_mass"] * const.M_sun.cgs.value / (v["radius"] * const.au.cgs.value) ** 3)
    cs2 = const.k_B.cgs.value * temp / (2.33 * 1.00784 * const.u.cgs.value)
    rho_c = np.pi * g * sigma**2 / (2.0 * cs2)                      # P_ext = 0
    b = 2.0 * np.pi * np.sqrt(g) * sigma / mu0
    va2 = b**2 / (4.0 * np.pi * rho_c)
    k = 2.0 * np.pi / (lam[None, :] * const.au.cgs.value)
    g2 = 2 * np.pi * g * sigma * k * (1 - mu0**-2) - kappa[:, None] ** 2 - (cs2 + va2) * k**2
    expected = np.sqrt(np.maximum(g2, 0.0)) * (1.0 * u.yr).to_value(u.s)
    assert np.any(expected > 0) and np.any(expected == 0)
    np.testing.assert_allclose(rate, expected, rtol=1e-9, atol=1e-12 * expected.max())


@pytest.mark.slow
def test_band_quantiles_and_peak(fits):
    from infer.inference.posterior import posterior_from_chain
    from infer.outputs.band import growth_rate_grid, spectrum_band
    from infer.pipeline.fit import load_fit

    _, model, _, chain, tau = load_fit(fits["ionization"])
    post = posterior_from_chain(model, chain, tau)
    band = spectrum_band(post, model, n_samples=200, n_points=300)
    assert np.all(band.p02_5 <= band.p16) and np.all(band.p16 <= band.median)
    assert np.all(band.median <= band.p84) and np.all(band.p84 <= band.p97_5)
    np.testing.assert_allclose(band.spacings, np.exp(model.obs.ln_spacing) / const.au.cgs.value)
    # the grid maximum of each sample's curve is its fastest mode (grid steps of ~1.5% in lambda
    # put the sampled maximum within 0.1% of the peak, the curve being quadratic there)
    rate, fw = growth_rate_grid(model, post.theta[:200], band.wavelength)
    peak = rate.max(axis=1)
    ok = np.isfinite(fw.growth_rate)
    yr = (1.0 * u.yr).to_value(u.s)
    np.testing.assert_allclose(peak[ok], fw.growth_rate[ok] * yr, rtol=2e-3)


@pytest.mark.slow
@pytest.mark.parametrize("damage", ["missing", "garbage", "truncated", "empty_config"])
def test_broken_folder_exit_2_and_unchanged(fits, tmp_path, capsys, damage):
    d = _copy(fits["ionization"], tmp_path / "fit")
    chain = d / "chain.h5"
    if damage == "missing":
        chain.unlink()
    elif damage == "garbage":
        chain.write_bytes(b"not an hdf5 file" * 100)
    elif damage == "truncated":
        data = chain.read_bytes()
        chain.write_bytes(data[: len(data) // 3])
    else:
        (d / "config.toml").write_text("[model\n")
    before = _snapshot(d)
    rc = main(["report", str(d), "--forecast-field", "20%"])
    out, err = capsys.readouterr()
    assert rc == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("infer report: error:")
    assert ("chain" in lines[0]) if damage != "empty_config" else ("config" in lines[0])
    assert "Traceback" not in err and out == ""
    assert _snapshot(d) == before


@pytest.mark.slow
@pytest.mark.parametrize(("argv", "msg"), [
    (["--forecast-field", "20"], "write 20%"),
    (["--forecast-column-density", "zero"], "--forecast-column-density"),
    (["--out", "x.md"], "--out applies to --compare"),
])
def test_bad_options_exit_2_and_unchanged(fits, tmp_path, capsys, argv, msg):
    d = _copy(fits["ionization"], tmp_path / "fit")
    before = _snapshot(d)
    assert main(["report", str(d), *argv]) == 2
    assert msg in capsys.readouterr().err
    assert _snapshot(d) == before


@pytest.mark.slow
def test_compare_real_fits_of_two_diffusion_modes(fits, tmp_path, capsys):
    pytest.importorskip("arviz_stats")    # the comparison's PSIS-LOO (the report extra)
    out = tmp_path / "compare.md"
    rc = main(["report", str(fits["ionization"]), str(fits["ideal"]), "--compare", "--out", str(out)])
    text, err = capsys.readouterr()
    assert rc == 0, err
    md = out.read_text()
    assert "ionization (ionization)" in md and "ideal (ideal)" in md
    assert "spacing:C" in md and "mass:C8" in md
    # both models can place the fastest wavelength at the observed spacing, and the fragment
    # mass Sigma lambda_m^2 follows from it: spacings and masses cannot tell the modes apart
    assert "No meaningful preference" in md
    assert "No meaningful preference" in text
