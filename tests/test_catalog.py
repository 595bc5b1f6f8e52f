"""Catalog reading and validation.

Reference values come from outside the package: SkyCoord.separation
(astropy, reference library), the definition of the parsec (1 arcsec at 1 pc
is 1 au), the Planck function written out with astropy.constants, and the
stated true parameters of the demo scenario (the ring radius).
"""

from __future__ import annotations

from pathlib import Path

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import SkyCoord
from astropy.table import Table

from infer.catalog.regions import Region, check_catalog, read_catalog
from infer.errors import CatalogError

RING = 8


def _ring_table(n=RING, radius=50.0, unit=u.au):
    phi = 2 * np.pi * np.arange(n) / n
    t = Table()
    t["id"] = [f"c{k}" for k in range(n)]
    t["x"] = radius * np.cos(phi) * unit
    t["y"] = radius * np.sin(phi) * unit
    t["mass"] = (np.linspace(10, 17, n) * u.M_jup).to(u.solMass)     # FITS has no jupiterMass
    t["mass_err"] = (np.full(n, 2.0) * u.M_jup).to(u.solMass)
    return t


def _write(tmp_path, table, name="cat.ecsv", **kw):
    path = tmp_path / name
    table.write(path, overwrite=True, **kw)
    return path


def _csv(tmp_path, text, name="cat.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


GOOD_CSV = "id,x [au],y [au],mass [solMass]\na,0,0,0.01\nb,10,0,0.02\nc,0,12,0.015\nd,11,13,0.01\n"


# ------------------------------------------------------------------ reading

def test_ecsv_region_fields(tmp_path):
    path = _write(tmp_path, _ring_table())
    [r] = read_catalog(path)
    assert isinstance(r, Region)
    assert r.name == "cat" and r.source == str(path) and len(r) == RING
    assert r.ids == tuple(f"c{k}" for k in range(RING))
    assert r.x.unit == u.au and r.masses.unit == u.solMass
    # ring of N points: N - 1 chords 2 r sin(pi / N)
    assert len(r.spacings) == RING - 1 and r.spacing_pairs.shape == (RING - 1, 2)
    np.testing.assert_allclose(r.spacings.to_value(u.au), 2 * 50 * np.sin(np.pi / RING))
    np.testing.assert_allclose(r.masses.to_value(u.M_jup), np.linspace(10, 17, RING))
    np.testing.assert_allclose(r.mass_errors.to_value(u.M_jup), 2.0)
    np.testing.assert_array_equal(r.spacing_errors.value, 0.0)
    assert r.excluded == ()
    assert any("face-on" in w for w in r.warnings)      # no inclination given


def test_nearest_spacing(tmp_path):
    [r] = read_catalog(_write(tmp_path, _ring_table()), spacing="nearest")
    assert len(r.spacings) == RING and r.spacing_method == "nearest"


@pytest.mark.parametrize("name,fmt", [("cat.fits", "fits"), ("cat.xml", "votable"),
                                      ("cat.csv", "ascii.ecsv")])
def test_other_formats_same_result(tmp_path, name, fmt):
    t = _ring_table()
    [ref] = read_catalog(_write(tmp_path, t))
    [r] = read_catalog(_write(tmp_path, t, name=name, format=fmt))
    np.testing.assert_allclose(r.spacings.value, ref.spacings.value)
    np.testing.assert_allclose(r.masses.value, ref.masses.value)
    assert r.ids == ref.ids


def test_plain_csv_with_header_units(tmp_path):
    [r] = read_catalog(_csv(tmp_path, GOOD_CSV))
    assert len(r) == 4
    assert r.masses.to_value(u.solMass).tolist() == [0.01, 0.02, 0.015, 0.01]


def test_csv_units_from_overrides(tmp_path):
    path = _csv(tmp_path, "id,x,y,mass\na,0,0,1\nb,1,0,2\nc,0,2,1\nd,3,3,1\n")
    with pytest.raises(CatalogError, match="no unit"):
        read_catalog(path)
    [r] = read_catalog(path, overrides={"units": {"x": "arcsec", "y": "arcsec",
                                                  "mass": "jupiterMass"},
                                        "distance": "100 pc"})
    # 1 arcsec at 100 pc is 100 au (definition of the parsec)
    assert r.spacings.to_value(u.au).min() == pytest.approx(100.0)


def test_csv_comment_metadata(tmp_path):
    text = "# distance = 200 pc\n# inclination: 0 deg\n" + GOOD_CSV.replace("[au]", "[arcsec]")
    [r] = read_catalog(_csv(tmp_path, text))
    assert r.meta["distance"].to_value(u.pc) == 200
    assert r.spacings.to_value(u.au).min() == pytest.approx(10 * 200)


def test_radec_spacings_match_skycoord(tmp_path):
    rng = np.random.default_rng(5)
    center = SkyCoord(45.0 * u.deg, -62.0 * u.deg)
    pts = center.spherical_offsets_by(rng.uniform(-90, 90, 9) * u.arcsec,
                                      rng.uniform(-90, 90, 9) * u.arcsec)
    t = Table({"id": [f"k{i}" for i in range(9)], "ra": pts.ra.to(u.deg), "dec": pts.dec.to(u.deg),
               "mass": np.ones(9) * u.solMass})
    t.meta = {"distance": "250 pc", "inclination": "0 deg"}
    [r] = read_catalog(_write(tmp_path, t))
    i, j = r.spacing_pairs.T
    ref = pts[i].separation(pts[j]).to_value(u.rad) * (250 * u.pc).to_value(u.au)
    np.testing.assert_allclose(r.spacings.to_value(u.au), ref, rtol=1e-6)
    # an explicit centre gives the same spacings
    t.meta.update(center_ra="45 deg", center_dec="-62 deg")
    [r2] = read_catalog(_write(tmp_path, t, name="c2.ecsv"))
    np.testing.assert_allclose(r2.spacings.value, r.spacings.value, rtol=1e-6)


def test_inclined_ring_is_deprojected(tmp_path):
    inc, pa = 60.0, 30.0
    t = _ring_table(radius=40.0)
    # observe the ring: shrink the minor-axis component by cos(i)
    p = np.radians(pa)
    a = t["x"] * np.sin(p) + t["y"] * np.cos(p)          # along the major axis
    b = t["x"] * np.cos(p) - t["y"] * np.sin(p)          # along the minor axis
    b = b * np.cos(np.radians(inc))
    t["x"], t["y"] = a * np.sin(p) + b * np.cos(p), a * np.cos(p) - b * np.sin(p)
    t.meta = {"inclination": f"{inc} deg", "position_angle": f"{pa} deg"}
    [r] = read_catalog(_write(tmp_path, t))
    np.testing.assert_allclose(np.hypot(r.x, r.y).to_value(u.au), 40.0, rtol=1e-10)
    assert not np.allclose(np.hypot(r.sky_x, r.sky_y).to_value(u.au), 40.0)


def test_position_errors_give_spacing_errors(tmp_path):
    t = Table({"id": ["a", "b", "c"], "x": [0, 10, 30] * u.au, "y": [0, 0, 0] * u.au,
               "x_err": [0.3, 0.4, 0.0] * u.au, "y_err": [1, 1, 1] * u.au,
               "mass": [1, 1, 1] * u.M_jup})
    [r] = read_catalog(_write(tmp_path, t))
    # edge a-b along x: sqrt(0.3^2 + 0.4^2); b-c: 0.4
    np.testing.assert_allclose(sorted(r.spacing_errors.to_value(u.au)), [0.4, 0.5])


def test_masses_from_fluxes(tmp_path):
    t = Table({"id": ["a", "b", "c", "d"], "x": [0, 1, 0, 2] * u.arcsec,
               "y": [0, 0, 1, 2] * u.arcsec, "flux": [0.1, 0.2, 0.3, 0.4] * u.Jy,
               "flux_err": [0.01, 0.02, 0.03, 0.04] * u.Jy})
    t.meta = {"distance": "140 pc", "wavelength": "1.3 mm", "dust_temperature": "15 K",
              "dust_opacity": "1.0 cm2 / g", "gas_to_dust": 100, "inclination": "0 deg"}
    [r] = read_catalog(_write(tmp_path, t))
    assert r.mass_from_flux
    # Hildebrand 1983, QJRAS 24, 267: M = g F d^2 / (kappa B_nu(T)), B_nu written out here
    nu = const.c / (1.3 * u.mm)
    b = 2 * const.h * nu**3 / const.c**2 / np.expm1(const.h * nu / (const.k_B * 15 * u.K))
    ref = (100 * t["flux"].quantity * (140 * u.pc) ** 2 / (1.0 * u.cm**2 / u.g * b)).to(u.solMass)
    np.testing.assert_allclose(r.masses.to_value(u.solMass), ref.value, rtol=1e-10)
    np.testing.assert_allclose((r.mass_errors / r.masses).value, 0.1, rtol=1e-10)
    assert r.meta["dust_opacity_observed"].to_value(u.cm**2 / u.g) == pytest.approx(1.0)


def test_flux_defaults_are_reported(tmp_path):
    t = Table({"id": ["a", "b", "c", "d"], "x": [0, 1, 0, 2] * u.au, "y": [0, 0, 1, 2] * u.au,
               "flux": [0.1, 0.2, 0.3, 0.4] * u.Jy})
    t.meta = {"distance": "140 pc", "wavelength": "0.87 mm", "dust_temperature": "15 K"}
    [r] = read_catalog(_write(tmp_path, t))
    text = " ".join(r.warnings)
    assert "dust_opacity not given" in text and "beta = 1.8" in text
    assert "gas_to_dust not given" in text
    # power law kappa_0 (nu / nu_0)^beta from the default 0.899 cm2 per g of dust at 1.3 mm
    # (Ossenkopf & Henning 1994, A&A 291, 943, thin ice mantles at 1e6 cm^-3; value from
    # memory) with beta = 1.8 (common practice for dense-core dust, no single source)
    assert r.meta["dust_opacity_observed"].to_value(u.cm**2 / u.g) == pytest.approx(
        0.899 * (1.3 / 0.87) ** 1.8, rel=1e-9)


def test_groups_and_group_metadata(tmp_path):
    t = Table({"group": ["A"] * 4 + ["B"] * 5, "id": [f"s{i}" for i in range(9)],
               "x": [0, 1, 0, 1, 0, 2, 0, 2, 4] * u.arcsec, "y": [0, 0, 1, 1, 0, 0, 2, 2, 4] * u.arcsec,
               "mass": np.ones(9) * u.M_jup})
    t.meta = {"distance": "100 pc", "inclination": "0 deg",
              "groups": {"B": {"distance": "200 pc", "note": "far one"}}}
    ra, rb = read_catalog(_write(tmp_path, t))
    assert (ra.name, rb.name) == ("A", "B")
    assert ra.meta["distance"].to_value(u.pc) == 100 and rb.meta["distance"].to_value(u.pc) == 200
    assert rb.meta["note"] == "far one" and "note" not in ra.meta
    assert ra.spacings.to_value(u.au).min() == pytest.approx(100.0)
    assert rb.spacings.to_value(u.au).min() == pytest.approx(400.0)
    summary = check_catalog(tmp_path / "cat.ecsv")
    assert summary["n_clumps"] == 9 and summary["spacing_count"] == 3 + 4
    assert [g["name"] for g in summary["regions"]] == ["A", "B"]


def test_overrides_take_precedence_and_warn(tmp_path):
    t = _ring_table(unit=u.arcsec)
    t.meta = {"distance": "140 pc", "inclination": "0 deg"}
    path = _write(tmp_path, t)
    [r0] = read_catalog(path)
    [r1] = read_catalog(path, overrides={"distance": "150 pc"})
    np.testing.assert_allclose(r1.spacings.value, r0.spacings.value * 150 / 140)
    assert any("distance" in w and "run config" in w for w in r1.warnings)
    [r2] = read_catalog(path, overrides={"distance": "140 pc"})
    assert not any("run config" in w for w in r2.warnings)


def test_exclude_is_reported(tmp_path):
    path = _write(tmp_path, _ring_table())
    [r] = read_catalog(path, overrides={"exclude": ["c3"]})
    assert len(r) == RING - 1 and "c3" not in r.ids
    assert r.excluded == ("c3: excluded by the run config",)
    with pytest.raises(CatalogError, match="'nope'"):
        read_catalog(path, overrides={"exclude": ["nope"]})


# --------------------------------------------------------------- errors

def _err(path, **kw) -> str:
    with pytest.raises(CatalogError) as info:
        read_catalog(path, **kw)
    msg = str(info.value)
    assert str(path) in msg or "run config" in msg or "spacing" in msg
    return msg


@pytest.mark.parametrize("text,needles", [
    ("x [au],y [au],mass [solMass]\n0,0,1\n1,1,1\n", ["no 'id' column"]),
    ("id,x [au],mass [solMass]\na,0,1\nb,1,1\n", ["'y' is missing"]),
    ("id,x [au],y [au]\na,0,0\nb,1,1\n", ["no 'mass' or 'flux'"]),
    ("id,mass [solMass]\na,1\nb,1\n", ["no position columns"]),
    ("id,x,y [au],mass [solMass]\na,0,0,1\nb,1,1,1\n", ["column 'x' has no unit"]),
    ("id,x [au],y [au],mass [Jy]\na,0,0,1\nb,1,1,1\n", ["'mass'", "flux density", "'flux'"]),
    ("id,x [au],y [au],flux [solMass]\na,0,0,1\nb,1,1,1\n", ["'flux'", "mass"]),
    ("id,x [au],y [au],flux [mJy/beam]\na,0,0,1\nb,1,1,1\n", ["per beam"]),
    ("id,x [au],y [au],mass [furlongs]\na,0,0,1\nb,1,1,1\n", ["'furlongs'", "not a unit"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,abc\n", ["row 2", "id 'b'", "'mass'", "'abc'"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,nan\n", ["row 2", "id 'b'", "'mass'", "nan"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,inf\n", ["row 2", "'mass'", "inf"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,-1\nb,1,1,1\n", ["row 1", "id 'a'", "not positive"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,0\nb,1,1,1\n", ["row 1", "not positive"]),
    ("id,x [au],y [au],mass [solMass],mass_err [solMass]\na,0,0,1,0.1\nb,1,1,1,-0.1\n",
     ["row 2", "'mass_err'", "negative"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\na,1,1,1\n", ["id 'a'", "rows 1 and 2", "unique"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,1\nc,0,0,2\n",
     ["rows 1 and 3", "'a'", "'c'", "same position"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\n", ["1 clump", "at least 2"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,,1\n", ["row 2", "id 'b'", "'y'", "empty"]),
    ("id,x [au],y [au],mass [solMass]\na,0,0,1\n,1,1,1\n", ["row 2", "'id'", "empty"]),
    ("id,x [arcsec],y [arcsec],mass [solMass]\na,0,0,1\nb,1,1,1\n", ["distance", "angles"]),
    ("id,x [au],y [au],flux [Jy]\na,0,0,1\nb,1,1,1\n", ["distance", "fluxes"]),
    ("# distance = 100 pc\nid,x [au],y [au],flux [Jy]\na,0,0,1\nb,1,1,1\n", ["'wavelength'"]),
    ("# distance = 100 pc\n# wavelength = 1.3 mm\nid,x [au],y [au],flux [Jy]\na,0,0,1\nb,1,1,1\n",
     ["'dust_temperature'"]),
    ("# inclination = 40 deg\nid,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,1\n",
     ["'position_angle'"]),
    ("# inclination = 90 deg\n# position_angle = 0 deg\nid,x [au],y [au],mass [solMass]\na,0,0,1\n"
     "b,1,1,1\n", ["edge-on"]),
    ("# distance = 140\nid,x [arcsec],y [arcsec],mass [solMass]\na,0,0,1\nb,1,1,1\n",
     ["'distance'", "no unit"]),
    ("# distance = -5 pc\nid,x [arcsec],y [arcsec],mass [solMass]\na,0,0,1\nb,1,1,1\n",
     ["'distance'", "positive"]),
    ("id,ra,dec,mass [solMass]\na,10,95,1\nb,10,10,1\n", ["row 1", "'dec'", "between -90 and 90"]),
    ("id,x [au],y [au],x_err [au],mass [solMass]\na,0,0,1,1\nb,1,1,1,1\n", ["'y_err' is missing"]),
    ("id,x [au],y [au],mass [solMass],pos_err\na,0,0,1,1\nb,1,1,1,1\n", ["'pos_err' has no unit"]),
    ("id,x [au],y [arcsec],mass [solMass]\na,0,0,1\nb,1,1,1\n", ["both be lengths or both angles"]),
    ("id,x [au],x [au],y [au],mass [solMass]\na,0,0,0,1\nb,1,1,1,1\n", ["appears twice"]),
    ("id,x [au],y [au],mass [solMass]\n", ["no rows"]),
])
def test_invalid_csv(tmp_path, text, needles):
    msg = _err(_csv(tmp_path, text))
    for needle in needles:
        assert needle in msg, (needle, msg)


def test_few_clumps_warn(tmp_path):
    [r] = read_catalog(_csv(tmp_path, "id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,0,1\nc,0,2,1\n"))
    assert any("only 3 clumps" in w and "weakly" in w for w in r.warnings)
    assert any("mass_err" in w for w in r.warnings)


def test_unused_columns_are_named(tmp_path):
    [r] = read_catalog(_csv(tmp_path, GOOD_CSV.replace("mass [solMass]\n", "mass [solMass],snr\n")
                            .replace("0.01\n", "0.01,5\n").replace("0.02\n", "0.02,6\n")
                            .replace("0.015\n", "0.015,7\n")))
    assert any("not used: snr" in w for w in r.warnings)


@pytest.mark.parametrize("name,content,needle", [
    ("empty.ecsv", b"", "empty"),
    ("blank.csv", b"  \n\n", "empty"),
    ("binary.ecsv", bytes(range(256)) * 4, "not a text file"),
    ("latin.csv", "id,x [au]\n\xe9,1\n".encode("latin-1"), "UTF-8"),
    ("plain.ecsv", GOOD_CSV.encode(), "%ECSV"),
    ("junk.fits", b"this is not fits at all", "not a FITS file"),
    ("junk.xml", b"<VOTABLE><broken", "VOTable"),
    ("cat.txt", GOOD_CSV.encode(), "unknown catalog format"),
    ("bad.ecsv", b"# %ECSV 1.0\n# ---\n# datatype: [ {name: id\nid\n", "cannot be read as ECSV"),
])
def test_unreadable_files(tmp_path, name, content, needle):
    path = tmp_path / name
    path.write_bytes(content)
    assert needle in _err(path)


def test_missing_file_and_folder(tmp_path):
    assert "no such file" in _err(tmp_path / "absent.ecsv")
    assert "folder" in _err(tmp_path)


def test_bad_options(tmp_path):
    path = _write(tmp_path, _ring_table())
    assert "unknown key 'distanse'" in _err(path, overrides={"distanse": "1 pc"})
    assert "must be one of" in _err(path, spacing="delaunay")
    assert "'inclination'" in _err(path, overrides={"inclination": "forty"})
    assert "units" in _err(path, overrides={"units": "au"})


def test_ecsv_bad_cell_is_a_catalog_error(tmp_path):
    path = _write(tmp_path, _ring_table())
    lines = path.read_text().splitlines()
    lines[-1] = lines[-1].rsplit(" ", 1)[0] + " twelve"      # text in a float64 column
    path.write_text("\n".join(lines) + "\n")
    assert "cannot be read as ECSV" in _err(path)


# ------------------------------------------------------------ demo files

DEMO = Path(__file__).resolve().parent.parent / "catalogs"


def test_demo_disk_ring_radius():
    [r] = read_catalog(DEMO / "demo_disk.ecsv")
    assert len(r) == 8 and r.warnings == ()
    radius = u.Quantity(r.meta["true_parameters"]["radius"]).to_value(u.au)
    # stated truth: ring at 80 au with 2 % radial scatter and 1.5 au position noise
    np.testing.assert_allclose(np.hypot(r.x, r.y).to_value(u.au), radius, rtol=0.08)


def test_demo_survey_regions():
    regions = read_catalog(DEMO / "demo_survey.ecsv")
    assert len(regions) == 6
    for r in regions:
        assert 6 <= len(r) <= 8 and r.warnings == ()
        radius = u.Quantity(r.meta["true_parameters"]["radius"]).to_value(u.au)
        np.testing.assert_allclose(np.hypot(r.x, r.y).to_value(u.au), radius, rtol=0.1)


def test_demo_cloud():
    [r] = read_catalog(DEMO / "demo_cloud.ecsv")
    assert len(r) == 30 and len(r.spacings) == 29 and r.mass_from_flux
    assert r.warnings == ()
    assert np.all(r.mass_errors > 0)


def test_demo_files_regenerate_identically(tmp_path):
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    for path in mod.write_all(tmp_path):
        assert path.read_bytes() == (DEMO / path.name).read_bytes(), path.name


def test_override_band_replaces_file_band(tmp_path):
    t = Table({"id": ["a", "b", "c", "d"], "x": [0, 1, 0, 2] * u.au, "y": [0, 0, 1, 2] * u.au,
               "flux": [0.1, 0.2, 0.3, 0.4] * u.Jy})
    t.meta = {"distance": "140 pc", "wavelength": "1.3 mm", "dust_temperature": "15 K",
              "dust_opacity": "1 cm2/g", "gas_to_dust": 100}
    path = _write(tmp_path, t)
    [r] = read_catalog(path, overrides={"frequency": "345 GHz"})
    assert r.meta["frequency"].to_value(u.GHz) == pytest.approx(345)
    assert r.meta["wavelength"].to_value(u.mm) == pytest.approx(0.869, rel=1e-3)


@pytest.mark.filterwarnings("ignore:Keyword name:astropy.io.fits.verify.VerifyWarning")
def test_fits_header_metadata_and_votable_overrides(tmp_path):
    t = _ring_table(unit=u.arcsec)
    t.meta = {"distance": "140 pc", "inclination": "0 deg"}
    [r] = read_catalog(_write(tmp_path, t, name="cat.fits"))
    assert r.meta["distance"].to_value(u.pc) == 140
    # 1 arcsec at 140 pc is 140 au (definition of the parsec)
    np.testing.assert_allclose(r.spacings.to_value(u.au), 140 * 2 * 50 * np.sin(np.pi / RING))
    path = _write(tmp_path, t, name="cat.xml", format="votable")
    assert "distance" in _err(path)
    [v] = read_catalog(path, overrides={"distance": "140 pc", "inclination": "0 deg"})
    np.testing.assert_allclose(v.spacings.value, r.spacings.value)


def test_byte_order_mark_is_tolerated(tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbf" + GOOD_CSV.encode())
    [r] = read_catalog(path)
    assert r.ids == ("a", "b", "c", "d")
