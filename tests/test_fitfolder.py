"""The fit folder (infer.outputs.fitfolder): file names, readers, the summary as a QTable.

References outside the project: astropy.table (reading summary.ecsv back as written) and
astropy.units (parsing the unit strings of the file, and unit conversions).
"""

from __future__ import annotations

import json

import astropy.units as u
import numpy as np
import pytest
from astropy.table import Table

from infer import open_fit
from infer.errors import ChainError
from infer.outputs.fitfolder import SUMMARY_STATS, FitFolder

CONTRACT = {"chain.h5", "config.toml", "summary.ecsv", "summary.md", "summary.tex",
            "diagnostics.json", "corner.pdf", "corner.png", "predictive.pdf", "predictive.png"}


def _summary_file(folder, rows):
    """A summary.ecsv with the contract's columns (name, unit, the five statistics, kind)."""
    t = Table(rows=rows, names=("name", "unit", *SUMMARY_STATS, "kind"),
              dtype=(str, str, float, float, float, float, float, str))
    t.meta["region"] = "r"
    t.write(folder / "summary.ecsv", format="ascii.ecsv")


def test_paths_are_the_contract_names(tmp_path):
    f = FitFolder(tmp_path)
    named = {f.run_file, f.config_file, f.chain_file, *f.summary_files, f.diagnostics_file,
             f.pointwise_file, f.band_file, *f.report_files, f.compare_file,
             *(f.figure(s, x) for s in f.figure_stems(radial=False) for x in ("pdf", "png"))}
    assert {p.parent for p in named} == {tmp_path}
    # README "Stable names": the output-folder contract of `infer fit`
    assert CONTRACT <= {p.name for p in named}
    assert f.figure_stems(radial=True)[-1] == "radial"


def test_summary_is_a_qtable_in_the_file_units(tmp_path):
    _summary_file(tmp_path, [("field", "mG", 2.0, 1.0, 3.0, 0.5, 4.0, "derived"),
                             ("mass_to_flux", "", 1.5, 1.0, 2.0, 0.8, 3.0, "sampled"),
                             ("spacing_scatter", "dex", 0.1, 0.05, 0.2, 0.01, 0.3, "sampled"),
                             ("surface_density", "g / cm2", 60, 50, 70, 40, 80, "fixed")])
    s = open_fit(tmp_path).summary()
    assert list(s["stat"]) == list(SUMMARY_STATS)
    assert s.colnames[1:] == ["field", "mass_to_flux", "spacing_scatter", "surface_density"]
    raw = Table.read(tmp_path / "summary.ecsv", format="ascii.ecsv")
    for r in raw:
        col = s[str(r["name"])]
        text = "" if np.ma.is_masked(r["unit"]) else str(r["unit"])   # "" reads back as masked
        unit = u.Unit(text) if text else u.dimensionless_unscaled
        assert col.unit == unit            # astropy's reading of the unit the file states
        assert np.array_equal(col.value, [r[k] for k in SUMMARY_STATS])
    # astropy conversion: 2 mG = 2e-3 G
    assert s.loc["median"]["field"].to_value(u.G) == pytest.approx(2e-3, rel=1e-12)
    assert s.meta["kind"] == {"field": "derived", "mass_to_flux": "sampled",
                              "spacing_scatter": "sampled", "surface_density": "fixed"}
    assert s.meta["region"] == "r"


@pytest.mark.parametrize("row", [("field", "G", 2.0, 1.0, 3.0, 0.5, 4.0, "derived"),
                                 ("no_such_quantity", "", 1, 1, 1, 1, 1, "derived")])
def test_summary_refuses_names_or_units_it_does_not_write(tmp_path, row):
    _summary_file(tmp_path, [row])
    with pytest.raises(ChainError, match="summary.ecsv"):
        open_fit(tmp_path).summary()


def test_missing_or_broken_files_are_chain_errors_naming_them(tmp_path):
    f = open_fit(tmp_path)
    for read, name in ((f.run_info, "run.json"), (f.diagnostics, "diagnostics.json"),
                       (f.pointwise, "pointwise.npz"), (f.summary, "summary.ecsv"),
                       (f.load, "config.toml")):
        with pytest.raises(ChainError, match=name.replace(".", r"\.")):
            read()
    (tmp_path / "diagnostics.json").write_text("[1, 2]")
    with pytest.raises(ChainError, match="diagnostics.json"):
        f.diagnostics()
    np.savez(tmp_path / "pointwise.npz", loglike=np.zeros((3, 2)), labels=np.array(["a"]))
    with pytest.raises(ChainError, match="inconsistent shapes"):
        f.pointwise()


def test_run_info_and_held_hash(tmp_path):
    f = open_fit(tmp_path)
    assert f.held_run_hash() is None
    f.write_run_info(run_hash="abc", region="R", source=tmp_path / "cat.ecsv")
    info = f.run_info()
    assert (info.run_hash, info.region, info.source) == ("abc", "R", tmp_path / "cat.ecsv")
    assert f.held_run_hash() == "abc"
    assert json.loads(f.run_file.read_text())["source"] == str((tmp_path / "cat.ecsv").resolve())


def test_pointwise_round_trip(tmp_path):
    f = open_fit(tmp_path)
    ll = np.random.default_rng(0).normal(size=(20, 3))
    th = np.ones((20, 2))
    f.write_pointwise(loglike=ll, theta=th, labels=["s:1", "s:2", "m:a"], names=["a", "b"])
    p = f.pointwise()
    assert np.array_equal(p.loglike, ll) and np.array_equal(p.theta, th)
    assert p.labels == ("s:1", "s:2", "m:a") and p.names == ("a", "b")


@pytest.mark.slow
def test_demo_fit_reads_back(demo_fit):
    from infer.pipeline.fit import load_fit

    f = open_fit(demo_fit.path)
    assert f.is_complete() and f.has_chain()
    s = f.summary()
    raw = Table.read(f.summary_file, format="ascii.ecsv")
    assert s.colnames[1:] == [str(n) for n in raw["name"]]
    assert s.loc["median"]["fragment_mass"].unit == u.M_jup
    d = f.diagnostics()
    assert d["steps"] == demo_fit.steps and d["walkers"] == demo_fit.walkers
    config, model, region, chain, tau = load_fit(demo_fit.path)     # the old tuple still unpacks
    fit = f.load()
    assert np.array_equal(fit.chain.chain, chain.chain) and np.array_equal(fit.tau, tau)
    assert fit.region.name == region.name == f.run_info().region
    assert fit.posterior().n > 0
    p = f.pointwise()
    assert p.names == tuple(model.names) and p.loglike.shape[1] == len(model.obs.labels)
