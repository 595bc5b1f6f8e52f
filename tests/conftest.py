"""Shared fixtures: an example run configuration (the form of catalogs/demo_disk.toml), small
observations, the ``infer`` command run in-process or as a real process, and one small fit shared
by the tests that only read a fit folder."""

from __future__ import annotations

import contextlib
import copy
import io
import os
import shutil
import subprocess
import sys
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")

BASE_CONFIG = {
    "model": {"diffusion": "ionization", "spacing": "mst"},
    "priors": {
        "mass_to_flux": {"dist": "loguniform", "low": 0.1, "high": 10},
        "ionization": {"dist": "loguniform", "low": 1e-14, "high": 1e-6},
        "surface_density": {"dist": "lognormal", "median": "60 g/cm2", "sigma_dex": 0.2},
        "temperature": {"dist": "normal", "mean": "35 K", "sd": "7 K"},
        "stellar_mass": {"value": "0.5 solMass"},
        "radius": {"value": "80 au"},
        "external_pressure": {"value": "0 dyn/cm2"},
        "spacing_scatter": {"dist": "halfnormal", "scale_dex": 0.2},
        "mass_scatter": {"dist": "halfnormal", "scale_dex": 0.3},
    },
    "sampler": {"walkers": 32, "max_steps": 2000, "seed": 1},
}


@pytest.fixture
def config_dict():
    return copy.deepcopy(BASE_CONFIG)


@pytest.fixture
def small_obs():
    from infer.constants import AU, M_JUP
    from infer.inference.model import Observations

    rng = np.random.default_rng(0)
    return Observations.from_arrays(
        spacings=52.5 * AU * 10 ** rng.normal(0, 0.1, 7),
        spacing_errors=0.05 * 52.5 * AU * np.ones(7),
        masses=19.5 * M_JUP * 10 ** rng.normal(0, 0.15, 8),
        mass_errors=0.15 * 19.5 * M_JUP * np.ones(8),
    )


# ------------------------------------------------------------- the command ----

@dataclass(frozen=True)
class CliResult:
    """Exit code, stdout and stderr of one ``infer`` run; unpacks as ``code, out, err``."""

    code: int
    out: str
    err: str

    def __iter__(self):
        return iter((self.code, self.out, self.err))


class CliRunner:
    """Runs the ``infer`` command.

    ``cli(argv)`` calls :func:`infer.cli.main` in this process with stdout and stderr
    captured (argparse's ``--help``/``--version`` and usage errors exit through SystemExit,
    whose code is returned); ``cli.process(argv)`` runs ``python -m infer`` in a child
    process, for the tests that check the real entry point. Arguments may be paths.
    """

    def __call__(self, argv: Sequence) -> CliResult:
        from infer.cli import main

        out, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main([str(a) for a in argv])
            except SystemExit as exc:
                code = exc.code
        return CliResult(code, out.getvalue(), err.getvalue())

    def process(self, argv: Sequence, *, timeout: float = 120) -> CliResult:
        proc = subprocess.run([sys.executable, "-m", "infer", *map(str, argv)],
                              capture_output=True, text=True, timeout=timeout, check=False)
        return CliResult(proc.returncode, proc.stdout, proc.stderr)


@pytest.fixture(scope="session")
def cli() -> CliRunner:
    return CliRunner()


# ------------------------------------------------------- the shared small fit ----

RING_RADIUS_AU = 80.0
RING_ARC_AU = 50.0


def write_ring_catalog(path: Path, seed: int = 4) -> Path:
    """Eight clumps C1..C8 on a face-on ring at 80 au, arcs ~50 au, masses ~ Sigma lambda^2."""
    import astropy.units as u
    from astropy.table import Table

    rng = np.random.default_rng(seed)
    arcs = RING_ARC_AU * 10 ** rng.normal(0.0, 0.04, 8)
    phi = np.cumsum(arcs) / RING_RADIUS_AU
    m = 18.0 * 10 ** rng.normal(0.0, 0.08, 8)
    t = Table()
    t["id"] = [f"C{i + 1}" for i in range(8)]
    t["x"] = RING_RADIUS_AU * np.cos(phi) * u.au
    t["y"] = RING_RADIUS_AU * np.sin(phi) * u.au
    t["pos_err"] = np.full(8, 1.0) * u.au
    t["mass"] = m * u.M_jup
    t["mass_err"] = 0.15 * m * u.M_jup
    t.meta.update({"object": "Test ring (synthetic)", "distance": "200 pc", "inclination": "0 deg",
                   "position_angle": "0 deg"})
    t.write(path, format="ascii.ecsv", overwrite=True)
    return path


@dataclass(frozen=True)
class DemoFit:
    """A finished ``infer fit`` folder, shared by the whole session: read it, or copy it first.

    Attributes
    ----------
    path : Path
        The fit folder (named ``ionization``, its diffusion mode).
    catalog, config : Path
        The catalog and run config it was fitted with (kept for the session, since the
        folder refers to its catalog).
    result : CliResult
        What ``infer fit`` returned and printed.
    walkers, steps : int
    """

    path: Path
    catalog: Path
    config: Path
    result: CliResult
    walkers: int
    steps: int

    def copy(self, dst: Path) -> Path:
        """A private copy of the fit folder at ``dst`` (times and contents kept)."""
        shutil.copytree(self.path, dst)
        return dst


@pytest.fixture(scope="session")
def demo_fit(tmp_path_factory, cli) -> DemoFit:
    """``infer fit`` of an eight-clump synthetic ring with the architecture's example config
    (:data:`BASE_CONFIG`, diffusion by ionization), 16 walkers x 300 steps, with figures: run
    once for every test that only reads a fit folder. The chain is far from converged."""
    import tomli_w

    root = tmp_path_factory.mktemp("demo_fit")
    catalog = write_ring_catalog(root / "ring.ecsv")
    config = root / "run.toml"
    config.write_text(tomli_w.dumps(BASE_CONFIG))
    out = root / "ionization"
    walkers, steps = 16, 300
    result = cli(["fit", catalog, "--config", config, "--out", out, "--walkers", walkers,
                  "--max-steps", steps, "--seed", 2, "--quiet"])
    if result.code != 0:
        pytest.fail(f"the shared demo fit failed (exit {result.code}): {result.err}")
    return DemoFit(out, catalog, config, result, walkers, steps)
