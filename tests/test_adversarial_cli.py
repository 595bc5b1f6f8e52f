"""Every command with garbage input: exit code 2, one line on stderr, no traceback, no output.

The contract (README, "Stable names: commands, JSON keys, files"): a user error -- a bad option value,
a missing required option, a nonexistent path, a folder instead of a file, a
binary file named .ecsv, an empty file, NaN or infinite cells, a refused
overwrite -- exits with code 2 and exactly one line on stderr naming the
problem, never a traceback, and leaves no output behind: an output folder that
did not exist still does not, one that existed is unchanged.

The commands run in-process through ``infer.cli.main``; two subprocess runs
check the real entry point. A valid catalog of 10 000 clumps goes through
``infer check --json`` (its time is printed with ``pytest -s``, not asserted).
"""

from __future__ import annotations

import hashlib
import json
import shutil
import time
from pathlib import Path

import astropy.units as u
import numpy as np
import pytest
from astropy.table import Table
from hypothesis_compat import HealthCheck, given, settings, st

from infer.commands.conditions import OPTIONS

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "catalogs" / "demo_disk.ecsv"
DEMO_CONFIG = ROOT / "catalogs" / "demo_disk.toml"
COMMANDS = ("predict", "spectrum", "check", "fit", "plot", "report", "survey")
HAS_SURVEY = (ROOT / "infer" / "commands" / "survey.py").exists()
needs_survey = pytest.mark.skipif(not HAS_SURVEY, reason="infer/commands/survey.py does not exist yet")
FUZZ = settings(deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
N_PREDICT_FUZZ, N_CHECK_FUZZ = 150, 60


def assert_user_error(code, out, err, needle=""):
    assert code == 2, (code, out, err)
    assert err.endswith("\n") and err.count("\n") == 1, err
    assert "Traceback" not in out + err
    assert needle.lower() in err.lower(), err


def snapshot(folder: Path):
    """Everything in a folder (names, sizes, contents, times); None if it does not exist."""
    if not folder.exists():
        return None
    return sorted((str(p.relative_to(folder)), p.is_dir(), p.stat().st_mtime_ns,
                   hashlib.sha256(p.read_bytes()).hexdigest() if p.is_file() else "")
                  for p in folder.rglob("*"))


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("inputs")
    shutil.copy(DEMO, d / "disk.ecsv")
    (d / "run.toml").write_text(DEMO_CONFIG.read_text())
    (d / "binary.ecsv").write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4)
    (d / "binary.toml").write_bytes(b"\x1f\x8b\x08\x00" + bytes(range(256)))
    (d / "empty.ecsv").write_bytes(b"")
    (d / "empty.toml").write_bytes(b"")
    (d / "garbage.toml").write_text("[model\ndiffusion = ")
    (d / "unknown.toml").write_text(DEMO_CONFIG.read_text() + "\n[extra]\nx = 1\n")
    (d / "folder.ecsv").mkdir()
    (d / "a_folder").mkdir()
    header = "id,x [au],y [au],mass [jupiterMass]\n"
    rows = ["a,0,0,10", "b,10,1,12", "c,3,12,9", "d,14,13,11"]
    for name, bad in [("nan", "c,nan,12,9"), ("inf", "c,3,inf,9"), ("e400", "c,3,1e400,9"),
                      ("negmass", "c,3,12,-9"), ("nomass", "c,3,12,")]:
        (d / f"{name}.csv").write_text(header + "\n".join(rows[:2] + [bad] + rows[3:]) + "\n")
    (d / "dupid.csv").write_text(header + "☃,0,0,1\n☃,1,1,1\nb,2,0,1\n")
    (d / "flux.csv").write_text("# distance = 140 pc\nid,x [arcsec],y [arcsec],flux [mJy]\n"
                                "a,0,0,1\nb,0.1,0.02,2\nc,0.03,0.12,1\n")
    return d


DUST = {"wavelength": '"1.3 mm"', "dust_temperature": '"20 K"', "dust_opacity": '"0.9 cm2/g"',
        "gas_to_dust": "100"}


