"""Catalog metadata of the selection: beam, detection limit, area; ``infer check`` and bad input."""

from __future__ import annotations

import json
from pathlib import Path

import astropy.units as u
import numpy as np
import pytest

from infer.catalog.regions import read_catalog
from infer.cli import main
from infer.errors import CatalogError

DEMO = Path(__file__).resolve().parent.parent / "catalogs"
DEMO_DISK = DEMO / "demo_disk.ecsv"


@pytest.fixture(scope="module")
def disk(tmp_path_factory) -> Path:
    """The demo disk without its own beam and limit, so each test states the selection it sets."""
    lines = DEMO_DISK.read_text().splitlines(keepends=True)
    keep = [ln for ln in lines
            if not ln.startswith(("# - {beam_", "# - {mass_limit", "# - {flux_limit"))]
    assert len(lines) - len(keep) == 4          # beam_major, beam_minor, beam_pa, mass_limit
    path = tmp_path_factory.mktemp("catalog") / "disk_unobserved.ecsv"
    path.write_text("".join(keep))
    return path


def _check(capsys, *argv):
    rc = main(["check", *map(str, argv)])
    out, err = capsys.readouterr()
    return rc, out, err


def _config(tmp_path, catalog_lines: str) -> Path:
    p = tmp_path / "run.toml"
    p.write_text((DEMO / "demo_disk.toml").read_text().replace(
        "[priors]", f"[catalog]\n{catalog_lines}\n\n[priors]"))
    return p


def test_check_reports_beam_limit_and_area(capsys, tmp_path, disk):
    cfg = _config(tmp_path, 'beam_major = "0.3 arcsec"\nbeam_minor = "0.2 arcsec"\n'
                            'beam_pa = "30 deg"\nmass_limit = "30 jupiterMass"\narea = "4 arcsec2"')
    rc, out, err = _check(capsys, disk, "--json", "--config", cfg)
    assert rc == 0, err
    d = json.loads(out)
    assert d["beam"] == {"major_arcsec": 0.3, "minor_arcsec": 0.2, "pa_deg": 30.0}
    ext = np.array(d["beam_extent_au"])
    # the beam's FWHM along any direction lies between its minor and major axes
    # (0.2 and 0.3 arcsec at 230 pc: 46 and 69 au, the definition of the parsec)
    assert np.all((ext >= 46 - 1e-9) & (ext <= 69 + 1e-9))
    below = int(np.sum(np.array(d["spacings_au"]) <= np.array(d["resolvable_au"])))
    assert d["spacings_below_beam"] == below >= 1
    assert d["mass_limit_mjup"] == pytest.approx(30.0)
    assert d["masses_below_limit"] == int(np.sum(np.array(d["masses_mjup"]) <= 30.0)) >= 1
    # 4 arcsec2 at 230 pc is 4 * 230^2 au2 on the sky, / cos(38 deg) in the disk plane
    assert d["area_au2"] == pytest.approx(4 * 230**2 / np.cos(np.radians(38)), rel=1e-9)
    assert any("shorter than the beam" in w and "beam_major" in w for w in d["warnings"])
    assert any("detection limit" in w and "mass_limit" in w for w in d["warnings"])
    rc, out, _ = _check(capsys, disk, "--config", cfg)
    assert rc == 0 and "beam" in out and "detection limit" in out and "searched area" in out


def test_flux_limit_becomes_a_mass_limit_with_the_dust_settings():
    # Reference: the catalog's own flux -> mass conversion (infer.catalog.dustmass) applied to
    # the limit equals the masses' conversion: a clump at the limit flux has the limit mass.
    [r] = read_catalog(DEMO / "demo_cloud.ecsv", overrides={"flux_limit": "30 mJy"})
    [r1] = read_catalog(DEMO / "demo_cloud.ecsv")
    from astropy.table import Table

    t = Table.read(DEMO / "demo_cloud.ecsv", format="ascii.ecsv")
    ratio = (r1.masses / t["flux"].quantity).to(u.solMass / u.mJy)
    np.testing.assert_allclose(r.mass_limit.to_value(u.solMass),
                               30 * ratio.value.mean(), rtol=1e-9)


@pytest.mark.parametrize("catalog,needle", [
    ('beam_major = "30 arcsec"', "beam_major"),                    # larger than every spacing
    ('mass_limit = "2 solMass"', "mass_limit"),                     # above every mass
    ('beam_major = "-0.1 arcsec"', "beam_major"),                   # negative
    ('beam_major = "0.1 au"', "beam_major"),                        # not an angle
    ('beam_major = "0.1"', "beam_major"),                           # no unit
    ('beam_minor = "0.1 arcsec"', "beam_major"),                    # minor without major
    ('beam_major = "0.1 arcsec"\nbeam_minor = "0.2 arcsec"', "beam_minor"),
    ('beam_major = "0.1 arcsec"\nbeam_pa = "north"', "beam_pa"),
    ('mass_limit = "1 jupiterMass"\nflux_limit = "1 mJy"', "flux_limit"),
    ('flux_limit = "1 mJy"', "flux_limit"),                         # mass catalog: no dust settings
    ('area = "3 km"', "area"),
])
def test_bad_selection_metadata_exit_2_naming_the_key(capsys, tmp_path, catalog, needle, disk):
    cfg = _config(tmp_path, catalog)
    rc, out, err = _check(capsys, disk, "--config", cfg)
    assert rc == 2 and out == "" and len(err.strip().splitlines()) == 1
    assert needle in err and "Traceback" not in err
    # the fit refuses the same before it writes anything
    out_dir = tmp_path / "fit"
    rc = main(["fit", str(disk), "--config", str(cfg), "--out", str(out_dir)])
    assert rc == 2 and not out_dir.exists()


def test_region_carries_the_limits(disk):
    [r] = read_catalog(disk, overrides={"beam_major": "0.1 arcsec", "mass_limit": "10 jupiterMass"})
    assert r.spacing_min.shape == r.spacings.shape
    assert np.all(r.spacing_min < r.spacings)
    assert r.mass_limit.to_value(u.M_jup) == pytest.approx(10)
    assert any("circular beam" in w for w in r.warnings)



def test_beam_without_distance_is_refused(tmp_path):
    from astropy.table import Table

    t = Table({"id": ["a", "b", "c"], "x": [0.0, 50.0, 0.0] * u.au, "y": [10.0, 0.0, 60.0] * u.au,
               "mass": [1.0, 2.0, 3.0] * u.M_jup})
    t.meta = {"beam_major": "0.1 arcsec"}
    path = tmp_path / "c.ecsv"
    t.write(path, format="ascii.ecsv")
    with pytest.raises(CatalogError, match="distance"):
        read_catalog(path)
    assert read_catalog(path, overrides={"distance": "100 pc"})[0].spacing_min is not None
