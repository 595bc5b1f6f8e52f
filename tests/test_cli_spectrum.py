"""``infer spectrum`` and :mod:`infer.physics.spectrum`: CSV contents, figures, errors, atomic writes.

Stable conditions are refused (exit 2, no file), as documented in
infer/commands/spectrum.py.
"""

from __future__ import annotations

import os

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from infer import InferError, predict
from infer.physics.spectrum import growth_spectrum, write_spectrum

M_H = 1.00784 * u.u          # standard atomic weight of H (IUPAC), docs/physics.md "Inputs"
DISK = ["--surface-density", "60 g/cm2", "--temperature", "35 K", "--mass-to-flux", "1.6",
        "--ionization", "1e-10", "--stellar-mass", "0.5 solMass", "--radius", "80 au"]
ROTATING = ["--surface-density", "50 g/cm2", "--temperature", "30 K", "--kappa", "2e-10 1/s"]


def read_csv(path):
    with open(path) as fh:
        header = fh.readline().strip()
    data = np.loadtxt(path, delimiter=",", skiprows=1)
    return header, data


def leftovers(folder):
    return [p for p in os.listdir(folder) if p.endswith(".tmp")]


def test_csv_matches_rotating_disk_dispersion_relation(cli, tmp_path):
    # Field-free rotating disk: gamma^2 = -(kappa^2 + c_s^2 k^2 - 2 pi G Sigma k), k = 2 pi/lambda
    # (Toomre 1964, ApJ 139, 1217), evaluated with astropy at the file's wavelengths.
    out = tmp_path / "rotating.csv"
    code, stdout, err = cli(["spectrum", *ROTATING, "--out", str(out), "--points", "300"])
    assert code == 0 and err == "" and str(out) in stdout
    header, data = read_csv(out)
    assert header == "wavelength_au,growth_rate_per_yr,growth_time_yr"
    lam, rate, time = data.T
    assert data.shape == (300, 3) and np.all(np.diff(lam) > 0)
    sigma, kappa = 50 * u.g / u.cm**2, 2e-10 / u.s
    cs2 = const.k_B * 30 * u.K / (2.33 * M_H)
    k = 2 * np.pi / (lam * u.au)
    omega2 = (kappa**2 + cs2 * k**2 - 2 * np.pi * const.G * sigma * k).to_value(u.yr**-2)
    expected = np.sqrt(np.maximum(-omega2, 0.0))
    # 11 significant digits in the file; absolute floor for round-off of omega^2 at the edges
    np.testing.assert_allclose(rate, expected, rtol=1e-9, atol=1e-7 * expected.max())
    grows = rate > 0
    np.testing.assert_allclose(time[grows], 1 / rate[grows], rtol=1e-9)
    assert np.all(np.isinf(time[~grows]))
    # margins: the grid reaches beyond both band edges, so both ends are stable
    assert not grows[0] and not grows[-1] and grows.sum() > 100


def test_csv_magnetized_diffusive_against_numpy_roots(cli, tmp_path):
    # the cubic of docs/physics.md ("Dispersion relation"), written out dimensionally with
    # astropy constants and solved with numpy.roots (reference library) at each wavelength
    # of the file.
    out = tmp_path / "disk.csv"
    code, _, _ = cli(["spectrum", *DISK, "--out", str(out)])
    assert code == 0
    _, data = read_csv(out)
    lam, rate, _ = data.T
    ref = predict(surface_density=60 * u.g / u.cm**2, temperature=35 * u.K, mass_to_flux=1.6,
                  ionization=1e-10, stellar_mass=0.5 * u.M_sun, radius=80 * u.au)
    g = const.G.cgs.value
    sigma = 60.0
    cs2 = (const.k_B * 35 * u.K / (2.33 * M_H)).to_value(u.cm**2 / u.s**2)
    kappa = np.sqrt(g * (0.5 * u.M_sun).cgs.value / (80 * u.au).cgs.value ** 3)
    rho_c = np.pi * g * sigma**2 / (2 * cs2)                # Spitzer 1942 (P_ext = 0)
    z0 = sigma / (2 * rho_c)
    b2 = (2 * np.pi * np.sqrt(g) * sigma / 1.6) ** 2        # B from mu0 (Nakano & Nakamura 1978)
    eta = (ref.eta_ad + ref.eta_ohm).to_value(u.cm**2 / u.s)
    k = 2 * np.pi / (lam * u.au.to(u.cm))
    d = kappa**2 + cs2 * k**2 - 2 * np.pi * g * sigma * k
    lam_mag = b2 / (2 * np.pi * sigma) * (k + k**2 * z0)
    theta = eta * (k / z0 + k**2)
    yr = u.yr.to(u.s)
    roots = np.array([max(np.roots([1, t, dd + ll, t * dd]).real.max(), 0.0)
                      for t, dd, ll in zip(theta, d, lam_mag, strict=True)]) * yr
    np.testing.assert_allclose(rate, roots, rtol=1e-8, atol=1e-9 * roots.max())
    # the grid holds the fastest wavelength itself, where the rate is the maximum
    j = np.argmax(rate)
    assert lam[j] == pytest.approx(ref.wavelength.to_value(u.au), rel=1e-9)
    assert rate[j] == pytest.approx(1 / ref.growth_time.to_value(u.yr), rel=1e-9)


