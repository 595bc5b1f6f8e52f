"""The public ``infer.physics.predict``: units, broadcasting, stable conditions, bad input.

Unit conversions are checked against astropy.units (reference library): the
same physical condition stated in different units must give the same answer.
"""

from __future__ import annotations

import warnings

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from infer import InferError, predict

BASE = dict(surface_density=80 * u.g / u.cm**2, temperature=40 * u.K, field=1.5 * u.mG,
            eta_ad=1e18 * u.cm**2 / u.s, eta_ohm=1e16 * u.cm**2 / u.s,
            stellar_mass=0.4 * u.M_sun, radius=100 * u.au)
QUANTITIES = ["wavelength", "growth_time", "fragment_mass", "thermal_wavelength", "thermal_mass",
              "toomre_q", "toomre_q_critical_magnetic", "mass_to_flux", "field", "eta_ad", "eta_ohm",
              "band_short", "band_long", "midplane_density", "scale_height"]


def assert_same(a, b, rtol=1e-12):
    assert np.array_equal(a.unstable, b.unstable)
    for name in QUANTITIES:
        qa, qb = getattr(a, name), getattr(b, name)
        np.testing.assert_allclose(qa.to_value(qb.unit), qb.value, rtol=rtol, err_msg=name)


def test_outputs_carry_units():
    out = predict(**BASE)
    assert bool(out.unstable)
    assert out.wavelength.unit == u.au and out.growth_time.unit == u.yr
    assert out.fragment_mass.unit == u.M_jup and out.thermal_mass.unit == u.M_jup
    assert out.field.unit == u.mG and out.eta_ad.unit == u.cm**2 / u.s
    assert out.toomre_q.unit == u.dimensionless_unscaled
    assert out.field.to_value(u.mG) == pytest.approx(1.5, rel=1e-14)


@pytest.mark.parametrize("change", [
    {"surface_density": 800 * u.kg / u.m**2},
    {"surface_density": (80 * u.g / u.cm**2).to(u.M_sun / u.pc**2)},
    {"surface_density": "80 g/cm2"},
    # column density of H2 with mu_H2 = 2.8 and m_H = 1.00784 u (docs/physics.md, "Inputs")
    {"surface_density": None,
     "column_density": (80 * u.g / u.cm**2 / (2.8 * 1.00784 * u.u)).to(u.cm**-2)},
    {"field": 0.15 * u.uT},
    {"field": 1.5e-7 * u.T},
    {"radius": (100 * u.au).to(u.pc)},
    {"stellar_mass": (0.4 * u.M_sun).to(u.kg)},
    {"eta_ad": 1e14 * u.m**2 / u.s, "eta_ohm": "1e16 cm2/s"},
    {"temperature": "40 K"},
])
def test_same_condition_in_other_units(change):
    ref = predict(**BASE)
    kw = {**BASE, **change}
    kw = {k: v for k, v in kw.items() if v is not None}
    assert_same(predict(**kw), ref)


def test_kappa_per_second_or_per_year_and_keplerian():
    # kappa = Omega = sqrt(G M / r^3) for a Keplerian disk (Binney & Tremaine 2008, 3.2.3)
    omega = np.sqrt(const.G * BASE["stellar_mass"] / BASE["radius"] ** 3).to(1 / u.s)
    common = {k: v for k, v in BASE.items() if k not in ("stellar_mass", "radius")}
    ref = predict(**BASE)
    assert_same(predict(kappa=omega, **common), ref)
    assert_same(predict(kappa=omega.to(1 / u.yr), **common), ref)


def test_mass_to_flux_or_field_give_the_same_answer():
    ref = predict(**BASE)
    kw = {k: v for k, v in BASE.items() if k != "field"}
    assert_same(predict(mass_to_flux=ref.mass_to_flux.value, **kw), ref)