def with_catalog_table(files, line: str) -> Path:
    """The demo run config with a [catalog] table: dust settings for fluxes, and ``line``."""
    key = line.split("=")[0].strip()
    table = {**DUST, key: line.split("=", 1)[1].strip()}
    p = files / f"cat_{hashlib.sha1(line.encode()).hexdigest()[:10]}.toml"
    p.write_text("[catalog]\n" + "".join(f"{k} = {v}\n" for k, v in table.items()) + "\n"
                 + DEMO_CONFIG.read_text())
    return p


def test_every_contract_command_is_wired(cli):
    from infer.cli import COMMANDS as WIRED

    assert set(COMMANDS) <= set(WIRED)
    code, out, err = cli([])
    assert code == 2 and "Traceback" not in out + err


# ---------------------------------------------------------------- predict ----

BASE = ["--surface-density", "80 g/cm2", "--temperature", "40 K"]
PREDICT_CASES = [
    ([], "--surface-density: required"),
    (["--surface-density", "80 g/cm2"], "--temperature: required"),
    (["--temperature", "40 K"], "--surface-density: required"),
    (["--surface-density", "80", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "☃ g/cm2", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "80 g/cm2", "--temperature", "40 Ω"], "--temperature"),
    (["--surface-density", "80 g/cm2", "--temperature", "nan K"], "--temperature"),
    (["--surface-density", "80 g/cm2", "--temperature", "inf K"], "--temperature"),
    (["--surface-density", "80 g/cm2", "--temperature", "-0 K"], "--temperature"),
    (["--surface-density", "1e400 g/cm2", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "-3 g/cm2", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "[80, 90] g/cm2", "--temperature", "40 K"], ""),
    (["--surface-density", "80 g/cm2", "--column-density", "2e25 cm-2", "--temperature", "40 K"],
     "--column-density"),
    (["--column-density", "2e25 g", "--temperature", "40 K"], "--column-density"),
    ([*BASE, "--field", "1 mG", "--mass-to-flux", "2"], "--mass-to-flux"),
    ([*BASE, "--mass-to-flux", "abc"], "--mass-to-flux"),
    ([*BASE, "--mass-to-flux", "nan"], "--mass-to-flux"),
    ([*BASE, "--mass-to-flux", "2 G"], "--mass-to-flux"),
    ([*BASE, "--mass-to-flux", "-1"], "--mass-to-flux"),
    ([*BASE, "--field", "1 K"], "--field"),
    ([*BASE, "--field", "-1 mG"], "--field"),
    ([*BASE, "--eta-ad", "1e18"], "--eta-ad"),
    ([*BASE, "--eta-ohm", "1e18 cm/s"], "--eta-ohm"),
    ([*BASE, "--ionization", "2"], "--ionization"),
    ([*BASE, "--ionization", "1e-9", "--eta-ad", "1e18 cm2/s"], "--eta-ad"),
    ([*BASE, "--ionization", "1e-9", "--cosmic-ray-rate", "1e-17 1/s"], "--cosmic-ray-rate"),
    ([*BASE, "--cosmic-ray-rate", "1e-17"], "--cosmic-ray-rate"),
    ([*BASE, "--kappa", "2e-10"], "--kappa"),
    ([*BASE, "--kappa", "2e-10 1/s", "--stellar-mass", "1 solMass", "--radius", "100 au"],
     "--kappa"),
    ([*BASE, "--stellar-mass", "1 solMass"], "--radius"),
    ([*BASE, "--radius", "100 au"], "--stellar-mass"),
    ([*BASE, "--stellar-mass", "1 au", "--radius", "100 au"], "--stellar-mass"),
    ([*BASE, "--external-pressure", "-1 dyn/cm2"], "--external-pressure"),
    ([*BASE, "--external-pressure", "1 K"], "--external-pressure"),
    ([*BASE, "--mu-gas", "abc"], "--mu-gas"),
    ([*BASE, "--mu-gas", "nan"], "--mu-gas"),
    ([*BASE, "--mu-gas", "-2"], "--mu-gas"),
    ([*BASE, "--fragment-shape", "round"], "--fragment-shape"),
    ([*BASE, "--bogus", "1"], "--bogus"),
    ([*BASE, "--temperature"], "--temperature"),
    # finite but extreme: the scales or the kernel's inputs leave the float range
    (["--surface-density", "1e300 g/cm2", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "1e-300 g/cm2", "--temperature", "40 K"], "--surface-density"),
    (["--surface-density", "80 g/cm2", "--temperature", "1e-300 K"], "--temperature"),
    (["--surface-density", "80 g/cm2", "--temperature", "1e290 K"], "--temperature"),
    ([*BASE, "--mass-to-flux", "1e-300"], "--mass-to-flux"),
    ([*BASE, "--field", "1e300 G"], "--field"),
    ([*BASE, "--mass-to-flux", "1.5", "--eta-ad", "1e300 cm2/s"], "--eta-ad"),
    ([*BASE, "--mass-to-flux", "1.5", "--ionization", "1e-300"], "--ionization"),
    ([*BASE, "--mass-to-flux", "1.5", "--cosmic-ray-rate", "1e300 1/s"], "--cosmic-ray-rate"),
    ([*BASE, "--mass-to-flux", "1.5", "--cosmic-ray-rate", "1e-300 1/s"], "--cosmic-ray-rate"),
    ([*BASE, "--kappa", "1e300 1/s"], "--kappa"),
    ([*BASE, "--stellar-mass", "1e300 solMass", "--radius", "100 au"], "--stellar-mass"),
    ([*BASE, "--stellar-mass", "1 solMass", "--radius", "1e-300 au"], "--radius"),
    ([*BASE, "--external-pressure", "1e300 dyn/cm2"], "--external-pressure"),
    ([*BASE, "--mu-gas", "1e-320"], "--mu-gas"),
    ([*BASE, "--mass-to-flux", "0.01", "--eta-ad", "1e-300 cm2/s"], "growth time"),
]


