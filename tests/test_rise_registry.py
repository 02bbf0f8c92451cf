"""The rise-method registry is the one list: read-only, complete, and what the engine, the
command line and the method validation iterate over."""

from __future__ import annotations

import pytest

from calwork.cli.main import build_parser
from calwork.rise.registry import DICKINSON_RULES, METHODS, RiseMethod, rise_method


def test_the_registry_is_read_only():
    with pytest.raises(TypeError):
        METHODS["mine"] = METHODS["newton-fit"]  # type: ignore[index]
    with pytest.raises(AttributeError):
        METHODS["dickinson"].name = "other"  # type: ignore[misc]


def test_every_method_resolves_and_cross_checks_exist():
    for spec in METHODS.values():
        assert isinstance(spec, RiseMethod)
        assert callable(spec.reduce_function())
        assert callable(spec.rerun_function())
        for other in spec.cross_checks:
            assert callable(METHODS[other].check_function())
    assert METHODS["dickinson"].options["dickinson_rule"] == DICKINSON_RULES
    assert METHODS["dickinson"].label(dickinson_rule="60-percent") == "dickinson (60-percent)"
    with pytest.raises(TypeError, match="no option"):
        METHODS["newton-fit"].reduce_function(dickinson_rule="equal-area")
    with pytest.raises(ValueError, match="method must be one of"):
        rise_method("newton")


def test_the_command_line_and_the_validation_list_the_registered_methods():
    from calwork.simulation.validation import VARIANTS

    parser = build_parser()
    sub = parser._subparsers._group_actions[0].choices  # argparse internals
    for command in ("rise", "reduce", "demo"):
        method = next(a for a in sub[command]._actions if a.dest == "method")
        assert set(method.choices) == set(METHODS)
    assert {method for _, method, _ in VARIANTS} == set(METHODS)
    assert ("dickinson (60-percent)", "dickinson", {"dickinson_rule": "60-percent"}) in VARIANTS
