"""The public API: every name in ``calwork.__all__`` resolves, and the doctests run."""

from __future__ import annotations

import doctest
import importlib

import pytest

import calwork


@pytest.mark.parametrize("name", calwork.__all__)
def test_public_name_resolves(name):
    assert getattr(calwork, name) is not None


def test_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no_such_name"):
        calwork.no_such_name  # noqa: B018


def _modules() -> list[str]:
    import pkgutil

    return ["calwork", *(m.name for m in pkgutil.walk_packages(calwork.__path__, "calwork."))]


@pytest.mark.parametrize("module", _modules())
def test_doctests(module):
    """Every example in every docstring of the package runs and shows what it says."""
    failures, _ = doctest.testmod(importlib.import_module(module), verbose=False)
    assert failures == 0