@pytest.mark.parametrize("argv, needle", PREDICT_CASES)
@pytest.mark.parametrize("json_flag", [[], ["--json"]], ids=["text", "json"])
def test_predict_bad_options(cli, argv, needle, json_flag):
    assert_user_error(*cli(["predict", *argv, *json_flag]), needle)


@pytest.mark.parametrize("argv", [
    [*BASE, "--mass-to-flux", "1e300"],              # effectively no field
    [*BASE, "--field", "1e-320 G"],
    [*BASE, "--kappa", "1e-300 1/s"],
    [*BASE, "--external-pressure", "1e-300 dyn/cm2"],
    [*BASE, "--mass-to-flux", "inf"],
    [*BASE, "--mass-to-flux", "0.5", "--eta-ad", "1e-30 cm2/s"],
])
def test_predict_extreme_but_representable_values_succeed(cli, argv):
    code, out, err = cli(["predict", *argv, "--json"])
    assert code == 0 and err == "", err
    d = json.loads(out)
    if d["unstable"]:
        assert all(d[k] is not None and d[k] > 0 for k in
                   ("wavelength_au", "growth_time_yr", "fragment_mass_mjup"))


VALUE_TEXT = st.one_of(st.text(max_size=30),
                       st.builds(lambda a, b: f"{a} {b}",
                                 st.sampled_from(["1e400", "nan", "-inf", "1e-400", "-0", "0",
                                                  "1e300", "1e-300", "☃", "", "1,5"]),
                                 st.sampled_from(["g/cm2", "K", "cm2/s", "1/s", "au", "solMass",
                                                  "dyn/cm2", "mG", "cm-2", "", "Jy"])))


@settings(FUZZ, max_examples=N_PREDICT_FUZZ)
@given(option=st.sampled_from(sorted(OPTIONS)), value=VALUE_TEXT)
def test_predict_random_option_values(cli, option, value):
    opt = OPTIONS[option][0]
    if opt in BASE:                  # replace the value of a base option
        i = BASE.index(opt)
        argv = ["predict", "--json", *BASE[:i + 1], value, *BASE[i + 2:]]
    else:
        argv = ["predict", "--json", *BASE, opt, value]
    if option in ("cosmic_ray_rate", "ionization"):
        argv += ["--mass-to-flux", "1.5"]
    code, out, err = cli(argv)
    if code == 0:
        assert err == "" and isinstance(json.loads(out)["unstable"], bool)
    else:
        assert_user_error(code, out, err)
        assert (opt in err or "--mass-to-flux" in err or "--surface-density" in err
                or "floating-point" in err or "growth time" in err or "argument" in err), err


