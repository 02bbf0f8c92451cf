"""Reaction equations ``a A + b B = c C + d D`` with exact rational coefficients.

Sides are separated by ``=``, ``->`` or ``→``; terms by ``+``. A coefficient is an integer
(``2``), a decimal (``0.5``, read exactly as 1/2), a fraction (``5/2``) or ``½``; it may be
joined to the species (``2H2O(l)``) since formulas never start with a digit. Every species
must carry its state (``H2O(l)``), which is also what ends a term, so a ``+`` inside a charge
(``Na+(aq)``) is never read as a separator.

Element and charge balance are checked exactly; :class:`~calwork.core.errors.BalanceError` names
each element (and the charge) that is off and by how much, in ``imbalance``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from types import MappingProxyType

from calwork.core.errors import BalanceError, EquationError, FormulaError
from calwork.hess.species import Species, parse_species, usual_spelling

__all__ = [
    "Equation",
    "check_balance",
    "format_coefficient",
    "format_side",
    "imbalance",
    "parse_coefficient",
    "parse_equation",
]

_ARROWS = ("->", "→", "⟶", "=")
_UNICODE_FRACTIONS = {"½": "1/2", "⅓": "1/3", "⅔": "2/3", "¼": "1/4", "¾": "3/4"}
_ZERO, _ONE = Fraction(0), Fraction(1)
_COEFFICIENT = re.compile(r"\s*(?P<c>(?:\d+(?:\.\d*)?|\.\d+)(?:\s*/\s*\d+)?|[½⅓⅔¼¾])\s*")
_STATE_START = re.compile(r"\((?:g|l|cr|s|am|aq|sln)(?=[),])")


@dataclass(frozen=True, kw_only=True)
class Equation:
    """A parsed reaction equation.

    Attributes
    ----------
    text
        The equation as written.
    stoichiometry
        Net coefficients, products positive and reactants negative; species that cancel
        are dropped.
    reactants, products
        The terms as written, ``(species, coefficient > 0)``.
    """

    text: str
    stoichiometry: Mapping[Species, Fraction]
    reactants: tuple[tuple[Species, Fraction], ...] = ()
    products: tuple[tuple[Species, Fraction], ...] = ()
    imbalance: Mapping[str, Fraction] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "stoichiometry", MappingProxyType(dict(self.stoichiometry)))
        object.__setattr__(self, "imbalance", MappingProxyType(dict(self.imbalance)))


def parse_coefficient(text: str | int | float | Fraction) -> Fraction:
    """Exact rational from ``'5/2'``, ``'0.5'``, ``'½'``, an int, a Fraction or a float.

    Floats are read through their shortest decimal repr (``0.1`` → 1/10).
    """
    if isinstance(text, Fraction):
        return text
    if isinstance(text, bool):
        raise EquationError("a coefficient must be a number", found=text)
    if isinstance(text, int):
        return Fraction(text)
    if isinstance(text, float):
        return Fraction(repr(text))
    return _coefficient_of_text(str(text))


@lru_cache(maxsize=1024)
def _coefficient_of_text(text: str) -> Fraction:
    """The rational a coefficient's text stands for (a network writes a few coefficients
    thousands of times; Fractions are immutable, so one parse serves them all)."""
    raw = text.strip()
    raw = _UNICODE_FRACTIONS.get(raw, raw).replace(" ", "")
    try:
        return Fraction(raw)
    except (ValueError, ZeroDivisionError):
        raise EquationError(
            "coefficient is not a number", found=text, expected="e.g. 2, 0.5 or 5/2"
        ) from None


def format_coefficient(value: Fraction) -> str:
    """``Fraction(5, 2)`` → ``'5/2'``; ``Fraction(2)`` → ``'2'``."""
    if value.denominator == 1:
        return str(value.numerator)
    return f"{value.numerator}/{value.denominator}"


def format_side(terms: list[tuple[Species, Fraction]]) -> str:
    """Terms as ``'2 H2O(l) + CO2(g)'`` (coefficient 1 omitted)."""
    if not terms:
        return "0"
    parts = []
    for sp, c in terms:
        parts.append(sp.name if c == 1 else f"{format_coefficient(c)} {sp.name}")
    return " + ".join(parts)


def _split_sides(text: str) -> tuple[str, str, int]:
    for arrow in _ARROWS:
        idx = _find_outside_states(text, arrow)
        if idx:
            if len(idx) > 1:
                raise EquationError(
                    f"equation has more than one {arrow!r}", found=text, position=idx[1]
                )
            i = idx[0]
            return text[:i], text[i + len(arrow):], i + len(arrow)
    raise EquationError(
        "equation has no '=' or '->' between its two sides",
        found=text, expected="e.g. 'C(cr,graphite) + O2(g) = CO2(g)'", position=len(text),
    )


def _find_outside_states(text: str, token: str) -> list[int]:
    """Where ``token`` occurs outside parentheses and brackets (a state may hold '=')."""
    out = []
    i = text.find(token)
    while i >= 0:
        head = text[:i]
        depth = head.count("(") + head.count("[") - head.count(")") - head.count("]")
        if depth == 0:
            out.append(i)
            i = text.find(token, i + len(token))
        else:
            i = text.find(token, i + 1)
    return out


def _parse_side(text: str, offset: int, whole: str) -> list[tuple[Species, Fraction, int]]:
    terms = []
    pos = 0
    n = len(text)
    while True:
        while pos < n and text[pos].isspace():
            pos += 1
        if pos >= n:
            raise EquationError(
                "a side of the equation ends without a species",
                found=whole, expected="a species such as 'H2O(l)'", position=offset + pos,
            )
        start = pos
        coefficient = _ONE
        m = _COEFFICIENT.match(text, pos)
        if m:
            coefficient = parse_coefficient(m.group("c"))
            pos = m.end()
        s = _STATE_START.search(text, pos)
        if s is None:
            raise EquationError(
                "species has no state in parentheses",
                found=whole, expected="e.g. 'H2O(l)', 'CO2(g)', 'NaCl(cr)', 'Na+(aq)'",
                position=offset + pos,
            )
        close = text.find(")", s.end())
        if close < 0:
            raise EquationError("state is not closed with ')'", found=whole,
                                position=offset + s.start())
        species_text = text[pos:close + 1]
        try:
            species = parse_species(species_text)
        except FormulaError as exc:
            raise EquationError(
                f"term {species_text.strip()!r}: {exc.message}",
                found=whole, expected=exc.expected, position=offset + pos,
            ) from None
        if coefficient <= 0:
            raise EquationError("coefficients must be positive", found=whole,
                                position=offset + start)
        terms.append((species, coefficient, offset + start))
        pos = close + 1
        while pos < n and text[pos].isspace():
            pos += 1
        if pos >= n:
            return terms
        if text[pos] != "+":
            raise EquationError(
                f"expected '+' or the end of the side, found {text[pos]!r}",
                found=whole, position=offset + pos,
            )
        pos += 1


def imbalance(stoichiometry: Mapping[Species, Fraction]) -> dict[str, Fraction]:
    """Products minus reactants of every element (and ``'charge'``) that does not cancel."""
    totals: dict[str, Fraction | int] = {}
    for sp, c in stoichiometry.items():
        # whole numbers (the usual case) in int arithmetic: Fraction products are slow
        whole = c.numerator if getattr(c, "denominator", 1) == 1 else None
        for el, count in sp.elements.items():
            if whole is not None and getattr(count, "denominator", 1) == 1:
                term: Fraction | int = whole * int(count)
            else:
                term = c * count
            totals[el] = totals.get(el, 0) + term
        if sp.charge:
            totals["charge"] = totals.get("charge", 0) + c * sp.charge
    return {k: Fraction(v) for k, v in sorted(totals.items()) if v != 0}


def check_balance(stoichiometry: Mapping[Species, Fraction], text: str = "") -> None:
    """Raise :class:`BalanceError` naming every element (and the charge) that is off."""
    off = imbalance(stoichiometry)
    if off:
        parts = []
        for key, value in off.items():
            what = "charge" if key == "charge" else f"{key}"
            side = "products" if value > 0 else "reactants"
            parts.append(f"{what} off by {format_coefficient(abs(value))} (excess on the {side})")
        raise BalanceError(
            "reaction is not balanced: " + "; ".join(parts),
            found=text or None, imbalance=off,
        )


_WRITTEN_SPECIES = re.compile(r"[A-Za-z0-9·.\[\]^+-]+\([^()]*\)")


def _spelling_hints(text: str) -> str:
    """``'; H2O(liq) is written H2O(l) here'`` for species in other common notations."""
    hints = []
    for m in _WRITTEN_SPECIES.finditer(text):
        alias = usual_spelling(m.group(0))
        if alias and alias != m.group(0):
            hints.append(f"{m.group(0)} is written {alias} here")
    return ("; " + "; ".join(dict.fromkeys(hints))) if hints else ""


def parse_equation(text: str, *, balance: bool = True) -> Equation:
    """Parse ``'a A + b B = c C + d D'`` and check its element and charge balance.

    Parameters
    ----------
    text
        The equation; sides joined by ``=``, ``->`` or ``→``.
    balance
        Check the balance (default); ``False`` only parses.

    Raises
    ------
    EquationError
        When the text does not parse (with ``position``, 0-based).
    BalanceError
        When elements or charge do not balance (with ``imbalance``).

    Examples
    --------
    >>> eq = parse_equation("C(cr,graphite) + 1/2 O2(g) = CO(g)")
    >>> {s.name: str(c) for s, c in eq.stoichiometry.items()}
    {'C(cr,graphite)': '-1', 'O2(g)': '-1/2', 'CO(g)': '1'}
    """
    if not isinstance(text, str) or not text.strip():
        raise EquationError("empty equation", found=text,
                            expected="e.g. 'C(cr,graphite) + O2(g) = CO2(g)'")
    try:
        left, right, right_offset = _split_sides(text)
        reactants = _parse_side(left, 0, text)
        products = _parse_side(right, right_offset, text)
    except EquationError as exc:
        pos = getattr(exc, "position", None)
        if pos is None:
            raise
        raise EquationError(f"{exc.message} (at character {pos + 1}){_spelling_hints(text)}",
                            found=text, expected=exc.expected, position=pos) from None
    net: dict[Species, Fraction] = {}
    for sp, c, _ in reactants:
        net[sp] = net.get(sp, _ZERO) - c
    for sp, c, _ in products:
        net[sp] = net.get(sp, _ZERO) + c
    net = {sp: c for sp, c in net.items() if c != 0}
    if not net:
        raise EquationError("equation cancels to nothing", found=text)
    off = imbalance(net)
    if balance and off:
        check_balance(net, text)  # raises, naming what is off
    return Equation(
        text=text,
        stoichiometry=net,
        reactants=tuple((sp, c) for sp, c, _ in reactants),
        products=tuple((sp, c) for sp, c, _ in products),
        imbalance=off,
    )
