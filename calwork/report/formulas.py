"""Cell-formula builders: spreadsheet formulas that carry their own value.

An :class:`Expr` is a small expression tree over worksheet cells. Building one gives, at the
same time, the formula text a spreadsheet evaluates (``expr.render(host_sheet)``) and the value
calwork computes for it in Python (``expr.value``). The workbook writer stores the formula and
uses the value as the cell's cached result; it compares the value with the number the reduction
chain reported, so a formula that would disagree with calwork is never written silently.

Only the operators and functions every spreadsheet program knows are used (``+ - * /``,
``SUM``, ``AVERAGE``, ``STDEV``, ``COUNT``, ``SQRT``, ``SUMSQ``, ``ABS``); no ``^`` (its
precedence against unary minus differs between programs).
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from openpyxl.utils import get_column_letter

__all__ = [
    "Const",
    "Expr",
    "Pinned",
    "Ref",
    "Span",
    "average",
    "count",
    "func",
    "quadrature",
    "quote_sheet",
    "sqrt",
    "stdev",
    "total",
]

# Precedence levels (higher binds tighter): atoms and functions, unary minus, * /, + -.
_ATOM, _NEG, _MUL, _ADD = 4, 3, 2, 1


def quote_sheet(title: str) -> str:
    """A sheet title as it appears in a formula reference (always quoted, ``'`` doubled)."""
    return "'" + title.replace("'", "''") + "'"


def _number(value: float) -> str:
    if not math.isfinite(value):
        raise ValueError(f"a formula constant must be finite, got {value!r}")
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


class Expr:
    """Base of the expression tree: ``render(host)`` gives the formula text, ``value`` the number.

    Arithmetic operators build new expressions; plain numbers are wrapped as constants.
    """

    prec = _ATOM
    value: float

    def render(self, host: str) -> str:  # pragma: no cover - abstract
        raise NotImplementedError

    def formula(self, host: str) -> str:
        """The cell formula (with the leading ``=``) as written on sheet ``host``."""
        return "=" + self.render(host)

    # arithmetic -------------------------------------------------------------------------------
    def __add__(self, other: Expr | float) -> Expr:
        return _Bin("+", self, _wrap(other))

    def __radd__(self, other: float) -> Expr:
        return _Bin("+", _wrap(other), self)

    def __sub__(self, other: Expr | float) -> Expr:
        return _Bin("-", self, _wrap(other))

    def __rsub__(self, other: float) -> Expr:
        return _Bin("-", _wrap(other), self)

    def __mul__(self, other: Expr | float) -> Expr:
        return _Bin("*", self, _wrap(other))

    def __rmul__(self, other: float) -> Expr:
        return _Bin("*", _wrap(other), self)

    def __truediv__(self, other: Expr | float) -> Expr:
        return _Bin("/", self, _wrap(other))

    def __rtruediv__(self, other: float) -> Expr:
        return _Bin("/", _wrap(other), self)

    def __neg__(self) -> Expr:
        return _Neg(self)


def _wrap(value: Expr | float) -> Expr:
    return value if isinstance(value, Expr) else Const(float(value))


class Const(Expr):
    """A number written into the formula."""

    def __init__(self, value: float) -> None:
        self.value = float(value)
        self.prec = _ATOM if self.value >= 0 else _NEG

    def render(self, host: str) -> str:
        return _number(self.value)


@dataclass(frozen=True)
class _Cell:
    sheet: str
    row: int
    col: int

    def address(self, host: str, absolute: bool = False) -> str:
        letter = get_column_letter(self.col)
        cell = f"${letter}${self.row}" if absolute else f"{letter}{self.row}"
        return cell if self.sheet == host else f"{quote_sheet(self.sheet)}!{cell}"


class Ref(Expr):
    """A reference to one cell (``sheet``, 1-based ``row`` and ``col``) holding ``value``."""

    def __init__(self, sheet: str, row: int, col: int, value: float) -> None:
        self.cell = _Cell(sheet, row, col)
        self.value = float(value)

    def render(self, host: str) -> str:
        return self.cell.address(host)


class Span:
    """Several cells as a function argument: contiguous runs are written as ranges."""

    def __init__(self, refs: Sequence[Ref]) -> None:
        if not refs:
            raise ValueError("a span needs at least one cell")
        self.refs = tuple(refs)
        self.values = [r.value for r in self.refs]

    def render(self, host: str) -> str:
        parts: list[str] = []
        group: list[_Cell] = []

        def flush() -> None:
            if not group:
                return
            first, last = group[0], group[-1]
            if first == last:
                parts.append(first.address(host))
            else:
                parts.append(f"{first.address(host)}:{last.address(first.sheet)}")
            group.clear()

        for ref in self.refs:
            cell = ref.cell
            if group and not _extends(group, cell):
                flush()
            group.append(cell)
        flush()
        return ",".join(parts)


def _extends(group: list[_Cell], cell: _Cell) -> bool:
    """True if ``cell`` continues the straight run of cells in ``group`` (down or right)."""
    prev = group[-1]
    if cell.sheet != prev.sheet:
        return False
    down = cell.col == prev.col and cell.row == prev.row + 1
    right = cell.row == prev.row and cell.col == prev.col + 1
    if len(group) == 1:
        return down or right
    going_down = group[1].row == group[0].row + 1
    return down if going_down else right


class Pinned(Expr):
    """A formula whose cached value is a number calwork reported (checked to agree with it)."""

    def __init__(self, expr: Expr, value: float) -> None:
        self.expr, self.value, self.prec = expr, float(value), expr.prec

    def render(self, host: str) -> str:
        return self.expr.render(host)


_OPS = {
    "+": (_ADD, lambda a, b: a + b),
    "-": (_ADD, lambda a, b: a - b),
    "*": (_MUL, lambda a, b: a * b),
    "/": (_MUL, lambda a, b: a / b),
}


class _Bin(Expr):

    def __init__(self, op: str, left: Expr, right: Expr) -> None:
        self.op, self.left, self.right = op, left, right
        self.prec, fn = _OPS[op]
        self.value = fn(left.value, right.value)

    def render(self, host: str) -> str:
        left = self.left.render(host)
        if self.left.prec < self.prec:
            left = f"({left})"
        right = self.right.render(host)
        # a - (b + c) and a / (b * c) need brackets; so does a negative operand on the right
        if self.right.prec < self.prec or (
            self.right.prec == self.prec and self.op in "-/"
        ) or self.right.prec == _NEG or right.startswith("-"):
            right = f"({right})"
        return f"{left}{self.op}{right}"


class _Neg(Expr):
    prec = _NEG

    def __init__(self, operand: Expr) -> None:
        self.operand = operand
        self.value = -operand.value

    def render(self, host: str) -> str:
        inner = self.operand.render(host)
        if self.operand.prec != _ATOM:
            inner = f"({inner})"
        return f"-{inner}"


class _Func(Expr):
    def __init__(self, name: str, args: Sequence[Expr | Span], value: float) -> None:
        self.name, self.args, self.value = name, tuple(args), float(value)

    def render(self, host: str) -> str:
        return f"{self.name}({','.join(a.render(host) for a in self.args)})"


def _flat(args: Iterable[Expr | Span]) -> list[float]:
    out: list[float] = []
    for a in args:
        out.extend(a.values if isinstance(a, Span) else [a.value])
    return out


def func(name: str, *args: Expr | Span) -> Expr:
    """A spreadsheet function over expressions and spans, evaluated in Python alike.

    Known names: ``SUM``, ``AVERAGE``, ``STDEV`` (sample standard deviation, n − 1),
    ``COUNT``, ``SQRT``, ``SUMSQ``, ``ABS``.
    """
    values = _flat(args)
    if name == "SUM":
        value = math.fsum(values)
    elif name == "AVERAGE":
        value = statistics.fmean(values)
    elif name == "STDEV":
        value = statistics.stdev(values)
    elif name == "COUNT":
        value = float(len(values))
    elif name == "SUMSQ":
        value = math.fsum(v * v for v in values)
    elif name == "SQRT":
        (value,) = values
        value = math.sqrt(value)
    elif name == "ABS":
        (value,) = values
        value = abs(value)
    else:
        raise ValueError(f"unknown spreadsheet function {name!r}")
    return _Func(name, args, value)


def total(refs: Sequence[Ref]) -> Expr:
    """``SUM`` of cells."""
    return func("SUM", Span(refs))


def average(refs: Sequence[Ref]) -> Expr:
    """``AVERAGE`` of cells (arithmetic mean)."""
    return func("AVERAGE", Span(refs))


def stdev(refs: Sequence[Ref]) -> Expr:
    """``STDEV`` of cells: sample standard deviation (n − 1 in the denominator)."""
    return func("STDEV", Span(refs))


def count(refs: Sequence[Ref]) -> Expr:
    """``COUNT`` of cells."""
    return func("COUNT", Span(refs))


def sqrt(expr: Expr) -> Expr:
    """``SQRT`` of an expression."""
    return func("SQRT", expr)


def quadrature(*terms: Expr) -> Expr:
    """``SQRT(SUMSQ(...))``: the root sum of squares of the terms (uncorrelated combination)."""
    return func("SQRT", func("SUMSQ", *terms))
