"""``infer check`` on the demo catalogs and on bad files (exit codes, JSON keys, one-line errors)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parent.parent / "catalogs"
KEYS = {"n_clumps", "spacing_count", "spacing_median_au", "spacings_au", "mass_median_mjup",
        "masses_mjup", "warnings"}

CONFIG = """
[model]
diffusion = "ionization"
spacing = "{spacing}"

[catalog]
distance = "{distance}"

[priors]
mass_to_flux = {{ dist = "loguniform", low = 0.1, high = 10 }}
ionization = {{ dist = "loguniform", low = 1e-14, high = 1e-6 }}
surface_density = {{ dist = "lognormal", median = "60 g/cm2", sigma_dex = 0.2 }}
temperature = {{ dist = "normal", mean = "35 K", sd = "5 K" }}
stellar_mass = {{ value = "0.5 solMass" }}
radius = {{ value = "80 au" }}
"""


@pytest.mark.parametrize("name,n,count", [("demo_disk.ecsv", 8, 7), ("demo_cloud.ecsv", 30, 29),
                                          ("demo_survey.ecsv", 42, 36)])
def test_json_on_demo_files(cli, name, n, count):
    rc, out, err = cli(["check", DEMO / name, "--json"])
    assert rc == 0, err
    data = json.loads(out)
    assert KEYS <= set(data)
    assert data["n_clumps"] == n and data["spacing_count"] == count
    assert len(data["spacings_au"]) == count and len(data["masses_mjup"]) == n
    assert isinstance(data["warnings"], list)
    if name == "demo_survey.ecsv":
        assert len(data["regions"]) == 6
        assert all(KEYS <= set(r) for r in data["regions"])
    else:
        assert "regions" not in data


def test_text_summary(cli):
    rc, out, _ = cli(["check", DEMO / "demo_disk.ecsv"])
    assert rc == 0
    for needle in ("8 clumps", "median", "16-84%", "min, max", "au", "M_Jup", "warnings"):
        assert needle in out


def test_text_summary_several_regions(cli):
    rc, out, _ = cli(["check", DEMO / "demo_survey.ecsv"])
    assert rc == 0 and "region Sablemoor A" in out and "all regions" in out


def test_nearest_option(cli):
    rc, out, _ = cli(["check", DEMO / "demo_disk.ecsv", "--json", "--spacing", "nearest"])
    assert rc == 0 and json.loads(out)["spacing_count"] == 8


def test_config_overrides_and_spacing(cli, tmp_path):
    cfg = tmp_path / "run.toml"
    cfg.write_text(CONFIG.format(spacing="nearest", distance="250 pc"))
    rc, out, err = cli(["check", DEMO / "demo_disk.ecsv", "--json", "--config", cfg])
    assert rc == 0, err
    data = json.loads(out)
    assert data["spacing_count"] == 8
    assert data["metadata"]["distance"] == "250 pc"
    assert any("distance" in w and "run config" in w for w in data["warnings"])
    # the command-line option beats the config
    rc, out, _ = cli(["check", DEMO / "demo_disk.ecsv", "--json", "--config", cfg, "--spacing", "mst"])
    assert json.loads(out)["spacing_count"] == 7


def _one_line_error(rc, out, err):
    assert rc == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("infer check: error:")
    assert "Traceback" not in err


@pytest.mark.parametrize("name,content,needle", [
    ("empty.ecsv", b"", "empty"),
    ("binary.ecsv", bytes(range(256)), "not a text file"),
    ("nomass.csv", b"id,x [au],y [au]\na,0,0\nb,1,1\n", "'mass'"),
    ("nan.csv", b"id,x [au],y [au],mass [solMass]\na,0,0,1\nb,1,1,nan\n", "id 'b'"),
    ("garbage.fits", b"SIMPLE  = garbage" + bytes(3000), "FITS"),
])
def test_bad_files_exit_2(cli, tmp_path, name, content, needle):
    path = tmp_path / name
    path.write_bytes(content)
    rc, out, err = cli(["check", path])
    _one_line_error(rc, out, err)
    assert needle in err and name in err


def test_missing_file_and_bad_config(cli, tmp_path):
    _one_line_error(*cli(["check", tmp_path / "absent.ecsv"]))
    cfg = tmp_path / "bad.toml"
    cfg.write_text("[model\nspacing = 3")
    rc, out, err = cli(["check", DEMO / "demo_disk.ecsv", "--config", cfg])
    _one_line_error(rc, out, err)
    assert "bad.toml" in err


def test_subprocess_has_no_traceback(cli, tmp_path):
    path = tmp_path / "broken.ecsv"
    path.write_bytes(b"# %ECSV 1.0\n\x00\x01garbage")
    proc = cli.process(["check", path], timeout=60)
    assert proc.code == 2
    assert len(proc.err.strip().splitlines()) == 1 and "Traceback" not in proc.err