def test_broadcasting_3x1_by_4():
    sigma = np.array([[20.0], [60.0], [150.0]]) * u.g / u.cm**2
    temp = np.array([15.0, 30.0, 45.0, 90.0]) * u.K
    out = predict(surface_density=sigma, temperature=temp, mass_to_flux=2.0,
                  eta_ad=1e17 * u.cm**2 / u.s, stellar_mass=0.5 * u.M_sun, radius=60 * u.au)
    assert out.unstable.shape == (3, 4)
    for name in QUANTITIES:
        assert getattr(out, name).shape == (3, 4), name
    for i in range(3):
        for j in range(4):
            one = predict(surface_density=sigma[i, 0], temperature=temp[j], mass_to_flux=2.0,
                          eta_ad=1e17 * u.cm**2 / u.s, stellar_mass=0.5 * u.M_sun, radius=60 * u.au)
            assert bool(out.unstable[i, j]) is bool(one.unstable)
            for name in ("wavelength", "growth_time", "fragment_mass", "toomre_q"):
                np.testing.assert_allclose(getattr(out, name)[i, j].value,
                                           getattr(one, name).value, rtol=1e-12)


def test_hundred_thousand_conditions_in_one_call():
    rng = np.random.default_rng(42)
    n = 100_000
    sigma = 10 ** rng.uniform(0, np.log10(300), n) * u.g / u.cm**2
    temp = 10 ** rng.uniform(1, 2, n) * u.K
    mu0 = 10 ** rng.uniform(np.log10(0.3), 1, n)
    eta = 10 ** rng.uniform(14, 21, n) * u.cm**2 / u.s
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = predict(surface_density=sigma, temperature=temp, mass_to_flux=mu0, eta_ad=eta,
                      stellar_mass=1.0 * u.M_sun, radius=50 * u.au)
    assert out.wavelength.shape == (n,) and len(out) == n
    assert 0.05 < out.unstable.mean() < 0.95          # both kinds are present
    assert np.all(np.isfinite(out.wavelength[out.unstable]))
    assert np.all(np.isnan(out.wavelength[~out.unstable]))
    for i in rng.choice(n, 5, replace=False):
        one = predict(surface_density=sigma[i], temperature=temp[i], mass_to_flux=mu0[i],
                      eta_ad=eta[i], stellar_mass=1.0 * u.M_sun, radius=50 * u.au)
        np.testing.assert_allclose(out.wavelength[i].value, one.wavelength.value, rtol=1e-12)


@pytest.mark.parametrize("kw", [
    # Q > 1 without field (Toomre 1964): nothing grows
    dict(surface_density=1 * u.g / u.cm**2, temperature=50 * u.K, stellar_mass=1 * u.M_sun,
         radius=20 * u.au),
    # flux frozen and subcritical (Nakano & Nakamura 1978): nothing grows
    dict(surface_density=50 * u.g / u.cm**2, temperature=20 * u.K, mass_to_flux=0.7),
])
def test_stable_conditions_give_nan_without_warnings(kw):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = predict(**kw)
        data = out.to_json_dict()
    assert not bool(out.unstable)
    for name in ("wavelength", "growth_time", "fragment_mass", "band_short", "band_long"):
        assert np.isnan(getattr(out, name).value), name
    assert np.isfinite(out.thermal_wavelength.value) and np.isfinite(out.thermal_mass.value)
    assert data["unstable"] is False
    assert data["wavelength_au"] is None and data["growth_time_yr"] is None
    assert data["fragment_mass_mjup"] is None


def test_mixed_stable_and_unstable_array_without_warnings():
    q = np.array([0.5, 1.5, 0.9, 3.0])
    sigma, temp = 30 * u.g / u.cm**2, 25 * u.K
    cs = np.sqrt(const.k_B * temp / (2.33 * 1.00784 * u.u))
    kappa = (q * np.pi * const.G * sigma / cs).to(1 / u.s)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = predict(surface_density=sigma, temperature=temp, kappa=kappa)
    np.testing.assert_array_equal(out.unstable, q < 1)          # Toomre 1964


def test_fragment_mass_conventions():
    # docs/physics.md, "Predicted observables": Sigma lambda^2 ("square") or
    # Sigma pi (lambda/2)^2 ("disk")
    sq = predict(**BASE)
    disk = predict(fragment_shape="disk", **BASE)
    sigma = BASE["surface_density"]
    m_sq = (sigma * sq.wavelength**2).to_value(u.M_jup)
    assert sq.fragment_mass.value == pytest.approx(m_sq, rel=1e-12)
    assert disk.fragment_mass.value == pytest.approx(np.pi / 4 * m_sq, rel=1e-12)
    assert disk.fragment_shape == "disk"


