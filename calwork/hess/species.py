"""Chemical species with their physical state, in the notation thermochemists write.

A species is a formula, an optional charge and a state in parentheses::

    H2O(l)   H2O(g)   C(cr,graphite)   NaCl(cr)   Na+(aq)   SO4^2-(aq)
    MgSO4·7H2O(cr)    HCl(aq,1:50)     H2SO4·115H2O(l)

States are never merged: ``H2O(l)`` and ``H2O(g)`` are two species, and so are
``HCl(aq,1:50)`` and ``HCl(aq)``.

State
    The last parenthesised group whose text starts with one of the primary states
    ``g``, ``l``, ``cr``, ``s``, ``am``, ``aq``, ``sln`` (lower case, so it can never be
    mistaken for an element group such as ``(OH)``). After a comma comes a free qualifier:
    a polymorph (``cr,graphite``), a solution label (``aq,1:50``) or ``aq,inf`` for infinite
    dilution. ``aq`` alone is the standard state of the hypothetical ideal 1 mol/kg solution.

Charge (written between the formula and the state)
    * a sign with the magnitude after it: ``SO4-2``, ``Fe+3``;
    * a caret and the superscript as usually printed: ``SO4^2-``, ``Fe^3+``, ``Na^+``;
    * a space and the superscript: ``SO4 2-``, ``Fe 3+``;
    * repeated signs: ``SO4--``, ``Fe+++``;
    * a single trailing sign is a charge of ±1: ``Na+``, ``NH4+``, ``HSO4-``.
    Digits written straight before a sign are part of the formula, so ``SO42-`` is a
    singly-charged "SO42" — write ``SO4^2-`` or ``SO4-2`` (equations then fail their balance
    check, which names the element). Unicode superscripts (``SO4²⁻``) and the minus sign
    ``−`` are accepted and read as the caret form.

Hydrates may be joined with ``·``, ``*`` or ``.`` (``MgSO4*7H2O(cr)`` is the same species
as ``MgSO4·7H2O(cr)``); the canonical name uses ``·``.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cache
from types import MappingProxyType

from calwork.core.errors import FormulaError
from calwork.data import load_data
from calwork.formula import element_counts

__all__ = ["PRIMARY_STATES", "Species", "is_reference_state", "parse_species",
           "reference_states", "species_or_parse"]

#: Primary physical states (IUPAC Green Book abbreviations; ``sln`` = solution).
PRIMARY_STATES = ("g", "l", "cr", "s", "am", "aq", "sln")

_SUPERSCRIPT = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻", "0123456789+-")
_SUBSCRIPT = str.maketrans("₀₁₂₃₄₅₆₇₈₉", "0123456789")
_SUPER_RUN = re.compile(r"[⁰¹²³⁴⁵⁶⁷⁸⁹]*[⁺⁻]+[⁰¹²³⁴⁵⁶⁷⁸⁹]*")
_HYDRATE_JOIN = re.compile(r"\s*[·•∙*]\s*|(?<=[A-Za-z)\]])\.(?=\d*[A-Z(])|(?<=\d)\.(?=\d{0,3}H2O)")
_STATE = re.compile(r"\((?P<state>(?:g|l|cr|s|am|aq|sln)(?:\s*,[^()]*)?)\)\s*$")
_FORMULA_CHARS = re.compile(r"^[A-Za-z0-9()\[\]·.]+$")

# charge forms, tried in this order on the text before the state
_CARET = re.compile(r"\^(?:(?P<n1>\d*)(?P<s1>[+-])|(?P<s2>[+-])(?P<n2>\d*))$")
_SPACED = re.compile(r"\s+(?P<n>\d+)(?P<s>[+-])$")
_SIGN_DIGITS = re.compile(r"(?P<s>[+-])(?P<n>\d+)$")
_SIGNS = re.compile(r"(?P<signs>\++|-+)$")


@dataclass(frozen=True, kw_only=True, eq=False)
class Species:
    """A chemical species in a given state.

    Two species are equal when their canonical names (formula, charge and state) are equal;
    the text as written is kept in ``written`` but does not take part in comparisons.

    Attributes
    ----------
    name
        Canonical name, e.g. ``'SO4^2-(aq)'``, ``'MgSO4·7H2O(cr)'``.
    formula
        The formula without charge or state, hydrate join as ``·``.
    charge
        Charge number (elementary charges).
    state
        The state text, e.g. ``'cr,graphite'``, ``'aq,1:50'``.
    elements
        Element counts (exact rationals).
    written
        The text as the user wrote it.
    """

    name: str
    formula: str
    charge: int
    state: str
    elements: Mapping[str, Fraction] = field(compare=False, hash=False)
    written: str = field(default="", compare=False, hash=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "elements", MappingProxyType(dict(self.elements)))

    # the canonical name fixes formula, charge and state, so it alone decides identity
    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Species):
            return NotImplemented
        return self.name == other.name

    def __hash__(self) -> int:
        return hash(self.name)

    @property
    def primary_state(self) -> str:
        """The state without qualifier (``'cr'`` for ``'cr,graphite'``)."""
        return self.state.split(",", 1)[0]

    @property
    def is_gas(self) -> bool:
        """True for the ideal-gas state (counts in Δn(gas))."""
        return self.primary_state == "g"

    def __str__(self) -> str:
        return self.name

    def __repr__(self) -> str:
        return f"Species({self.name!r})"

    def to_dict(self) -> dict[str, object]:
        return {
            "name": self.name,
            "formula": self.formula,
            "charge": self.charge,
            "state": self.state,
            "elements": {k: _fraction_text(v) for k, v in self.elements.items()},
        }


def _fraction_text(value: Fraction) -> str | int:
    return int(value) if value.denominator == 1 else str(value)


def _charge_text(charge: int) -> str:
    if charge == 0:
        return ""
    sign = "+" if charge > 0 else "-"
    return sign if abs(charge) == 1 else f"^{abs(charge)}{sign}"


def _split_charge(text: str) -> tuple[str, int]:
    """Split ``'SO4^2-'`` into ``('SO4', -2)`` following the module's charge rules."""
    for pattern in (_CARET, _SPACED, _SIGN_DIGITS):
        m = pattern.search(text)
        if m:
            groups = m.groupdict()
            sign = groups.get("s") or groups.get("s1") or groups.get("s2")
            digits = groups.get("n") or groups.get("n1") or groups.get("n2") or "1"
            magnitude = int(digits)
            if magnitude == 0:
                raise FormulaError("a charge of 0 is written without a sign", found=text)
            return text[: m.start()], magnitude if sign == "+" else -magnitude
    m = _SIGNS.search(text)
    if m:
        signs = m.group("signs")
        return text[: m.start()], len(signs) if signs[0] == "+" else -len(signs)
    return text, 0