# --------------------------------------------------------------- spectrum ----

@pytest.mark.parametrize("make, needle", [
    (lambda d: [*BASE], "--out"),
    (lambda d: [*BASE, "--out", d / "a_folder"], "--out"),
    (lambda d: [*BASE, "--out", d / "missing_folder" / "x.csv"], "--out"),
    (lambda d: [*BASE, "--out", d / "binary.ecsv" / "x.csv"], "--out"),
    (lambda d: [*BASE, "--out", d / "x.txt"], "--out"),
    (lambda d: [*BASE, "--out", d / "x"], "--out"),
    (lambda d: [*BASE, "--out", d / "x.csv", "--points", "abc"], "--points"),
    (lambda d: [*BASE, "--out", d / "x.csv", "--points", "5"], "--points"),
    (lambda d: [*BASE, "--out", d / "x.csv", "--points", "10000000000000000000000"], "--points"),
    (lambda d: ["--surface-density", "80 g/cm2", "--temperature", "nan K", "--out", d / "x.csv"],
     "--temperature"),
    (lambda d: ["--surface-density", "1e300 g/cm2", "--temperature", "40 K", "--out",
                d / "x.png"], "--surface-density"),
    (lambda d: [*BASE, "--kappa", "1e-9 1/s", "--out", d / "x.pdf"], "no wavelength grows"),
    (lambda d: [*BASE, "--mass-to-flux", "0.01", "--eta-ad", "1e-300 cm2/s", "--out",
                d / "x.csv"], "growth time"),
])
def test_spectrum_bad_input_writes_nothing(cli, files, make, needle):
    before = snapshot(files)
    assert_user_error(*cli(["spectrum", *make(files)]), needle)
    assert snapshot(files) == before


def test_spectrum_failure_leaves_an_existing_file_alone(cli, files, tmp_path):
    out = tmp_path / "kept.csv"
    out.write_text("earlier result\n")
    assert_user_error(*cli(["spectrum", "--surface-density", "80 g/cm2", "--temperature", "☃",
                            "--out", out]), "--temperature")
    assert out.read_text() == "earlier result\n" and [p.name for p in tmp_path.iterdir()] == [
        "kept.csv"]


# ------------------------------------------------------------------ check ----

CHECK_CASES = [
    (["nope.ecsv"], "no such file"),
    (["folder.ecsv"], "is a folder"),
    (["a_folder"], "is a folder"),
    (["binary.ecsv"], "binary"),
    (["empty.ecsv"], "empty"),
    (["nan.csv"], "column 'x'"),
    (["inf.csv"], "column 'y'"),
    (["e400.csv"], "column 'y'"),
    (["negmass.csv"], "mass"),
    (["nomass.csv"], "mass"),
    (["dupid.csv"], "'☃'"),
    (["disk.ecsv", "--config", "nope.toml"], "nope.toml"),
    (["disk.ecsv", "--config", "binary.toml"], "binary.toml"),
    (["disk.ecsv", "--config", "a_folder"], "a_folder"),
    (["disk.ecsv", "--config", "garbage.toml"], "not valid TOML"),
    (["disk.ecsv", "--config", "empty.toml"], "priors"),
    (["disk.ecsv", "--config", "unknown.toml"], "unknown table"),
    (["disk.ecsv", "--spacing", "tree"], "--spacing"),
    ([], "CATALOG"),
]


@pytest.mark.parametrize("argv, needle", CHECK_CASES)
def test_check_bad_input(cli, files, argv, needle):
    args = [files / a if (files / a).exists() or a.endswith((".ecsv", ".toml")) else a
            for a in argv]
    for extra in ([], ["--json"]):
        assert_user_error(*cli(["check", *args, *extra]), needle)