def _independent_fragment_mass(sigma, temp, mu0, x_e, m_star, radius):
    """Sigma lambda_m^2 (M_Jup) of the cubic of docs/physics.md written out dimensionally.

    Constants from astropy.constants (reference library); microphysics with the formulas
    of docs/physics.md, "Microphysics" (tau_ni, eta_AD = v_A^2 tau_ni, eta_O = 234 sqrt(T)
    / x_e); growth rate the largest real root from numpy.roots; the maximum over k found on
    a dense grid and polished with scipy.optimize.minimize_scalar (reference libraries).
    """
    from scipy.optimize import minimize_scalar

    g = const.G.cgs.value
    m_h = (1.00784 * u.u).cgs.value
    cs2 = (const.k_B * temp * u.K / (2.33 * 1.00784 * u.u)).to_value(u.cm**2 / u.s**2)
    rho_c = np.pi * g * sigma**2 / (2 * cs2)                  # Spitzer 1942, P_ext = 0
    z0 = sigma / (2 * rho_c)
    b2 = (2 * np.pi * np.sqrt(g) * sigma / mu0) ** 2           # Nakano & Nakamura 1978
    tau = 1.4 * (29 + 2.33) / 29 / (x_e * rho_c / (2.33 * m_h) * 1.69e-9)
    eta = b2 * tau / (4 * np.pi * rho_c) + 234 * np.sqrt(temp) / x_e
    kappa2 = g * (m_star * u.M_sun).cgs.value / (radius * u.au).cgs.value ** 3

    def rate(k):
        d = kappa2 + cs2 * k**2 - 2 * np.pi * g * sigma * k
        lam = b2 / (2 * np.pi * sigma) * (k + k**2 * z0)
        theta = eta * (k / z0 + k**2)
        return np.roots([1.0, theta, d + lam, theta * d]).real.max()

    k_t = np.pi * g * sigma / cs2                              # Toomre 1964 fastest k
    grid = k_t * np.geomspace(0.05, 2.0, 600)
    j = int(np.argmax([rate(k) for k in grid]))
    best = minimize_scalar(lambda lk: -rate(np.exp(lk)), method="bounded",
                           bounds=(np.log(grid[max(j - 1, 0)]), np.log(grid[j + 1])),
                           options={"xatol": 1e-10})
    lam_m = 2 * np.pi / np.exp(best.x)
    return (sigma * lam_m**2 * u.g).to_value(u.M_jup)


def test_sanity_range_of_fragment_masses():
    # Sigma = 60 g/cm2, T = 35 K, 0.5 Msun at 80 au, mu0 = 1.6, x_e from 1e-13 to 1e-8.
    # The values 12 and 40 M_Jup were recorded for these conditions when the model was
    # specified (computed then with a separate implementation; not a published table);
    # here both are recomputed independently (_independent_fragment_mass) and the package
    # must reproduce that to 1e-5 (the bounded search locates k to ~1e-8; the mass goes as
    # lambda^2). Inside the few-to-~100 M_Jup expected for disk fragmentation (Kratter &
    # Lodato 2016, ARA&A 54, 271; from memory).
    out = predict(surface_density=60 * u.g / u.cm**2, temperature=35 * u.K, mass_to_flux=1.6,
                  stellar_mass=0.5 * u.M_sun, radius=80 * u.au, ionization=[1e-13, 1e-8])
    got = out.fragment_mass.to_value(u.M_jup)
    ref = [_independent_fragment_mass(60.0, 35.0, 1.6, x, 0.5, 80.0) for x in (1e-13, 1e-8)]
    np.testing.assert_allclose(got, ref, rtol=1e-5)
    assert ref[0] == pytest.approx(12, abs=0.5) and ref[1] == pytest.approx(40, abs=0.5)
    # Published limits bracket them: field decoupled (x_e -> 0) the fastest mode is the
    # field-free disk's, k = pi G Sigma / c_s^2 (Toomre 1964); flux frozen (x_e -> inf)
    # k = pi G Sigma (1 - mu0^-2) / (c_s^2 + v_A^2) (Nakano & Nakamura 1978 with rotation,
    # derived in docs/physics.md), with v_A^2 / c_s^2 = 2 / mu0^2 at P_ext = 0.
    cs2 = const.k_B * 35 * u.K / (2.33 * 1.00784 * u.u)
    sigma = 60 * u.g / u.cm**2
    m_free = (sigma * (2 * cs2 / (const.G * sigma)) ** 2).to_value(u.M_jup)
    m_frozen = m_free * ((1 + 2 / 1.6**2) / (1 - 1.6**-2)) ** 2
    # at x_e = 1e-13 the diffusion is so fast that the field barely matters (0.04 % off the
    # field-free value, measured; 0.5 % allowed)
    assert got[0] == pytest.approx(m_free, rel=5e-3)
    assert m_free <= got[0] < got[1] < m_frozen
    assert 1 < got[0] and got[1] < 100


