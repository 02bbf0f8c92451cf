"""Chemical formulas: element counts and molar masses from a maintained atomic-weight library.

Atomic weights are the conventional values of the ``periodictable`` package (IUPAC/CIAAW
standard atomic weights; e.g. C 12.011, H 1.008, O 15.999, N 14.007, S 32.06).
Hydrates may be written with ``·``, ``*`` or ``.`` (``MgSO4·7H2O``).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from functools import cache
from types import MappingProxyType

import periodictable

from calwork.core.errors import FormulaError

__all__ = ["ATOMIC_WEIGHT_SOURCE", "element_counts", "molar_mass_g_per_mol"]

ATOMIC_WEIGHT_SOURCE = (
    f"periodictable {periodictable.__version__} (IUPAC/CIAAW conventional atomic weights)"
)

# A '.' joins a hydrate after a letter or bracket ("NaCl.2H2O"), or after a count when water
# follows ("CuSO4.5H2O"); otherwise it is a decimal point ("CH1.686O0.843").
_HYDRATE_DOT = re.compile(
    r"\s*[·•∙*]\s*|(?<=[A-Za-z)\]])\.(?=\d*[A-Z(])|(?<=\d)\.(?=\d{0,2}H2O)"
)


def _normalise(formula: str) -> str:
    text = formula.strip()
    if not text:
        raise FormulaError("empty formula", found=formula, expected="a formula such as 'C7H6O2'")
    # ``MgSO4·7H2O`` -> ``MgSO4+7H2O`` (the hydrate join of the library's grammar)
    return _HYDRATE_DOT.sub("+", text)


@cache
def _parse(formula: str) -> Mapping[str, float]:
    text = _normalise(formula)
    if re.search(r"[^A-Za-z0-9().+\[\]]", text):
        raise FormulaError(
            "formula has characters that are not element symbols, counts or brackets",
            found=formula, expected="a formula such as 'C7H6O2' or 'MgSO4·7H2O'",
        )
    try:
        parsed = periodictable.formula(text)
    except (ValueError, TypeError, KeyError) as exc:
        raise FormulaError(
            f"formula does not parse ({exc})", found=formula,
            expected="a formula such as 'C7H6O2' or 'MgSO4·7H2O'",
        ) from None
    except Exception as exc:  # pyparsing raises its own ParseException types
        if type(exc).__module__.startswith("pyparsing"):
            raise FormulaError(
                "formula does not parse", found=formula,
                expected="a formula such as 'C7H6O2' or 'MgSO4·7H2O'",
            ) from None
        raise
    counts: dict[str, float] = {}
    for atom, count in parsed.atoms.items():
        symbol = atom.symbol
        if symbol in ("n", "e"):  # neutron / electron pseudo-elements of the library
            raise FormulaError("not a chemical element", found=symbol)
        if getattr(atom, "isotope", None) is not None and atom is not atom.element:
            symbol = atom.element.symbol
        counts[symbol] = counts.get(symbol, 0.0) + float(count)
    if not counts:
        raise FormulaError("formula has no elements", found=formula)
    return MappingProxyType(counts)


def element_counts(formula: str) -> dict[str, float]:
    """Element counts of ``formula``.

    Examples
    --------
    >>> element_counts("C7H6O2")
    {'C': 7.0, 'H': 6.0, 'O': 2.0}
    """
    return dict(_parse(formula))


def molar_mass_g_per_mol(formula: str) -> float:
    """Molar mass of ``formula`` in g/mol from conventional atomic weights.

    Examples
    --------
    >>> round(molar_mass_g_per_mol("C7H6O2"), 3)
    122.123
    """
    total = 0.0
    for symbol, count in _parse(formula).items():
        total += count * float(periodictable.elements.symbol(symbol).mass)
    return total
