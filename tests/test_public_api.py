"""The lazy public API of ``infer``: every advertised name resolves to its defining object."""

from __future__ import annotations

import importlib

import pytest

import infer


@pytest.mark.parametrize("name", sorted(set(infer.__all__) - {"__version__"}))
def test_every_public_name_resolves_to_its_module_object(name):
    value = getattr(infer, name)
    if name in infer._LAZY:
        module, _, attr = infer._LAZY[name].partition(":")
        assert value is getattr(importlib.import_module(module), attr or name)
    assert name in dir(infer) or hasattr(infer, name)


def test_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no_such_thing"):
        infer.no_such_thing  # noqa: B018