@pytest.mark.parametrize("suffix,magic", [(".png", b"\x89PNG\r\n\x1a\n"), (".pdf", b"%PDF")])
def test_figures(cli, tmp_path, suffix, magic):
    out = tmp_path / f"spectrum{suffix}"
    code, stdout, err = cli(["spectrum", *DISK, "--out", str(out)])
    assert code == 0 and err == ""
    assert out.read_bytes()[: len(magic)] == magic
    assert out.stat().st_size > 10_000
    assert leftovers(tmp_path) == []
    if suffix == ".png":
        from matplotlib.image import imread
        img = imread(out)
        assert img.shape[0] > 500 and img.shape[1] > 800


def test_figure_content():
    # the figure marks the fastest and thermal wavelengths and shades the band
    spec = growth_spectrum(surface_density="60 g/cm2", temperature="35 K", mass_to_flux=1.6,
                           ionization=1e-10, stellar_mass="0.5 solMass", radius="80 au")
    from infer.physics.spectrum import spectrum_figure
    fig = spectrum_figure(spec)
    ax = fig.axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any("fastest" in t for t in labels) and any("thermal" in t for t in labels)
    assert any("band" in t for t in labels)
    assert "au" in ax.get_xlabel() and "1/yr" in ax.get_ylabel()
    assert "35 K" in ax.get_title()


def test_existing_file_is_replaced_atomically(cli, tmp_path):
    out = tmp_path / "s.csv"
    out.write_text("old contents\n")
    code, _, _ = cli(["spectrum", *ROTATING, "--out", str(out)])
    assert code == 0
    assert out.read_text().startswith("wavelength_au,")
    assert leftovers(tmp_path) == []


def test_failure_while_writing_leaves_old_file_and_no_temporary(tmp_path, monkeypatch):
    import infer.physics.spectrum as spectrum_mod

    class Broken:
        def savefig(self, fh, **kw):
            fh.write(b"half a figure")
            raise RuntimeError("renderer exploded")

    monkeypatch.setattr(spectrum_mod, "spectrum_figure", lambda spec: Broken())
    out = tmp_path / "s.png"
    out.write_bytes(b"previous figure")
    spec = growth_spectrum(surface_density="50 g/cm2", temperature="30 K", kappa="2e-10 1/s")
    with pytest.raises(RuntimeError):
        write_spectrum(spec, out)
    assert out.read_bytes() == b"previous figure"
    assert leftovers(tmp_path) == []


@pytest.mark.parametrize("make_out,option", [
    (lambda d: d / "s.txt", "--out"),
    (lambda d: d / "s", "--out"),
    (lambda d: d / "missing-folder" / "s.csv", "--out"),
    (lambda d: d, "--out"),                                       # a folder
])
def test_bad_output_path_exits_2(cli, tmp_path, make_out, option):
    target = make_out(tmp_path)
    if target == tmp_path:
        target = tmp_path / "dir.csv"
        target.mkdir()
    before = sorted(os.listdir(tmp_path))
    code, out, err = cli(["spectrum", *ROTATING, "--out", str(target)])
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and "Traceback" not in err
    assert sorted(os.listdir(tmp_path)) == before


def test_stable_conditions_exit_2_and_write_nothing(cli, tmp_path):
    out = tmp_path / "stable.png"
    code, stdout, err = cli(["spectrum", "--surface-density", "20 g/cm2", "--temperature", "20 K",
                             "--mass-to-flux", "0.7", "--out", str(out)])
    assert code == 2 and stdout == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "no wavelength grows" in lines[0]
    assert not out.exists() and os.listdir(tmp_path) == []


@pytest.mark.parametrize("argv,option", [
    (["--surface-density", "60 g/cm2", "--temperature", "-1 K"], "--temperature"),
    (["--surface-density", "60 g/cm2", "--temperature", "35 K", "--points", "5"], "--points"),
    (["--surface-density", "60 g/cm2", "--temperature", "35 K", "--points", "many"], "--points"),
    (["--surface-density", "60 g/cm2", "--temperature", "35 K", "--field", "1 mG",
      "--mass-to-flux", "2"], "--field"),
])
def test_bad_conditions_exit_2(cli, tmp_path, argv, option):
    code, out, err = cli(["spectrum", *argv, "--out", str(tmp_path / "x.csv")])
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and "Traceback" not in err
    assert os.listdir(tmp_path) == []


def test_missing_out_exits_2(cli):
    code, _, err = cli(["spectrum", *ROTATING])
    assert code == 2 and "--out" in err and len(err.strip().splitlines()) == 1


def test_library_spectrum():
    spec = growth_spectrum(n_points=50, surface_density=50 * u.g / u.cm**2, temperature=30 * u.K,
                           kappa=2e-10 / u.s)
    assert spec.unstable
    assert spec.wavelength.unit == u.au and spec.growth_rate.unit == 1 / u.yr
    assert spec.growth_time.unit == u.yr and spec.wavelength.shape == (50,)
    band = (spec.prediction.band_short, spec.prediction.band_long)
    assert spec.wavelength[0] < band[0] and spec.wavelength[-1] > band[1]
    stable = growth_spectrum(surface_density="20 g/cm2", temperature="20 K", mass_to_flux=0.7)
    assert not stable.unstable and np.all(stable.growth_rate.value == 0)
    assert np.all(np.isinf(stable.growth_time.value))
    with pytest.raises(InferError, match="n_points"):
        growth_spectrum(n_points=3, surface_density="20 g/cm2", temperature="20 K")
    with pytest.raises(InferError, match="n_points"):
        growth_spectrum(n_points=12.5, surface_density="20 g/cm2", temperature="20 K")
    with pytest.raises(InferError, match="one set of conditions"):
        growth_spectrum(surface_density=[20, 30] * u.g / u.cm**2, temperature="20 K")
    with pytest.raises(InferError, match="temperature"):
        growth_spectrum(surface_density="20 g/cm2", temperature="-20 K")