@pytest.mark.parametrize("body, needle", [
    ("distance = nan", "distance"),
    ("distance = inf", "distance"),
    ('distance = "1e400 pc"', "distance"),
    ('distance = "-5 pc"', "distance"),
    ("distance = 1" + "0" * 400, "distance"),
    ('inclination = "nan deg"', "inclination"),
    ('inclination = "1e300 deg"', "inclination"),
    ('position_angle = "inf deg"', "position_angle"),
    ('units = { mass = "foo" }', "foo"),
    ('units = { x = "K" }', "column 'x'"),
    ('exclude = ["no such id"]', "no such id"),
    ('wavelength = "1e300 mm"', "floating-point range"),
    ('wavelength = "1e-300 mm"', "floating-point range"),
    ('dust_temperature = "1e-300 K"', "floating-point range"),
    ('dust_opacity = "1e-300 cm2/g"', "floating-point range"),
    ("gas_to_dust = 1e300", "floating-point range"),
    ('dust_temperature_err = "1e300 K"', "floating-point range"),
    ('distance = "1e300 pc"', "floating-point range"),
])
def test_check_bad_catalog_metadata_in_the_config(cli, files, body, needle):
    cfg = with_catalog_table(files, body)
    assert_user_error(*cli(["check", files / "flux.csv", "--config", cfg, "--json"]), needle)


def test_check_unicode_and_very_long_ids_survive(cli, tmp_path):
    rng = np.random.default_rng(3)
    ids = ["ü☃𝔘-" + "x" * 5000 + str(i) for i in range(5)] + ["\u200b", "名前", "a\tb", "-1"]
    t = Table({"id": ids, "x": rng.normal(0, 50, len(ids)) * u.au,
               "y": rng.normal(0, 50, len(ids)) * u.au,
               "mass": rng.uniform(5, 20, len(ids)) * u.M_jup})
    path = tmp_path / "unicode.ecsv"
    t.write(path, format="ascii.ecsv")
    code, out, err = cli(["check", path, "--json"])
    assert code == 0, err
    d = json.loads(out)
    assert d["ids"] == ids and d["n_clumps"] == len(ids) and d["spacing_count"] == len(ids) - 1
    code, out, err = cli(["check", path])
    assert code == 0 and "Traceback" not in out + err


@pytest.mark.parametrize("scale", [1e-170, 1e200, 1e300])
def test_check_tiny_or_huge_coordinates_keep_every_spacing(cli, tmp_path, scale):
    # squared distances of 1e200 au overflow, of 1e-170 au underflow: every edge must stay
    path = tmp_path / "scaled.csv"
    path.write_text("id,x [au],y [au],mass [jupiterMass]\n"
                    + "".join(f"c{i},{x * scale!r},{y * scale!r},1\n"
                              for i, (x, y) in enumerate([(0, 0), (1, 0.1), (0.2, 1.3), (1.5, 1.2)])))
    code, out, err = cli(["check", path, "--json"])
    assert code == 0, err
    d = json.loads(out)
    assert d["spacing_count"] == 3
    s = np.array(d["spacings_au"]) / scale
    # the tree of the unit-scale points: edges 0-1, 1-3, 2-3 (worked out by hand)
    np.testing.assert_allclose(np.sort(s), np.sort([np.hypot(1, 0.1), np.hypot(0.5, 1.1),
                                                    np.hypot(1.3, 0.1)]), rtol=1e-12)


@settings(FUZZ, max_examples=N_CHECK_FUZZ)
@given(data=st.binary(max_size=400), suffix=st.sampled_from([".ecsv", ".csv", ".fits", ".xml"]))
def test_check_random_bytes(cli, tmp_path, data, suffix):
    path = tmp_path / f"random{suffix}"
    path.write_bytes(data)
    code, out, err = cli(["check", path, "--json"])
    if code == 0:
        json.loads(out)
    else:
        assert_user_error(code, out, err, path.name)


# -------------------------------------------------------------------- fit ----

def fit_argv(files, out, *, catalog="disk.ecsv", config="run.toml", extra=()):
    return ["fit", files / catalog, "--config", files / config, "--out", out, "--quiet",
            "--no-plots", *extra]


