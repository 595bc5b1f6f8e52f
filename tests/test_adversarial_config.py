"""Adversarial run configurations: infer.inference.config.parse_config and load_config.

Random nested values at every key, random documents, random bytes in a file,
empty files, binary files named .toml, huge numbers, NaN and infinities and
wrong types for every key: the result is a validated RunConfig or a
ConfigError whose one-line message names the key (or the file) -- never
another exception and never a warning. A config that validates writes back
(``to_toml``) a file that loads to the same configuration.
"""

from __future__ import annotations

import copy
import tempfile
import warnings
from pathlib import Path

import pytest
import tomli_w
from conftest import BASE_CONFIG
from hypothesis_compat import HealthCheck, given, settings, st

from infer.errors import ConfigError
from infer.inference.config import ModelOptions, RunConfig, SamplerOptions, load_config, parse_config
from infer.inference.priors import DISTRIBUTIONS, PARAMETERS

N_MUTATE, N_DOCS, N_BYTES = 300, 150, 150
FUZZ = settings(max_examples=N_MUTATE, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow])

CATALOG_KEYS = ("distance", "inclination", "position_angle", "center_ra", "center_dec",
                "wavelength", "frequency", "dust_temperature", "dust_temperature_err",
                "dust_opacity", "dust_opacity_err", "opacity_wavelength", "opacity_index",
                "gas_to_dust", "units", "exclude")
PRIOR_SUBKEYS = sorted({"value", "dist", *(k for v in DISTRIBUTIONS.values() for k in v),
                        "scale_dex"})


def _paths():
    """(table, key, sub-key or None) for every key a config can hold."""
    out = [("model", k, None) for k in ModelOptions.__dataclass_fields__]
    out += [("sampler", k, None) for k in SamplerOptions.__dataclass_fields__]
    out += [("catalog", k, None) for k in CATALOG_KEYS]
    for name in PARAMETERS:
        out.append(("priors", name, None))
        if name in BASE_CONFIG["priors"]:
            out += [("priors", name, sub) for sub in PRIOR_SUBKEYS]
    return out


PATHS = _paths()


def _set(cfg, path, value):
    table, key, sub = path
    tab = cfg.setdefault(table, {})
    if sub is None:
        tab[key] = value
    else:
        entry = tab[key]
        entry[sub] = value


def _where(path) -> str:
    table, key, _ = path
    return f"{table}.{key}"


