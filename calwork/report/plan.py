"""The plan of a workbook: grids by sheet, cross-sheet references and the formula checks."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from calwork.report.formulas import Expr, Pinned, Ref
from calwork.report.grid import Grid, Text

__all__ = ["REL_TOL", "Plan", "Table", "detail"]

#: Formulas are written only when their value agrees with calwork's to this relative tolerance
#: (the workbook tests demand 1e-9; a tenth of that leaves room for summation order).
REL_TOL = 1e-10


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= REL_TOL * max(abs(a), abs(b)) or abs(a - b) <= 1e-300


def detail(details: Any, *names: str) -> float | None:
    """The first of the attributes ``names`` of a run's details record that is a finite
    number."""
    for name in names:
        value = getattr(details, name, None)
        if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(
            value
        ):
            return float(value)
    return None


class Plan:
    """Everything being planned for one workbook.

    ``refs`` maps (what, key) to the cell holding it (e.g. ``("eps", "C1")``);
    ``notes`` collects what the reader must know (formulas replaced by calwork's value).
    """

    def __init__(self, reduction: Any) -> None:
        self.reduction = reduction
        self.grids: dict[str, Grid] = {}
        self.refs: dict[tuple[str, str], Ref] = {}
        self.notes: list[str] = []
        self.tables: dict[str, Table] = {}

    def grid(self, title: str) -> Grid:
        if title not in self.grids:
            self.grids[title] = Grid(title)
        return self.grids[title]

    def checked(self, expr: Expr, reported: float | None, what: str) -> Expr | float:
        """``expr`` pinned to calwork's ``reported`` value when they agree; else the value.

        When the spreadsheet arithmetic and the chain disagree, the workbook shows calwork's
        number (a plain value) and says so in the Provenance sheet, rather than a formula that
        would contradict the reported result.
        """
        if reported is None or not math.isfinite(reported):
            return expr
        if _close(expr.value, float(reported)):
            return Pinned(expr, float(reported))
        self.notes.append(
            f"{what}: the spreadsheet formula would give {expr.value!r} but calwork reported "
            f"{float(reported)!r}; calwork's value is written instead of the formula."
        )
        return float(reported)


class Table:
    """A header row on a grid and named columns below it.

    ``columns`` are ``(key, header, number_format)``; the header says the unit.
    """

    def __init__(self, grid: Grid, row: int, columns: Sequence[tuple[str, str, str | None]],
                 *, freeze: bool = True, first_col: int = 1) -> None:
        self.grid, self.header_row = grid, row
        self.col = {key: first_col + i for i, (key, _, _) in enumerate(columns)}
        self.fmt = {key: fmt for key, _, fmt in columns}
        grid.header(row, [h for _, h, _ in columns], col=first_col)
        if freeze:
            grid.freeze = f"B{row + 1}"

    def put(self, row: int, key: str, content: Any) -> Ref | None:
        """Place ``content`` in column ``key`` of ``row``; a Ref for numbers and formulas."""
        if isinstance(content, str):
            content = Text(content)
        return self.grid.put(row, self.col[key], content, self.fmt[key])
