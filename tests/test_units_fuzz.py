"""Adversarial input to the unit parser: infer.units.parse_quantity and to_cgs.

Whatever a user types or passes -- random text, Unicode, numbers with huge
exponents, NaN and infinities, empty strings, lists, dicts, None, bytes -- the
parser either returns a Quantity in the requested unit (parse_quantity; to_cgs a
finite float array) or raises an InferError whose message names the argument.
Never another exception, and never a warning (warnings are errors here).
"""

from __future__ import annotations

import math
import warnings

import astropy.units as u
import numpy as np
import pytest
from hypothesis_compat import HealthCheck, given, settings, st

from infer.errors import InferError
from infer.units import dimensionless, parse_quantity, to_cgs

FUZZ = settings(max_examples=250, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow])
TARGETS = ["g / cm2", "K", "", "1 / s", "cm2 / s", "cm-2", "dyn / cm2", "G", "solMass", "au"]
UNITS = ["K", "g/cm2", "g cm-2", "kg/m2", "cm-2", "1/s", "s-1", "Hz", "solMass", "au", "pc",
         "cm2/s", "m2/s", "mG", "uG", "T", "dyn/cm2", "Pa", "dex", "mag", "deg_C", "%", "",
         "K**2", "m**(1/2)", "Jy", "erg", "yr", "foo", "g/", "//", "()", "1e5", "K K"]
NAME = "--the-option"


