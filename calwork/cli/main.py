"""``calwork`` command line: ``main(argv) -> int``.

Each subcommand lives in its own module ``calwork.cli.<name>`` exposing
``register(subparsers) -> None`` (adds its parser and sets ``func``) where ``func(args)``
returns the exit status. A :class:`~calwork.core.errors.CalworkError` becomes one line on stderr
and exit status 2.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import warnings

from calwork.core.errors import CalworkError
from calwork.core.provenance import calwork_version

__all__ = ["SUBCOMMANDS", "build_parser", "main"]

#: Subcommand modules, in the order ``--help`` lists them.
SUBCOMMANDS = (
    "demo",
    "simulate",
    "inspect",
    "rise",
    "validate",
    "reduce",
    "network",
    "cycle",
    "labbook",
    "qa",
    "serve",
)


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line on stderr and exit status 2."""

    def error(self, message: str):  # type: ignore[override]
        self.exit(2, f"{self.prog}: error: {message} (see '{self.prog} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    """The top-level parser with every subcommand registered."""
    parser = _Parser(
        prog="calwork",
        description="Calorimetry data reduction: from temperature logs to energy equivalents, "
        "energies of combustion and solution, and standard enthalpies of formation.",
    )
    parser.add_argument("--version", action="version", version=f"calwork {calwork_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in SUBCOMMANDS:
        try:
            module = importlib.import_module(f"calwork.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name != f"calwork.cli.{name}":
                raise
            continue  # a subcommand not built yet in this checkout
        module.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 check failed, 2 error)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse exits 2 on usage errors, 0 on --help
        return int(exc.code or 0)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        with warnings.catch_warnings():
            # numerical warnings (overflow in a fit on a hopeless record…) are not for the
            # user: the result carries its own warning codes, or an error says what failed
            warnings.simplefilter("ignore", RuntimeWarning)
            return int(args.func(args))
    except CalworkError as exc:
        print(f"calwork {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"calwork {args.command}: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