def parse_or_error(data):
    """parse_config under the contract; returns the RunConfig or the ConfigError message."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            cfg = parse_config(data)
        except ConfigError as exc:
            msg = str(exc)
            assert msg.strip() and "\n" not in msg, msg
            return msg
    assert isinstance(cfg, RunConfig)
    return cfg


def round_trips(cfg: RunConfig) -> None:
    """The resolved config, written as TOML, loads to the same configuration."""
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "resolved.toml"
        p.write_text(cfg.to_toml(), encoding="utf-8")
        again = load_config(p)
    assert again.to_dict() == cfg.to_dict() and again.digest() == cfg.digest()


LEAF = st.one_of(
    st.none(), st.booleans(), st.integers(min_value=-10**400, max_value=10**400),
    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=12), st.binary(max_size=4),
    st.sampled_from(["1 K", "80 g/cm2", "nan K", "inf K", "1e400 g/cm2", "-1 K", "0 K",
                     "0.3 solMass", "120 au", "1e-8 dyn/cm2", "1e5 yr", "2e-10 1/s", "1e18 cm2/s",
                     "loguniform", "normal", "halfnormal", "uniform", "lognormal",
                     "truncnormal", "free", "ideal", "ionization", "mst", "nearest", "soft",
                     "hard", "de", "stretch", "square", "disk", "140 pc", "35 deg", "1.3 mm"]),
)
VALUE = st.recursive(LEAF, lambda ch: st.one_of(st.lists(ch, max_size=3),
                                                st.dictionaries(st.text(max_size=6), ch,
                                                                max_size=3)),
                     max_leaves=6)


@FUZZ
@given(first=st.sampled_from(PATHS), value=VALUE,
       more=st.lists(st.tuples(st.sampled_from(PATHS), VALUE), max_size=2))
def test_random_values_at_random_keys(first, value, more):
    cfg = copy.deepcopy(BASE_CONFIG)
    for path, v in [(first, value), *more]:
        try:
            _set(cfg, path, v)
        except (TypeError, KeyError):   # the entry was replaced by a non-table: skip it
            continue
    out = parse_or_error(cfg)
    if isinstance(out, RunConfig):
        round_trips(out)


@settings(max_examples=N_DOCS, deadline=None, derandomize=True, database=None)
@given(doc=st.one_of(VALUE, st.dictionaries(st.sampled_from(["model", "priors", "sampler",
                                                             "catalog", "extra", ""]),
                                            VALUE, max_size=4)))
def test_random_documents(doc):
    out = parse_or_error(doc)
    assert isinstance(out, str)     # no random document holds the required priors


def _file_check(data: bytes, name: str = "run.toml"):
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / name
        p.write_bytes(data)
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            try:
                cfg = load_config(p)
            except ConfigError as exc:
                msg = str(exc)
                assert msg.startswith(str(p) + ":") and "\n" not in msg, msg
                return msg
    return cfg


@settings(max_examples=N_BYTES, deadline=None, derandomize=True, database=None)
@given(data=st.one_of(st.binary(max_size=300),
                      st.text(max_size=200).map(lambda t: t.encode("utf-8", "surrogatepass")),
                      st.text(max_size=100).map(lambda t: ("[priors]\n" + t).encode("utf-8",
                                                                                   "surrogatepass"))))
def test_random_bytes_in_a_file(data):
    assert isinstance(_file_check(data), str)


ALWAYS_BAD = [None, {"zz": 1}, b"bytes", [None], float("nan")]


# (catalog metadata values are only type-checked here: NaN is refused when the catalog
# is read, see tests/test_adversarial_cli.py)
WRONG_TYPES = [(path, value) for path in PATHS for value in ALWAYS_BAD
               if not (path[0] == "catalog" and isinstance(value, float))]


@pytest.mark.parametrize("path, value", WRONG_TYPES,
                         ids=[".".join(x for x in p if x) + f"={v!r}" for p, v in WRONG_TYPES])
def test_wrong_types_for_every_key_are_refused_by_name(path, value):
    cfg = copy.deepcopy(BASE_CONFIG)
    _set(cfg, path, value)
    msg = parse_or_error(cfg)
    assert isinstance(msg, str), f"{path} = {value!r} was accepted"
    assert _where(path) in msg, msg


NUMERIC = [("model", "mu_gas"), ("model", "growth_width_dex"), ("sampler", "walkers"),
           ("sampler", "max_steps"), ("sampler", "seed"), ("sampler", "check_every"),
           ("sampler", "tau_factor"), ("sampler", "tau_rtol"), ("priors", "mass_to_flux.low"),
           ("priors", "mass_to_flux.high"), ("priors", "ionization.high"),
           ("priors", "surface_density.sigma_dex"), ("priors", "spacing_scatter.scale_dex"),
           ("priors", "mass_scatter.scale_dex"), ("priors", "spacing_calibration.value")]
HUGE = [float("nan"), float("inf"), -float("inf"), 10**400, -10**400, 2**64, 1e308, -0.0,
        5e-324, -1]


@pytest.mark.parametrize("value", HUGE, ids=repr)
@pytest.mark.parametrize("table, key", NUMERIC)
def test_huge_and_non_finite_numbers_in_a_toml_file(table, key, value):
    cfg = copy.deepcopy(BASE_CONFIG)
    if "." in key:
        name, sub = key.split(".")
        cfg[table][name] = ({"value": value} if sub == "value"
                            else {**cfg[table][name], sub: value})
    else:
        cfg[table][key] = value
    out = _file_check(tomli_w.dumps(cfg).encode())
    accepted = {("sampler", "max_steps"): {2**64, 10**400},   # a cap, not an allocation
                ("priors", "mass_to_flux.low"): {5e-324},
                ("priors", "mass_to_flux.high"): {2**64, 1e308},
                ("priors", "ionization.high"): set(),
                ("model", "mu_gas"): {2**64, 1e308, 5e-324},
                ("model", "growth_width_dex"): {2**64, 1e308, 5e-324},
                ("sampler", "tau_factor"): {2**64, 1e308, 5e-324},
                ("sampler", "tau_rtol"): {2**64, 1e308, 5e-324},
                ("priors", "surface_density.sigma_dex"): {2**64, 1e308, 5e-324},
                ("priors", "spacing_scatter.scale_dex"): {2**64, 1e308, 5e-324, -0.0},
                ("priors", "mass_scatter.scale_dex"): {2**64, 1e308, 5e-324, -0.0},
                ("priors", "spacing_calibration.value"): {2**64, 1e308, 5e-324}}
    if isinstance(out, str):
        assert f"{table}.{key.split('.')[0]}" in out, out
        return
    # accepted: a finite positive (or allowed zero) number that fits the key's type
    assert value in accepted.get((table, key), set()), f"{table}.{key} = {value!r} accepted"
    round_trips(out)


@pytest.mark.parametrize("data, needle", [
    (b"", "priors"),                                          # empty file: priors required
    (b"   \n\n# only a comment\n", "priors"),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "not a text (UTF-8) TOML file"),
    (b"\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\x03", "not a text (UTF-8) TOML file"),
    ("[model]\ndiffusion = 'free'\n".encode("utf-16"), "not a text (UTF-8) TOML file"),
    (b"[model]\x00\ndiffusion = 1\n", "not valid TOML"),
    (b"[model\n", "not valid TOML"),
    (b"model = 3\n", "[model] must be a table"),
    (b"[[priors]]\nx = 1\n", "[priors] must be a table"),
    ("[priors]\nradius = { value = \"120 \u00e5u\" }\n".encode(), "priors"),
    (("[model]\n" + "x" * 100_000 + " = 1\n").encode(), "model.xxxx"),
])
def test_bad_files(data, needle):
    msg = _file_check(data)
    assert isinstance(msg, str) and needle in msg, msg


@pytest.mark.parametrize("key, value", [
    ("walkers", 10**12), ("walkers", 100_002), ("seed", 2**32), ("seed", -1), ("seed", 10**30),
    ("check_every", 10**30), ("max_steps", 9), ("walkers", 33), ("walkers", 2.0),
])
def test_sampler_settings_out_of_range(key, value):
    # huge walkers or check_every would be allocated at once (MemoryError); the random
    # generators take seeds 0 .. 2**32 - 1 only
    cfg = copy.deepcopy(BASE_CONFIG)
    cfg["sampler"][key] = value
    msg = _file_check(tomli_w.dumps(cfg).encode())
    assert isinstance(msg, str) and f"sampler.{key}" in msg, msg


def test_missing_file_and_folder(tmp_path):
    for p, needle in ((tmp_path / "nope.toml", "config file not found"),
                      (tmp_path, "is a folder")):
        with pytest.raises(ConfigError, match=needle) as info:
            load_config(p)
        assert str(info.value).startswith(str(p))
