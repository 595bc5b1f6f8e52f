"""`infer fit` and `infer plot` as a user runs them: the output-folder contract and exit codes."""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from astropy.table import Table

from infer.cli import main

ROOT = Path(__file__).resolve().parents[1]
CONTRACT_FILES = {"chain.h5", "config.toml", "summary.ecsv", "summary.md", "summary.tex",
                  "diagnostics.json", "corner.pdf", "corner.png", "predictive.pdf", "predictive.png"}


@pytest.fixture
def demo(tmp_path):
    cat = tmp_path / "disk.ecsv"
    shutil.copy(ROOT / "catalogs/demo_disk.ecsv", cat)
    cfg = tmp_path / "run.toml"
    cfg.write_text((ROOT / "catalogs/demo_disk.toml").read_text())
    return cat, cfg


def _fit(cat, cfg, out, *extra):
    steps = [] if "--max-steps" in extra else ["--max-steps", "300"]
    return main(["fit", str(cat), "--config", str(cfg), "--out", str(out), "--walkers", "16",
                 *steps, "--quiet", *extra])


@pytest.mark.slow
def test_fit_writes_the_whole_output_folder(demo_fit, tmp_path, capsys):
    # the session's shared fit: `infer fit` with --walkers 16 --max-steps 300, figures on
    out = demo_fit.path
    assert demo_fit.result.code == 0
    assert CONTRACT_FILES <= {p.name for p in out.iterdir()}
    t = Table.read(out / "summary.ecsv", format="ascii.ecsv")
    for col in ("name", "unit", "median", "p16", "p84", "p02_5", "p97_5"):
        assert col in t.colnames
    names = set(t["name"])
    for n in ("mass_to_flux", "ionization", "surface_density", "temperature", "field", "eta_ad",
              "eta_ohm", "eta_total", "tau_ni", "wavelength", "growth_time", "fragment_mass",
              "toomre_q"):
        assert n in names
    row = t[list(t["name"]).index("fragment_mass")]
    assert row["unit"] == "jupiterMass" and row["p16"] <= row["median"] <= row["p84"]
    d = json.loads((out / "diagnostics.json").read_text())
    for k in ("steps", "walkers", "acceptance_fraction", "autocorrelation_time",
              "effective_samples", "converged", "versions", "seed"):
        assert k in d
    assert d["steps"] == 300 and d["walkers"] == 16 and d["converged"] is False
    assert "NOT CONVERGED" in (out / "summary.md").read_text()
    # no temporary files left
    assert not [p for p in out.iterdir() if p.name.startswith(".") or p.suffix == ".partial"]
    # infer plot regenerates the figures from the saved chain (in a copy: the fit is shared)
    out = demo_fit.copy(tmp_path / "fit")
    before = (out / "corner.png").stat().st_mtime_ns
    time.sleep(0.01)
    assert main(["plot", str(out)]) == 0
    assert (out / "corner.png").stat().st_mtime_ns > before


def test_refuses_to_mix_runs_and_resumes(demo, tmp_path, capsys):
    cat, cfg = demo
    out = tmp_path / "fit"
    assert _fit(cat, cfg, out, "--no-plots") == 0
    capsys.readouterr()
    # the same run again without --resume: refused, folder unchanged
    listing = sorted((p.name, p.stat().st_mtime_ns) for p in out.iterdir())
    assert _fit(cat, cfg, out, "--no-plots") == 2
    err = capsys.readouterr().err
    assert "--resume" in err and err.count("\n") == 1
    assert sorted((p.name, p.stat().st_mtime_ns) for p in out.iterdir()) == listing
    # another seed is another run: refused
    assert _fit(cat, cfg, out, "--no-plots", "--seed", "9") == 2
    assert "different run" in capsys.readouterr().err
    # --resume towards a longer chain continues the saved one
    from infer.inference.chainfile import read_chain

    first = read_chain(out / "chain.h5").chain.copy()
    assert main(["fit", str(cat), "--config", str(cfg), "--out", str(out), "--walkers", "16",
                 "--max-steps", "400", "--quiet", "--no-plots", "--resume"]) == 0
    again = read_chain(out / "chain.h5").chain
    assert again.shape[0] == 400 and np.array_equal(again[:300], first)


@pytest.mark.parametrize("change, message", [
    (lambda c, g: g.write_text(g.read_text().replace('diffusion = "ionization"', 'diffusion = "x"')),
     "model.diffusion"),
    (lambda c, g: g.write_text(g.read_text() + "\n[extra]\n"), "unknown table"),
    (lambda c, g: c.unlink(), "not found"),
    (lambda c, g: c.write_bytes(b"\x00\x01binary"), ""),
])
def test_bad_inputs_exit_2_with_one_line(demo, tmp_path, capsys, change, message):
    cat, cfg = demo
    change(cat, cfg)
    out = tmp_path / "fit"
    assert _fit(cat, cfg, out) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert message in err
    assert not out.exists()


@pytest.mark.slow
def test_plot_on_missing_or_corrupted_folder(demo_fit, tmp_path, capsys):
    assert main(["plot", str(tmp_path / "nothing")]) == 2
    assert capsys.readouterr().err.count("\n") == 1
    d = tmp_path / "broken"
    d.mkdir()
    for f in ("config.toml", "run.json"):
        (d / f).write_text("x")
    (d / "chain.h5").write_bytes(b"not hdf5")
    assert main(["plot", str(d)]) == 2
    assert "config is unreadable" in capsys.readouterr().err
    # a valid folder whose chain file is garbage
    good = demo_fit.copy(tmp_path / "good")
    (good / "chain.h5").write_bytes(b"\x89HDF\r\n garbage")
    listing = sorted((p.name, p.stat().st_mtime_ns) for p in good.iterdir())
    assert main(["plot", str(good)]) == 2
    err = capsys.readouterr().err
    assert "corrupted chain file" in err and err.count("\n") == 1
    assert sorted((p.name, p.stat().st_mtime_ns) for p in good.iterdir()) == listing


@pytest.mark.slow
def test_fit_killed_then_resumed(demo, tmp_path):
    # the real command in a child process, killed with SIGKILL mid-sampling, then resumed
    cat, cfg = demo
    out = tmp_path / "fit"
    cmd = [sys.executable, "-m", "infer", "fit", str(cat), "--config", str(cfg), "--out", str(out),
           "--walkers", "16", "--max-steps", "5000", "--quiet", "--no-plots"]
    proc = subprocess.Popen(cmd, env=dict(os.environ, PYTHONPATH=str(ROOT)))
    from infer.errors import ChainError
    from infer.inference.chainfile import read_chain

    deadline = time.time() + 120
    n = 0
    while time.time() < deadline:
        try:
            n = read_chain(out / "chain.h5").iteration
        except ChainError:
            n = 0
        if n >= 200:
            break
        time.sleep(0.1)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    saved = read_chain(out / "chain.h5")
    assert saved.iteration >= 200
    r = subprocess.run(cmd[:-4] + ["--max-steps", str(saved.iteration + 100), "--quiet",
                                   "--no-plots", "--resume"],
                       env=dict(os.environ, PYTHONPATH=str(ROOT)), capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    final = read_chain(out / "chain.h5")
    assert final.iteration == saved.iteration + 100
    assert np.array_equal(final.chain[: saved.iteration], saved.chain)