def _canonical_state(state: str) -> str:
    parts = [p.strip() for p in state.split(",")]
    if any(not p for p in parts):
        raise FormulaError("empty state qualifier", found=state)
    return ",".join([parts[0], *(" ".join(p.split()) for p in parts[1:])])


@cache
def _parse(text: str) -> Species:
    written = text
    if not isinstance(text, str) or not text.strip():
        raise FormulaError("empty species", found=text, expected="a species such as 'H2O(l)'")
    work = text.strip().replace("−", "-").replace("–", "-").translate(_SUBSCRIPT)
    m = _STATE.search(work)
    if not m:
        alias = usual_spelling(work)
        hint = f"; {work!r} is written {alias!r} here" if alias else ""
        raise FormulaError(
            "species needs its state in parentheses at the end" + hint,
            found=written,
            expected=f"a state from {list(PRIMARY_STATES)}, e.g. 'H2O(l)' or 'C(cr,graphite)'",
            position=len(work),
        )
    state = _canonical_state(m.group("state"))
    head = work[: m.start()].rstrip()
    head = _SUPER_RUN.sub(lambda r: "^" + r.group(0).translate(_SUPERSCRIPT), head)
    body, charge = _split_charge(head)
    body = _HYDRATE_JOIN.sub("·", body.strip())
    if not body:
        raise FormulaError("species has no formula", found=written, position=0)
    if not _FORMULA_CHARS.match(body):
        bad = next(i for i, ch in enumerate(body) if not _FORMULA_CHARS.match(ch))
        raise FormulaError(
            f"unexpected character {body[bad]!r} in the formula",
            found=written,
            expected="element symbols, counts, brackets and a hydrate join '·'",
            position=bad,
        )
    try:
        counts = element_counts(body)
    except FormulaError as exc:
        raise FormulaError(
            f"formula {body!r} of species does not parse ({exc.message})",
            found=written, expected="a formula such as 'C7H6O2' or 'MgSO4·7H2O'",
        ) from None
    elements = {el: Fraction(repr(float(n))) for el, n in counts.items()}
    name = f"{body}{_charge_text(charge)}({state})"
    return Species(
        name=name, formula=body, charge=charge, state=state, elements=elements, written=written
    )