OK_SIGMA, OK_T = 10 * u.g / u.cm**2, 20 * u.K


@pytest.mark.parametrize("kw,names", [
    (dict(surface_density=0 * u.g / u.cm**2), ["surface_density", "positive"]),
    (dict(surface_density=-3 * u.g / u.cm**2), ["surface_density", "positive"]),
    (dict(temperature=0 * u.K), ["temperature", "positive"]),
    (dict(temperature=-10 * u.K), ["temperature", "positive"]),
    (dict(eta_ad=-1e18 * u.cm**2 / u.s), ["eta_ad", "non-negative"]),
    (dict(eta_ohm=-1 * u.cm**2 / u.s), ["eta_ohm", "non-negative"]),
    (dict(field=1 * u.mG, mass_to_flux=2.0), ["field", "mass_to_flux"]),
    (dict(surface_density=80.0), ["surface_density", "unit"]),
    (dict(surface_density="80"), ["surface_density", "unit"]),
    (dict(temperature=20.0), ["temperature", "unit"]),
    (dict(surface_density=80 * u.K), ["surface_density", "g / cm2"]),
    (dict(temperature="20 m"), ["temperature", "K"]),
    (dict(field=3 * u.au), ["field", "G"]),
    (dict(eta_ad=1e18 * u.cm**2), ["eta_ad", "cm2 / s"]),
    (dict(mass_to_flux=2 * u.G), ["mass_to_flux", "plain number"]),
    (dict(ionization=1.5), ["ionization", "at most 1"]),
    (dict(ionization=0.0), ["ionization", "positive"]),
    (dict(surface_density=np.nan * u.g / u.cm**2), ["surface_density", "NaN"]),
    (dict(temperature=[20, np.nan] * u.K), ["temperature", "NaN"]),
    (dict(mass_to_flux=np.nan), ["mass_to_flux", "NaN"]),
    (dict(ionization=np.nan), ["ionization", "NaN"]),
    (dict(kappa=1 * u.km), ["kappa", "1 / s"]),
    (dict(stellar_mass=1 * u.M_sun), ["stellar_mass", "radius"]),
    (dict(kappa=1e-10 / u.s, radius=1 * u.au), ["kappa", "radius"]),
    (dict(column_density=1e22 * u.cm**-2), ["surface_density", "column_density"]),
    (dict(ionization=1e-8, eta_ad=1e18 * u.cm**2 / u.s), ["ionization", "eta_ad"]),
    (dict(surface_density=[1, 2] * u.g / u.cm**2, temperature=[1, 2, 3] * u.K),
     ["surface_density", "temperature", "broadcast"]),
    (dict(fragment_shape="round"), ["fragment_shape", "square"]),
    (dict(external_pressure=-1 * u.dyn / u.cm**2), ["external_pressure", "non-negative"]),
])
def test_bad_input_names_the_argument(kw, names):
    args = {"surface_density": OK_SIGMA, "temperature": OK_T, **kw}
    with pytest.raises(InferError) as info:
        predict(**args)
    assert isinstance(info.value, ValueError)
    msg = str(info.value)
    for word in names:
        assert word in msg, (word, msg)
    assert "np.float64" not in msg and "\n" not in msg


def test_missing_required_arguments():
    with pytest.raises(InferError, match="surface_density"):
        predict(temperature=OK_T)
    with pytest.raises(InferError, match="temperature"):
        predict(surface_density=OK_SIGMA, temperature=None)
