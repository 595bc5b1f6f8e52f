"""Shared fixtures: an example run configuration (the form of catalogs/demo_disk.toml), small observations."""

from __future__ import annotations

import copy
import os

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
