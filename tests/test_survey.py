"""``infer survey``: parallel fits on a real local Dask cluster equal sequential fits bit for bit;
bad regions are recorded, finished regions skipped, lost workers' regions refitted.

Chains are tiny (12 walkers, 200 steps) so the file runs in a few minutes on two cores; the
chains never converge at that length, which the survey records as ``converged = False``
(not a failure). The tests on the cluster and sequential fixtures (about 20 s to build) are
marked slow; only the cluster needs the survey extra (dask.distributed).
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import signal
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from astropy.table import Table, vstack

from infer.catalog.regions import read_catalog
from infer.cli import main
from infer.errors import ChainError, InferError
from infer.inference.chainfile import read_chain
from infer.inference.config import load_config
from infer.inference.priors import Prior
from infer.pipeline.fit import fit_region, run_hash
from infer.pipeline.survey import (
    folder_names,
    read_regions,
    region_config,
    region_seed,
    run_survey,
    survey_table,
)

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "catalogs" / "demo_survey.ecsv"
DEMO_CONFIG = ROOT / "catalogs" / "demo_survey.toml"
GROUPS = ("Sablemoor A", "Sablemoor C", "Sablemoor E", "Sablemoor F")
FOLDERS = tuple(g.replace(" ", "_") for g in GROUPS)
STEPS = 200


def _demo_rows(groups) -> Table:
    t = Table.read(DEMO, format="ascii.ecsv")
    return t[[str(g) in groups for g in t["group"]]]


@pytest.fixture(scope="module")
def config(tmp_path_factory):
    """The shipped demo survey config with tiny chains; surface density and temperature fixed
    (to each region's local conditions), which leaves 4 sampled parameters and makes the
    optimiser's start several times cheaper."""
    text = DEMO_CONFIG.read_text()
    text = re.sub(r"(?m)^surface_density .*$", 'surface_density = { value = "50 g/cm2" }', text)
    text = re.sub(r"(?m)^temperature .*$", 'temperature = { value = "30 K" }', text)
    path = tmp_path_factory.mktemp("config") / "tiny.toml"
    path.write_text(text)
    cfg = load_config(path)
    assert cfg.sampled == ["mass_to_flux", "ionization", "spacing_scatter", "mass_scatter"]
    return cfg.with_sampler(walkers=12, max_steps=STEPS, check_every=50, seed=7)


@pytest.fixture(scope="module")
def catalogs(tmp_path_factory):
    """good.ecsv: four demo groups; mixed.ecsv: the same plus a group of a single clump."""
    d = tmp_path_factory.mktemp("catalogs")
    good = _demo_rows(GROUPS)
    good.write(d / "good.ecsv", format="ascii.ecsv")
    lonely = good[:1].copy()
    lonely["group"][0] = "Lonely"
    lonely["id"][0] = "L-1"
    n_a = int(np.sum(good["group"] == GROUPS[0]))
    mixed = vstack([good[:n_a], lonely, good[n_a:]], metadata_conflicts="silent")
    mixed.meta = good.meta
    mixed.write(d / "mixed.ecsv", format="ascii.ecsv")
    return d / "good.ecsv", d / "mixed.ecsv"


@pytest.fixture(scope="module")
def sequential(catalogs, config, tmp_path_factory):
    """The four regions fitted one after the other in this process, with the survey's seeds."""
    out = tmp_path_factory.mktemp("sequential")
    chains = {}
    for region in read_catalog(catalogs[0], spacing=config.model.spacing):
        cfg = region_config(config, region)
        fit_region(region, cfg, out / region.name, catalog_bytes=catalogs[0].read_bytes(),
                   progress=False, plots=False)
        data = read_chain(out / region.name / "chain.h5")
        chains[region.name] = (data.chain, data.log_prob)
    return chains


def _worker_processes() -> list:
    """The worker processes of a local cluster started by this process (spawned children)."""
    import psutil

    return [p for p in psutil.Process().children(recursive=True)
            if any("spawn_main" in part for part in p.cmdline())]


def _steps(folder: Path) -> int:
    try:
        return read_chain(folder / "chain.h5").iteration
    except ChainError:
        return 0


@pytest.fixture(scope="module")
def survey(catalogs, config, tmp_path_factory):
    """The mixed catalog surveyed on a local cluster of two worker processes, one of which is
    killed (SIGKILL) once a region has checkpointed a block of its chain."""
    pytest.importorskip("dask.distributed")
    pytest.importorskip("psutil")         # installed with distributed; finds the workers
    out = tmp_path_factory.mktemp("survey")
    outcome: dict = {}

    def target():
        try:
            outcome["result"] = run_survey([catalogs[1]], config, out, n_workers=2,
                                           progress=False, plots=False)
        except BaseException as exc:  # noqa: BLE001 - re-raised below, in the test's thread
            outcome["error"] = exc

    thread = threading.Thread(target=target)
    thread.start()
    while thread.is_alive() and not any(_steps(p) >= 50 for p in out.glob(".partial-*")):
        time.sleep(0.05)
    workers = _worker_processes()
    killed = thread.is_alive() and bool(workers)
    if killed:  # both workers are busy now (four regions, two workers): a task is lost
        os.kill(workers[0].pid, signal.SIGKILL)
    thread.join()
    if "error" in outcome:
        raise outcome["error"]
    return out, outcome["result"], {"workers": len(workers), "killed": killed}


def _assert_same_chains(out: Path, sequential) -> None:
    for group, folder in zip(GROUPS, FOLDERS, strict=True):
        data = read_chain(out / folder / "chain.h5")
        chain, log_prob = sequential[group]
        assert data.chain.shape == (STEPS, 12, 4)
        assert np.array_equal(data.chain, chain), group
        assert np.array_equal(data.log_prob, log_prob), group


# ------------------------------------------------------------- on a cluster ----

@pytest.mark.slow
def test_parallel_survey_equals_sequential_fits(survey, sequential):
    out, result, _ = survey
    _assert_same_chains(out, sequential)
    assert sorted(result.fitted) == sorted(FOLDERS)
    assert result.skipped == ()
    assert result.dashboard and result.dashboard.startswith("http")
    assert not [p.name for p in out.iterdir() if p.name.startswith(".")]  # no partial left


@pytest.mark.slow
def test_bad_region_is_recorded_and_the_others_finish(survey):
    out, result, _ = survey
    t = Table.read(out / "survey.ecsv", format="ascii.ecsv")
    assert list(t["region"]) == [GROUPS[0], "Lonely", *GROUPS[1:]]
    lonely = t[t["region"] == "Lonely"][0]
    assert "group 'Lonely' has 1 clump" in lonely["error"]
    assert not lonely["converged"] and np.isnan(lonely["mass_to_flux_median"])
    assert result.failed == ("Lonely",)
    good = t[t["region"] != "Lonely"]
    assert list(np.ma.filled(good["error"], "")) == [""] * len(GROUPS)  # "" reads back masked
    assert list(good["folder"]) == list(FOLDERS)
    assert list(good["n_clumps"]) == [int(np.sum(_demo_rows([g])["group"] == g)) for g in GROUPS]
    # tiny chains: not converged, which is a result, not a failure
    assert not any(good["converged"]) and set(good["steps"]) == {STEPS}


@pytest.mark.slow
def test_table_columns_units_and_values(survey, config):
    out, _, _ = survey
    t = Table.read(out / "survey.ecsv", format="ascii.ecsv")
    for name in ("mass_to_flux", "ionization", "eta_ad", "eta_ohm", "field", "eta_total",
                 "wavelength", "fragment_mass", "growth_time", "toomre_q", "surface_density",
                 "temperature", "radius", "stellar_mass"):
        for k in ("median", "p16", "p84"):
            assert f"{name}_{k}" in t.colnames
    assert str(t["field_median"].unit) == "mG"
    assert str(t["wavelength_p16"].unit) == "AU"
    assert str(t["surface_density_median"].unit) == "g / cm2"
    ok = t[np.ma.filled(t["error"], "") == ""]
    assert np.all(ok["mass_to_flux_p16"] <= ok["mass_to_flux_median"])
    assert np.all(ok["mass_to_flux_median"] <= ok["mass_to_flux_p84"])
    # each row is its region's summary.ecsv
    for row in ok:
        s = Table.read(out / row["folder"] / "summary.ecsv", format="ascii.ecsv")
        field = s[s["name"] == "field"][0]
        assert row["field_median"] == field["median"] and row["field_p84"] == field["p84"]
    # the same table as CSV, for pandas
    import pandas as pd

    df = pd.read_csv(out / "survey.csv")
    df["error"] = df["error"].fillna("")
    assert list(df["region"]) == list(t["region"])
    assert np.allclose(df.loc[df["error"] == "", "field_median"], ok["field_median"], rtol=1e-12)
    assert {"converged", "error", "folder", "source", "n_clumps"} <= set(df.columns)
    for fig in ("survey.png", "survey.pdf"):
        assert (out / fig).stat().st_size > 5000


@pytest.mark.slow
def test_regions_get_their_seed_and_local_conditions(survey, catalogs):
    out, _, _ = survey
    truth = Table.read(DEMO, format="ascii.ecsv").meta["groups"]
    for group, folder in zip(GROUPS, FOLDERS, strict=True):
        diag = json.loads((out / folder / "diagnostics.json").read_text())
        assert diag["seed"] == region_seed(7, group)
        saved = load_config(out / folder / "config.toml")
        # `infer fit CATALOG --region NAME --config <folder>/config.toml` is the same run
        held = json.loads((out / folder / "run.json").read_text())["run_hash"]
        assert run_hash(catalogs[1].read_bytes(), group, saved) == held
        local = truth[group]["local_conditions"]
        assert saved.priors["radius"].value == pytest.approx(float(local["radius"].split()[0]))
        assert saved.priors["stellar_mass"].value == pytest.approx(
            float(local["stellar_mass"].split()[0]))
        assert saved.priors["surface_density"].value == pytest.approx(
            float(local["surface_density"].split()[0]))


@pytest.mark.slow
def test_rerun_skips_finished_regions(survey, catalogs, config):
    out, _, _ = survey
    stamps = {f: (out / f / "chain.h5").stat().st_mtime_ns for f in FOLDERS}
    again = run_survey([catalogs[1]], config, out, n_workers=2, progress=False, plots=False)
    assert sorted(again.skipped) == sorted(FOLDERS)
    assert again.fitted == () and again.failed == ("Lonely",)
    assert again.dashboard is None  # nothing to fit: no cluster was started
    assert {f: (out / f / "chain.h5").stat().st_mtime_ns for f in FOLDERS} == stamps
    assert len(again.table) == 5


@pytest.mark.slow
def test_raised_max_steps_continues_a_finished_chain(survey, catalogs, config, tmp_path):
    """A finished, unconverged region is continued (not refitted) when max_steps grows."""
    from infer.pipeline.survey import _fit_task, _Task

    out, _, _ = survey
    shutil.copytree(out / FOLDERS[0], tmp_path / FOLDERS[0])
    region = next(e.region for e in read_regions([catalogs[1]], config) if e.name == GROUPS[0])
    longer = region_config(config.with_sampler(max_steps=STEPS + 50), region)
    task = _Task(region, longer, catalogs[1].read_bytes(), FOLDERS[0], str(tmp_path), False)
    row = _fit_task(task)
    assert row["error"] == "" and row["steps"] == STEPS + 50 and not row["skipped"]
    diag = json.loads((tmp_path / FOLDERS[0] / "diagnostics.json").read_text())
    assert diag["resumed_from_step"] == STEPS
    new = read_chain(tmp_path / FOLDERS[0] / "chain.h5").chain
    old = read_chain(out / FOLDERS[0] / "chain.h5").chain
    assert np.array_equal(new[:STEPS], old)
    assert sorted(p.name for p in tmp_path.iterdir()) == [FOLDERS[0]]


@pytest.mark.slow
def test_lost_worker_region_is_refitted(survey, sequential):
    """The survey fixture killed one of the two workers mid-chain: the scheduler reran its
    task, and every region still ends with the chain of an uninterrupted sequential fit."""
    out, result, kill = survey
    assert kill == {"workers": 2, "killed": True}
    assert sorted(result.fitted) == sorted(FOLDERS) and result.failed == ("Lonely",)
    _assert_same_chains(out, sequential)


@pytest.mark.slow
def test_interrupted_region_resumes_from_its_checkpoint(catalogs, config, sequential, tmp_path):
    """A partial folder left by a lost task is continued from its checkpoint, to the same chain."""
    from infer.pipeline.survey import _fit_task, _Task

    region = read_catalog(catalogs[0])[1]
    data = catalogs[0].read_bytes()
    half = _Task(region, region_config(config.with_sampler(max_steps=STEPS // 2), region), data,
                 FOLDERS[1], str(tmp_path), False)
    assert _fit_task(half)["steps"] == STEPS // 2
    os.replace(tmp_path / FOLDERS[1], tmp_path / f".partial-{FOLDERS[1]}")  # as if cut off here
    row = _fit_task(_Task(region, region_config(config, region), data, FOLDERS[1], str(tmp_path),
                          False))
    assert row["error"] == "" and row["steps"] == STEPS
    diag = json.loads((tmp_path / FOLDERS[1] / "diagnostics.json").read_text())
    assert diag["resumed_from_step"] == STEPS // 2
    assert np.array_equal(read_chain(tmp_path / FOLDERS[1] / "chain.h5").chain,
                          sequential[GROUPS[1]][0])
    assert [p.name for p in tmp_path.iterdir()] == [FOLDERS[1]]


# ------------------------------------------------------------ command line ----

def test_cli_missing_catalog_is_exit_2(tmp_path, capsys):
    code = main(["survey", str(tmp_path / "nope.ecsv"), "--config", str(DEMO_CONFIG),
                 "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "nope.ecsv: no such file" in err
    assert not (tmp_path / "o").exists()


def test_cli_bad_config_is_exit_2(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(DEMO_CONFIG.read_text().replace("[sampler]", "[sampler]\nspeed = 3"))
    code = main(["survey", str(DEMO), "--config", str(bad), "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "sampler.speed: unknown key" in err


def test_cli_workers_with_scheduler_is_exit_2(tmp_path, capsys):
    code = main(["survey", str(DEMO), "--config", str(DEMO_CONFIG), "--out", str(tmp_path / "o"),
                 "--scheduler", "tcp://127.0.0.1:1", "--workers", "2"])
    err = capsys.readouterr().err
    assert code == 2 and "--workers" in err and err.count("\n") == 1


def test_cli_every_region_failing_is_exit_2_after_writing_the_table(tmp_path, capsys):
    t = _demo_rows(GROUPS[:2])
    keep = [0, int(np.sum(t["group"] == GROUPS[0]))]  # one clump left in each group
    t[keep].write(tmp_path / "thin.ecsv", format="ascii.ecsv")
    code = main(["survey", str(tmp_path / "thin.ecsv"), "--config", str(DEMO_CONFIG),
                 "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "every region failed" in err
    table = Table.read(tmp_path / "o" / "survey.ecsv", format="ascii.ecsv")
    assert list(table["region"]) == list(GROUPS[:2])
    assert all("1 clump" in e for e in table["error"])


# ------------------------------------------------------------------ pieces ----

def test_region_seed_is_the_documented_hash():
    expect = int.from_bytes(hashlib.sha256(b"3:Sablemoor A").digest()[:4], "big")
    assert region_seed(3, "Sablemoor A") == expect
    seeds = {region_seed(s, n) for s in (1, 2) for n in ("A", "B", "a")}
    assert len(seeds) == 6 and all(0 <= s < 2**32 for s in seeds)


def test_folder_names_are_safe_unique_and_order_free():
    pairs = [("x.ecsv", "Sablemoor A"), ("x.ecsv", "a/b"), ("y.ecsv", "a b"), ("x.ecsv", "../up"),
             ("x.ecsv", "..."), ("x.ecsv", "survey.csv"), ("x.ecsv", "Ab"), ("y.ecsv", "aB")]
    names = folder_names(pairs)
    assert names[0] == "Sablemoor_A" and names[3] == "up" and names[4] == "region"
    assert names[1].startswith("a_b-") and names[2].startswith("a_b-")
    assert names[5].startswith("survey.csv-")
    assert len({n.lower() for n in names}) == len(names)
    assert all("/" not in n and not n.startswith(".") for n in names)
    assert folder_names(pairs[::-1]) == names[::-1]


class _Region:
    def __init__(self, meta, name="R"):
        self.meta, self.name, self.source = meta, name, "r.ecsv"


def test_local_conditions_adjust_the_priors():
    config = load_config(DEMO_CONFIG).with_sampler(seed=7)
    local = {"stellar_mass": "0.8 solMass", "surface_density": "90 g/cm2",
             "temperature": "45 K", "mass_to_flux": 2.0}
    cfg = region_config(config, _Region({"local_conditions": local}))
    p = cfg.priors
    assert p["stellar_mass"] == Prior("stellar_mass", "fixed", {"value": 0.8})
    assert p["surface_density"].args == {"median": 90.0, "sigma_dex": 0.2}
    assert p["temperature"].args == pytest.approx({"mean": 45.0, "sd": 9.0})  # 20% kept
    assert p["mass_to_flux"] == config.priors["mass_to_flux"]  # loguniform: a range, kept
    assert p["radius"] == config.priors["radius"]
    assert cfg.sampler.seed == region_seed(7, "R")
    plain = region_config(config, _Region({"local_conditions": local}), local_conditions=False)
    assert plain.priors == config.priors


def test_demo_survey_config_serves_every_demo_region():
    config = load_config(DEMO_CONFIG)
    entries = read_regions([DEMO], config)
    assert len(entries) == 6 and not any(e.error for e in entries)
    for e in entries:
        truth = e.region.meta["true_parameters"]
        p = region_config(config, e.region).priors
        assert p["radius"].value == pytest.approx(float(truth["radius"].split()[0]))
        assert p["stellar_mass"].value == pytest.approx(float(truth["stellar_mass"].split()[0]))
        # the field and ionization priors cover every region's true value
        lo, hi = p["mass_to_flux"].support()
        assert lo < float(truth["mass_to_flux"]) < hi
        lo, hi = p["ionization"].support()
        assert lo < float(truth["ionization"]) < hi


@pytest.mark.parametrize("local, message", [
    ({"kappa": "1e-10 1/s"}, "'kappa' is not a parameter of this run config"),
    ({"radius": "70 K"}, "radius"),
    ("70 au", "must be a table"),
])
def test_bad_local_conditions_name_the_problem(config, local, message):
    with pytest.raises(InferError, match=message):
        region_config(config, _Region({"local_conditions": local}))


def test_bad_group_is_read_apart_from_the_others(catalogs, config):
    entries = read_regions([catalogs[1]], config)
    assert [e.name for e in entries] == [GROUPS[0], "Lonely", *GROUPS[1:]]
    ref = {r.name: r for r in read_catalog(catalogs[0])}
    for e in entries:
        if e.name == "Lonely":
            assert e.region is None and str(catalogs[1]) in e.error and "1 clump" in e.error
            continue
        assert not e.error and e.region.source == str(catalogs[1])
        assert np.array_equal(e.region.spacings.value, ref[e.name].spacings.value)
        assert np.array_equal(e.region.masses.value, ref[e.name].masses.value)


def test_unreadable_file_is_one_failed_row(tmp_path, config):
    junk = tmp_path / "junk.ecsv"
    junk.write_text("not a table\n")
    [entry] = read_regions([junk], config)
    assert entry.name == "junk" and entry.region is None and "junk.ecsv" in entry.error


def test_survey_table_from_rows():
    rows = [{"region": "A", "source": "a.ecsv", "n_clumps": 5, "converged": True, "steps": 9,
             "error": "", "folder": "A",
             "stats": {"field": {"unit": "mG", "median": 2.0, "p16": 1.0, "p84": 3.0},
                       "mass_to_flux": {"unit": "", "median": 1.5, "p16": 1.0, "p84": 2.0}}},
            {"region": "B", "source": "b.ecsv", "n_clumps": 1, "converged": False, "steps": 0,
             "error": "bad", "folder": "", "stats": {}}]
    t = survey_table(rows)
    assert t.colnames[:6] == ["region", "source", "n_clumps", "mass_to_flux_median",
                              "mass_to_flux_p16", "mass_to_flux_p84"]
    assert t.colnames[-4:] == ["converged", "steps", "error", "folder"]
    assert str(t["field_p84"].unit) == "mG" and t["mass_to_flux_median"].unit is None
    assert np.isnan(t["field_median"][1]) and t["error"][1] == "bad"