FIT_CASES = [
    (dict(catalog="nope.ecsv"), "not found"),
    (dict(catalog="folder.ecsv"), "is a folder"),
    (dict(catalog="binary.ecsv"), "binary"),
    (dict(catalog="empty.ecsv"), "empty"),
    (dict(catalog="nan.csv"), "column 'x'"),
    (dict(catalog="inf.csv"), "column 'y'"),
    (dict(catalog="dupid.csv"), "'☃'"),
    (dict(config="nope.toml"), "not found"),
    (dict(config="binary.toml"), "not a text"),
    (dict(config="a_folder"), "is a folder"),
    (dict(config="garbage.toml"), "not valid TOML"),
    (dict(config="empty.toml"), "priors"),
    (dict(config="unknown.toml"), "unknown table"),
    (dict(extra=["--walkers", "abc"]), "--walkers"),
    (dict(extra=["--walkers", "-4"]), "walkers"),
    (dict(extra=["--walkers", "7"]), "walkers"),
    (dict(extra=["--walkers", "1000000000000"]), "walkers"),
    (dict(extra=["--seed", "-1"]), "seed"),
    (dict(extra=["--seed", "4294967296"]), "seed"),
    (dict(extra=["--seed", "1e3"]), "--seed"),
    (dict(extra=["--max-steps", "0"]), "max_steps"),
    (dict(extra=["--max-steps", "ten"]), "--max-steps"),
    (dict(extra=["--region", "nowhere"]), "--region"),
    (dict(extra=["--resume"]), "nothing to resume"),
    (dict(extra=["--bogus"]), "--bogus"),
]


@pytest.mark.parametrize("kw, needle", FIT_CASES)
def test_fit_bad_input_creates_no_folder(cli, files, tmp_path, kw, needle):
    out = tmp_path / "deep" / "fit"
    assert_user_error(*cli(fit_argv(files, out, **kw)), needle)
    assert not (tmp_path / "deep").exists()


@pytest.mark.parametrize("kw, needle", [
    (dict(catalog="binary.ecsv"), "binary"),
    (dict(config="binary.toml"), "not a text"),
    (dict(extra=["--walkers", "1000000000000"]), "walkers"),
    (dict(extra=["--seed", "4294967296"]), "seed"),
    (dict(), "not empty"),                   # a valid run, but the folder holds other files
])
def test_fit_bad_input_leaves_an_existing_folder_unchanged(cli, files, tmp_path, kw, needle):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("my own file")
    before = snapshot(out)
    assert_user_error(*cli(fit_argv(files, out, **kw)), needle)
    assert snapshot(out) == before


FIXED = """[model]
diffusion = "ionization"
[priors]
mass_to_flux = 2.0
ionization = 1e-10
surface_density = "60 g/cm2"
temperature = "35 K"
stellar_mass = "0.5 solMass"
radius = "120 au"
spacing_scatter = 0.1
mass_scatter = 0.1
"""


@pytest.mark.parametrize("config, needle", [
    (FIXED, "nothing to fit"),
    # a 1 g/cm2 disk at 10 au is stable for every mass-to-flux ratio: no walker can start
    (FIXED.replace("mass_to_flux = 2.0", 'mass_to_flux = { dist = "loguniform", low = 0.1, '
                   'high = 10 }').replace('"60 g/cm2"', '"1 g/cm2"').replace('"120 au"', '"10 au"'),
     "no starting point"),
])
def test_fit_failing_after_the_folder_was_prepared_removes_it_with_its_parents(cli, files, tmp_path,
                                                                               config, needle):
    cfg = tmp_path / "run.toml"
    cfg.write_text(config)
    out = tmp_path / "new" / "deeper" / "fit"
    assert_user_error(*cli(["fit", files / "disk.ecsv", "--config", cfg, "--out", out,
                            "--quiet", "--no-plots"]), needle)
    assert not (tmp_path / "new").exists()


@pytest.mark.parametrize("argv, needle", [
    (["fit"], "CATALOG"),
    (["fit", DEMO], "--config"),
    (["fit", DEMO, "--config", DEMO_CONFIG], "--out"),
])
def test_fit_missing_required_options(cli, argv, needle):
    assert_user_error(*cli(argv), needle)


def test_fit_out_is_a_file(cli, files):
    target = files / "binary.ecsv"
    before = target.read_bytes()
    assert_user_error(*cli(fit_argv(files, target)), "not a folder")
    assert target.read_bytes() == before