def parse_species(text: str) -> Species:
    """Parse a species written with its state (see the module docstring for the rules).

    Parameters
    ----------
    text
        e.g. ``'H2O(l)'``, ``'SO4 2-(aq)'``, ``'MgSO4*7H2O(cr)'``.

    Raises
    ------
    FormulaError
        With the text and the position of the problem (``position``).

    Examples
    --------
    >>> s = parse_species("SO4 2-(aq)")
    >>> s.name, s.charge, s.state
    ('SO4^2-(aq)', -2, 'aq')
    >>> parse_species("H2O(l)") == parse_species("H2O(g)")
    False
    """
    return _parse(text)


def species_or_parse(value: Species | str) -> Species:
    """Return ``value`` if it is a :class:`Species`, else parse it."""
    return value if isinstance(value, Species) else parse_species(value)


#: Other common spellings of states → calwork's (common practice in textbooks and tables).
STATE_ALIASES = {
    "liq": "l", "liquid": "l", "gas": "g", "vap": "g", "vapour": "g", "vapor": "g",
    "s": "cr", "solid": "cr", "c": "cr", "crystal": "cr", "crystalline": "cr",
    "graphite": "cr,graphite", "diamond": "cr,diamond", "aqueous": "aq", "soln": "sln",
}
_ANY_STATE = re.compile(r"^(?P<head>.+?)\((?P<state>[^()]*)\)$")


def usual_spelling(text: str) -> str | None:
    """The species ``text`` spelled with calwork's state names (``H2O(liq)`` → ``H2O(l)``,
    ``C(graphite)`` → ``C(cr,graphite)``), or ``None`` when there is nothing to change.

    Examples
    --------
    >>> usual_spelling("H2O(liq)"), usual_spelling("C(graphite)"), usual_spelling("H2O(l)")
    ('H2O(l)', 'C(cr,graphite)', None)
    """
    m = _ANY_STATE.match(str(text).strip())
    if not m:
        return None
    state = m.group("state").strip().lower()
    if state.split(",")[0] in PRIMARY_STATES:  # already one of calwork's states
        return None
    alias = STATE_ALIASES.get(state)
    return None if alias is None else f"{m.group('head')}({alias})"


def spelling_hint(species: Species | str, known: Iterable[Species]) -> str | None:
    """``"did you mean …?"`` naming the species of ``known`` with the same formula and charge
    in a compatible state (``C(s)`` → ``C(cr,graphite)``), or ``None``."""
    text = species.name if isinstance(species, Species) else str(species)
    try:
        wanted = parse_species(usual_spelling(text) or text)
    except FormulaError:
        return None
    same = [k for k in known if k.formula == wanted.formula and k.charge == wanted.charge
            and k != wanted]
    primary = wanted.state.split(",")[0]
    close = [k for k in same if k.state.split(",")[0] == primary
             or STATE_ALIASES.get(primary, primary).split(",")[0] == k.state.split(",")[0]]
    names = sorted({k.name for k in (close or same)})[:3]
    return f"did you mean {' or '.join(names)}?" if names else None


@cache
def reference_states() -> frozenset[Species]:
    """Species with Δ_fH° = 0: elements in their reference states and the ``H+(aq)``
    convention (``calwork/data/reference_states.toml``)."""
    data = load_data("reference_states.toml")
    return frozenset(parse_species(s) for s in [*data["elements"], *data["conventions"]])


def is_reference_state(species: Species | str) -> bool:
    """True for an element in its reference state (or ``H+(aq)``)."""
    return species_or_parse(species) in reference_states()
