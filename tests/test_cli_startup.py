"""The command line starts without importing the heavy layers, and its registry is complete."""

from __future__ import annotations

import subprocess
import sys

from calwork.cli.main import SUBCOMMANDS, build_parser, main


def test_every_subcommand_is_registered_and_has_help(capsys):
    parser = build_parser()
    registered = set(parser._subparsers._group_actions[0].choices)  # argparse internals
    assert registered == set(SUBCOMMANDS)
    for name in SUBCOMMANDS:
        assert main([name, "--help"]) == 0
        assert "usage: calwork" in capsys.readouterr().out


def test_choice_lists_match_the_registries_they_mirror():
    from calwork.cli import _choices
    from calwork.hess.network import WORST_OFFENDER_MODES
    from calwork.simulation import SCENARIOS

    assert set(_choices.WORST_OFFENDER_MODES) == set(WORST_OFFENDER_MODES)
    assert set(_choices.SCENARIOS) == set(SCENARIOS)


def test_building_the_parser_imports_no_heavy_module():
    code = (
        "import sys; from calwork.cli.main import build_parser; build_parser(); "
        "heavy = [m for m in ('scipy', 'pandas', 'matplotlib', 'lmfit', 'openpyxl') "
        "if m in sys.modules]; print(heavy)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]", out


def test_no_command_prints_help_and_exits_2(capsys):
    assert main([]) == 2
    assert "usage: calwork" in capsys.readouterr().out


def test_usage_errors_are_one_line_and_exit_2(capsys):
    assert main(["rise", "log.csv", "--method", "newton"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert "invalid choice: 'newton'" in err
    assert main(["labbook", "no-such-action"]) == 2
    assert capsys.readouterr().err.count("\n") == 1