# ------------------------------------------------------------ plot, report ----

def broken_fit_folder(tmp_path) -> Path:
    d = tmp_path / "broken"
    d.mkdir()
    (d / "config.toml").write_bytes(b"\x00\x01 not toml")
    (d / "run.json").write_text("{not json")
    (d / "chain.h5").write_bytes(b"\x89HDF\r\n garbage")
    return d


@pytest.mark.parametrize("command", ["plot", "report"])
@pytest.mark.parametrize("make, needle", [
    (lambda f, t: [t / "nope"], "no such fit folder"),
    (lambda f, t: [f / "binary.ecsv"], "no such fit folder"),
    (lambda f, t: [f / "a_folder"], "config.toml is missing"),
    (lambda f, t: [broken_fit_folder(t)], "broken"),
])
def test_plot_and_report_on_missing_or_corrupted_folders(cli, files, tmp_path, command, make, needle):
    argv = make(files, tmp_path)
    before = snapshot(Path(argv[0])) if Path(argv[0]).is_dir() else None
    assert_user_error(*cli([command, *argv]), needle)
    if before is not None:
        assert snapshot(Path(argv[0])) == before


@pytest.mark.parametrize("argv, needle", [
    (["plot"], "DIR"),
    (["plot", "{d}", "--format", "gif"], "--format"),
    (["plot", "{d}", "--format", ","], "--format"),
    (["report"], "DIR"),
    (["report", "{d}", "--forecast-field", "abc"], "--forecast-field"),
    (["report", "{d}", "--forecast-field", "nan"], "--forecast-field"),
    (["report", "{d}", "--forecast-field", "inf%"], "--forecast-field"),
    (["report", "{d}", "--forecast-field", "150%"], "--forecast-field"),
    (["report", "{d}", "--forecast-temperature", ""], "--forecast-temperature"),
    (["report", "{d}", "--forecast-column-density", "☃"], "--forecast-column-density"),
    (["report", "{d}", "--forecast-draws", "5"], "--forecast-draws"),
    (["report", "{d}", "--forecast-draws", "many"], "--forecast-draws"),
    (["report", "{d}", "{d}"], "two with --compare"),
    (["report", "{d}", "--compare"], "exactly two"),
    (["report", "{d}", "--out", "x.md"], "--out"),
])
def test_plot_and_report_bad_options(cli, files, argv, needle):
    d = files / "a_folder"
    before = snapshot(d)
    assert_user_error(*cli([a.replace("{d}", str(d)) for a in argv]), needle)
    assert snapshot(d) == before


# ----------------------------------------------------------------- survey ----

@needs_survey
@pytest.mark.parametrize("make, needle", [
    (lambda f, o: [f / "nope.ecsv", "--config", f / "run.toml", "--out", o], "no such file"),
    (lambda f, o: [f / "folder.ecsv", "--config", f / "run.toml", "--out", o], "is a folder"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "binary.toml", "--out", o], "not a text"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "garbage.toml", "--out", o], "not valid TOML"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "nope.toml", "--out", o], "not found"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", f / "binary.ecsv"],
     "not a folder"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", o, "--workers", "0"],
     "--workers"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", o, "--workers", "x"],
     "--workers"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", o, "--walkers", "3"],
     "walkers"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", o, "--seed", "-2"],
     "seed"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml", "--out", o, "--scheduler",
                   "tcp://127.0.0.1:1", "--workers", "2"], "--workers"),
    (lambda f, o: [f / "disk.ecsv", "--config", f / "run.toml"], "--out"),
    (lambda f, o: [f / "disk.ecsv", "--out", o], "--config"),
    (lambda f, o: ["--config", f / "run.toml", "--out", o], "CATALOG"),
])
def test_survey_bad_input_creates_no_folder(cli, files, tmp_path, make, needle):
    out = tmp_path / "survey"
    before = snapshot(files)
    assert_user_error(*cli(["survey", *make(files, out), "--quiet"]), needle)
    assert not out.exists() and snapshot(files) == before