def check(value, unit):
    """The contract for one input; returns 'value' or 'error'."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            q = parse_quantity(value, name=NAME, unit=unit)
        except InferError as exc:
            msg = str(exc)
            assert msg.startswith(NAME + ":") and len(msg) > len(NAME) + 5, msg
            q = None
        try:
            arr = to_cgs(value, name=NAME, unit=unit)
        except InferError as exc:
            assert str(exc).startswith(NAME + ":"), str(exc)
            arr = None
    if q is not None:
        assert isinstance(q, u.Quantity) and q.unit == u.Unit(unit)
        finite = bool(np.all(np.isfinite(q.value)))
        # to_cgs accepts exactly the finite values parse_quantity returns
        assert (arr is not None) == finite
        if arr is not None:
            assert isinstance(arr, np.ndarray) and arr.dtype == float
            np.testing.assert_array_equal(arr, q.value)
        return "value"
    assert arr is None        # what parse_quantity refuses, to_cgs refuses too
    return "error"


TEXT = st.one_of(
    st.text(max_size=40),
    st.text(alphabet=st.characters(codec="utf-8"), max_size=20),
    st.builds(lambda a, b: f"{a} {b}", st.sampled_from(["1", "1e400", "-1e-400", "nan", "inf",
                                                        "-inf", "-0", "0x10", "1_0", "1,5",
                                                        "١", "½", "1e", ".", "--1", "1j"]),
              st.sampled_from(UNITS)),
    st.builds(lambda a, b: f"{a}{b}", st.floats(allow_nan=True, allow_infinity=True).map(repr),
              st.text(max_size=8)),
)
WRONG = st.one_of(
    st.none(), st.booleans(), st.binary(max_size=12), st.complex_numbers(),
    st.integers(min_value=-10**400, max_value=10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.lists(st.one_of(st.floats(), st.text(max_size=4), st.integers(), st.none()), max_size=4),
    st.dictionaries(st.text(max_size=3), st.integers(), max_size=2),
    st.tuples(st.floats(), st.text(max_size=3)),
    st.builds(object),
)


@FUZZ
@given(value=TEXT, unit=st.sampled_from(TARGETS))
def test_random_text(value, unit):
    check(value, unit)


@FUZZ
@given(value=WRONG, unit=st.sampled_from(TARGETS))
def test_wrong_types(value, unit):
    outcome = check(value, unit)
    if u.Unit(unit) != u.dimensionless_unscaled:
        # without a unit nothing but a Quantity or a string can mean a dimensional value
        assert outcome == "error"


@settings(max_examples=200, deadline=None, derandomize=True, database=None)
@given(v=st.floats(allow_nan=False, allow_infinity=False, width=64),
       pair=st.sampled_from([("g/cm2", "g / cm2", 1.0), ("kg/m2", "g / cm2", 0.1),
                             ("K", "K", 1.0), ("1/s", "1 / s", 1.0), ("m2/s", "cm2 / s", 1e4),
                             ("Pa", "dyn / cm2", 10.0), ("mG", "G", 1e-3)]))
def test_number_with_unit_round_trips(v, pair):
    text_unit, target, factor = pair
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        q = parse_quantity(f"{v!r} {text_unit}", name=NAME, unit=target)
    expect = v * factor
    if math.isfinite(expect):
        assert q.value == pytest.approx(expect, rel=1e-15, abs=1e-300)
        assert to_cgs(f"{v!r} {text_unit}", name=NAME, unit=target) == pytest.approx(
            expect, rel=1e-15, abs=1e-300)
    else:                                  # e.g. 1e308 m2/s: beyond the float range in cm2/s
        with pytest.raises(InferError, match="NaN or infinite"):
            to_cgs(f"{v!r} {text_unit}", name=NAME, unit=target)


EXPLICIT = [
    # value, unit, outcome of to_cgs: a float, or the InferError message fragment
    ("1e400 g/cm2", "g / cm2", "NaN or infinite"),
    ("-1e400 g/cm2", "g / cm2", "NaN or infinite"),
    ("1e-400 g/cm2", "g / cm2", 0.0),                 # underflows to 0; predict refuses 0
    ("nan K", "K", "NaN or infinite"),
    ("inf K", "K", "NaN or infinite"),
    ("-inf K", "K", "NaN or infinite"),
    ("-0 K", "K", -0.0),                               # sign checks belong to the caller
    ("1e308 solMass", "g", "NaN or infinite"),         # finite, overflows in g
    ("", "K", "cannot read"),
    ("   ", "K", "cannot read"),
    ("K", "K", "cannot read"),
    ("40", "K", "has no unit"),
    (40.0, "K", "has no unit"),
    ("40 Ω", "K", "not a temperature"),
    ("40 K", "g / cm2", "not a surface mass density"),
    ("1.5 mG", "", "expected a plain number"),
    ("☃ K", "K", "cannot read"),
    ("40\x00 K", "K", "cannot read"),
    ("4" * 5000 + " K", "K", "NaN or infinite"),
    ("1 m**(1/2)", "K", "not a temperature"),
    (None, "K", "has no unit"),
    (None, "", "expected a number"),
    ([1, 2], "K", "has no unit"),
    ({"a": 1}, "", "expected a number"),
    (b"40 K", "K", "has no unit"),
    (object(), "", "expected a number"),
    ([[1], [2, 3]], "", "expected a number"),
    (float("nan"), "", "NaN or infinite"),
    (10**400, "", "expected a number"),
    (u.Quantity([1.0, np.nan], u.K), "K", "NaN or infinite"),
    (u.Quantity(1.0, u.mag), "", "expected a plain number"),
    (3 * u.dex, "", "expected a plain number"),
    ("80 g/cm2", "g / cm2", 80.0),
    ("2e25 cm-2", "cm-2", 2e25),
    ("0.4 solMass", "solMass", 0.4),
    (u.Quantity(1.0, u.kg / u.m**2), "g / cm2", 0.1),
    (1.3, "", 1.3),
]


@pytest.mark.parametrize("value, unit, outcome", EXPLICIT)
def test_explicit_cases(value, unit, outcome):
    check(value, unit)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        if isinstance(outcome, str):
            with pytest.raises(InferError, match=outcome) as info:
                to_cgs(value, name=NAME, unit=unit)
            assert str(info.value).startswith(NAME + ":") and "\n" not in str(info.value)
        else:
            got = to_cgs(value, name=NAME, unit=unit)
            assert float(got) == outcome and math.copysign(1, float(got)) == math.copysign(1, outcome)


def test_dimensionless_helper_refuses_units_and_nan():
    assert float(dimensionless("1.5", name="x")) == 1.5
    for bad in ("1 K", "nan", [1, None], "1e400"):
        with pytest.raises(InferError, match="^x:"):
            dimensionless(bad, name="x")