@needs_survey
@pytest.mark.parametrize("catalogs", [["binary.ecsv"], ["empty.ecsv", "nan.csv"]])
def test_survey_where_every_region_fails_writes_only_its_table(cli, files, tmp_path, catalogs):
    # Documented exception (tests/test_survey.py): the survey table with each region's
    # error is written; no region folder and nothing half-written appears.
    out = tmp_path / "survey"
    assert_user_error(*cli(["survey", *[files / c for c in catalogs], "--config",
                            files / "run.toml", "--out", out, "--quiet"]), "every region failed")
    names = {p.name for p in out.iterdir()}
    assert names and all(n.startswith("survey.") for n in names), names
    t = Table.read(out / "survey.ecsv", format="ascii.ecsv")
    assert len(t) == len(catalogs) and all(t["error"])


# ------------------------------------------------------------ subprocesses ----

@pytest.mark.parametrize("argv, needle", [
    (["predict", "--surface-density", "☃ g/cm2", "--temperature", "nan K"], "--surface-density"),
    (["fit", "{bin}", "--config", "{cfg}", "--out", "{out}"], "binary"),
])
def test_real_entry_point_has_no_traceback(cli, files, tmp_path, argv, needle):
    out = tmp_path / "fit"
    argv = [a.format(bin=files / "binary.ecsv", cfg=files / "run.toml", out=out) for a in argv]
    assert_user_error(*cli.process(argv, timeout=120), needle)
    assert not out.exists()


# ----------------------------------------------------------- 10 000 clumps ----

def test_ten_thousand_clumps(cli, tmp_path):
    rng = np.random.default_rng(10_000)
    n = 100
    gx, gy = np.meshgrid(np.arange(n), np.arange(n))
    x = gx.ravel() * 10.0 + rng.uniform(-1, 1, n * n)      # 10 au grid, +-1 au jitter
    y = gy.ravel() * 10.0 + rng.uniform(-1, 1, n * n)
    t = Table({"id": [f"c{i:05d}" for i in range(n * n)], "x": x * u.au, "y": y * u.au,
               "mass": 10 ** rng.normal(1.0, 0.2, n * n) * u.M_jup})
    path = tmp_path / "big.ecsv"
    t.write(path, format="ascii.ecsv")
    start = time.perf_counter()
    code, out, err = cli(["check", path, "--json"])
    elapsed = time.perf_counter() - start
    print(f"\ninfer check --json on 10 000 clumps: {elapsed:.2f} s")
    assert code == 0, err
    d = json.loads(out)
    assert d["n_clumps"] == 10_000 and d["spacing_count"] == 9_999
    s = np.array(d["spacings_au"])
    assert s.size == 9_999 and len(d["masses_mjup"]) == 10_000
    # tree edges join grid neighbours: 10 au +- the jitter (|dx| <= 2, |dy| <= 2)
    assert np.all((s > 8.0 - 1e-9) & (s < np.hypot(12.0, 2.0)))


def test_tree_on_triangulation_equals_tree_on_all_pairs():
    # above geometry._DENSE_MAX clumps the tree is found on the Delaunay edges; it must be
    # the tree of the full distance matrix (scipy.sparse.csgraph, reference library)
    from scipy.sparse.csgraph import minimum_spanning_tree
    from scipy.spatial.distance import pdist, squareform

    from infer.catalog import geometry

    rng = np.random.default_rng(4)
    n = geometry._DENSE_MAX + 300
    t = rng.uniform(0, 1, n)
    clouds = {
        "uniform": rng.uniform(-1, 1, (n, 2)),
        "clustered": np.concatenate([rng.normal(c, 0.01, (n // 6 + 1, 2))
                                     for c in rng.uniform(-1, 1, (6, 2))])[:n],
        "on a line": np.column_stack([t, 0.5 * t]),
    }
    for name, pts in clouds.items():
        sp = geometry.clump_spacings(pts[:, 0] * u.au, pts[:, 1] * u.au)
        ref = minimum_spanning_tree(squareform(pdist(pts))).tocoo()
        got = {tuple(sorted(p)) for p in sp.pairs.tolist()}
        want = {tuple(sorted(p)) for p in zip(ref.row.tolist(), ref.col.tolist(), strict=True)}
        assert got == want, name
        np.testing.assert_allclose(sp.lengths.value.sum(), ref.sum(), rtol=1e-12)
