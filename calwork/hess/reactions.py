"""Reactions with an enthalpy: reverse, scale, add (Hess's law) and print.

A :class:`Reaction` holds its stoichiometry as exact rationals (products positive), the
reaction enthalpy Δ_rH in kJ/mol with its standard uncertainty, and where it came from.
``r1 + r2`` adds stoichiometries (species on both sides cancel) and enthalpies, combining the
standard uncertainties in quadrature, i.e. *assuming the two are uncorrelated*; use
:func:`calwork.hess.algebra.combine` when a covariance is known.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace
from fractions import Fraction
from functools import cached_property
from types import MappingProxyType

from calwork.core.constants import T_REF_K
from calwork.core.errors import EquationError
from calwork.hess.equations import (
    check_balance,
    format_coefficient,
    format_side,
    parse_coefficient,
    parse_equation,
)
from calwork.hess.species import Species, is_reference_state, species_or_parse

__all__ = ["Reaction", "stoichiometry_text"]


def stoichiometry_text(stoichiometry: Mapping[Species, Fraction]) -> str:
    """``'reactants = products'`` in the order the mapping holds them."""
    reactants = [(sp, -c) for sp, c in stoichiometry.items() if c < 0]
    products = [(sp, c) for sp, c in stoichiometry.items() if c > 0]
    return f"{format_side(reactants)} = {format_side(products)}"


@dataclass(frozen=True, kw_only=True)
class Reaction:
    """A balanced reaction with its enthalpy.

    Attributes
    ----------
    stoichiometry
        Species → coefficient (products positive, reactants negative), exact rationals.
    delta_r_H_kJ_per_mol
        Reaction enthalpy at ``temperature_K`` (``None`` when not known).
    u_delta_r_H_kJ_per_mol
        Its standard uncertainty (k = 1).
    id
        Identifier (network row, reference).
    source
        Where the value comes from.
    temperature_K
        Temperature the enthalpy refers to.
    """

    stoichiometry: Mapping[Species, Fraction]
    delta_r_H_kJ_per_mol: float | None = None
    u_delta_r_H_kJ_per_mol: float | None = None
    id: str = ""
    source: str = ""
    temperature_K: float = T_REF_K

    def __post_init__(self) -> None:
        given = self.stoichiometry.items()
        if all(type(sp) is Species and type(c) is Fraction and c for sp, c in given):
            clean = dict(given)  # already species and nonzero rationals (a parsed equation)
        else:
            clean = {}
            for sp, c in given:
                c = parse_coefficient(c)
                if c != 0:
                    key = species_or_parse(sp)
                    clean[key] = clean.get(key, Fraction(0)) + c
            clean = {sp: c for sp, c in clean.items() if c != 0}
        if not clean:
            raise EquationError("a reaction needs at least one species", found=self.id or None)
        object.__setattr__(self, "stoichiometry", MappingProxyType(clean))
        if self.u_delta_r_H_kJ_per_mol is not None:
            u = float(self.u_delta_r_H_kJ_per_mol)
            if not math.isfinite(u) or u < 0:
                raise EquationError(
                    "standard uncertainty must be a finite number ≥ 0",
                    found=self.u_delta_r_H_kJ_per_mol, run=self.id or None,
                )
        if self.delta_r_H_kJ_per_mol is not None and not math.isfinite(
            float(self.delta_r_H_kJ_per_mol)
        ):
            raise EquationError("reaction enthalpy must be finite",
                                found=self.delta_r_H_kJ_per_mol, run=self.id or None)

    # --- construction -----------------------------------------------------------------------
    @classmethod
    def from_equation(
        cls,
        equation: str,
        delta_r_H_kJ_per_mol: float | None = None,
        u_delta_r_H_kJ_per_mol: float | None = None,
        *,
        id: str = "",
        source: str = "",
        temperature_K: float = T_REF_K,
        balance: bool = True,
    ) -> Reaction:
        """Parse ``equation`` (balance checked) and attach the enthalpy.

        Examples
        --------
        >>> r = Reaction.from_equation("C(cr,graphite) + O2(g) = CO2(g)", -393.51, 0.065)
        >>> r.reversed().pretty()
        'CO2(g) = C(cr,graphite) + O2(g)   ΔrH = 393.51 ± 0.065 kJ/mol'
        """
        eq = parse_equation(equation, balance=balance)
        return cls(
            stoichiometry=eq.stoichiometry,
            delta_r_H_kJ_per_mol=None if delta_r_H_kJ_per_mol is None
            else float(delta_r_H_kJ_per_mol),
            u_delta_r_H_kJ_per_mol=None if u_delta_r_H_kJ_per_mol is None
            else float(u_delta_r_H_kJ_per_mol),
            id=id, source=source, temperature_K=float(temperature_K),
        )

    @classmethod
    def formation(
        cls, species: Species | str, value_kJ_per_mol: float | None = None,
        u_kJ_per_mol: float | None = None, *, id: str = "", source: str = "",
    ) -> Reaction:
        """A single-species row: a known Δ_fH° of ``species`` (a prior in a network)."""
        sp = species_or_parse(species)
        return cls(stoichiometry={sp: Fraction(1)}, delta_r_H_kJ_per_mol=value_kJ_per_mol,
                   u_delta_r_H_kJ_per_mol=u_kJ_per_mol, id=id or sp.name, source=source)

    # --- algebra ----------------------------------------------------------------------------
    @property
    def species(self) -> tuple[Species, ...]:
        return tuple(self.stoichiometry)

    @property
    def is_single_species(self) -> bool:
        """True for a one-species row with coefficient 1 (a known Δ_fH°)."""
        return len(self.stoichiometry) == 1 and next(iter(self.stoichiometry.values())) == 1

    def reversed(self) -> Reaction:
        """The reverse reaction (enthalpy sign flipped, same uncertainty)."""
        return replace(
            self,
            stoichiometry={sp: -c for sp, c in self.stoichiometry.items()},
            delta_r_H_kJ_per_mol=None if self.delta_r_H_kJ_per_mol is None
            else -self.delta_r_H_kJ_per_mol,
            id=f"-({self.id})" if self.id else "",
        )

    def scaled(self, factor: Fraction | int | float | str) -> Reaction:
        """The reaction multiplied by ``factor`` (uncertainty scaled by ``|factor|``)."""
        f = parse_coefficient(factor)
        if f == 0:
            raise EquationError("cannot scale a reaction by 0", found=factor)
        return replace(
            self,
            stoichiometry={sp: c * f for sp, c in self.stoichiometry.items()},
            delta_r_H_kJ_per_mol=None if self.delta_r_H_kJ_per_mol is None
            else self.delta_r_H_kJ_per_mol * float(f),
            u_delta_r_H_kJ_per_mol=None if self.u_delta_r_H_kJ_per_mol is None
            else self.u_delta_r_H_kJ_per_mol * abs(float(f)),
            id=f"{format_coefficient(f)}×({self.id})" if self.id else "",
        )

    def __neg__(self) -> Reaction:
        return self.reversed()

    def __add__(self, other: Reaction) -> Reaction:
        if not isinstance(other, Reaction):
            return NotImplemented
        if abs(self.temperature_K - other.temperature_K) > 1e-6:
            raise EquationError(
                "cannot add reactions referred to different temperatures "
                f"({self.temperature_K} K and {other.temperature_K} K); adjust them first",
            )
        stoich = dict(self.stoichiometry)
        for sp, c in other.stoichiometry.items():
            stoich[sp] = stoich.get(sp, Fraction(0)) + c
        stoich = {sp: c for sp, c in stoich.items() if c != 0}
        if not stoich:
            raise EquationError(
                "the reactions cancel completely (sum is the null reaction)",
                found=f"{self.id} + {other.id}",
            )
        dh = None
        if self.delta_r_H_kJ_per_mol is not None and other.delta_r_H_kJ_per_mol is not None:
            dh = self.delta_r_H_kJ_per_mol + other.delta_r_H_kJ_per_mol
        u = None
        if self.u_delta_r_H_kJ_per_mol is not None and other.u_delta_r_H_kJ_per_mol is not None:
            u = math.hypot(self.u_delta_r_H_kJ_per_mol, other.u_delta_r_H_kJ_per_mol)
        ids = " + ".join(i for i in (self.id, other.id) if i)
        return Reaction(stoichiometry=stoich, delta_r_H_kJ_per_mol=dh,
                        u_delta_r_H_kJ_per_mol=u, id=ids, temperature_K=self.temperature_K)

    def __sub__(self, other: Reaction) -> Reaction:
        if not isinstance(other, Reaction):
            return NotImplemented
        return self + other.reversed()

    # --- checks and output ------------------------------------------------------------------
    def check_balance(self) -> None:
        """Raise :class:`~calwork.core.errors.BalanceError` if elements or charge do not balance."""
        check_balance(self.stoichiometry, self.equation)

    @cached_property
    def equation(self) -> str:
        """The equation text, reactants first (canonical species names)."""
        return stoichiometry_text(self.stoichiometry)

    def delta_n_gas(self) -> Fraction:
        """Change in amount of gas, mol per mol of reaction (ideal-gas species only)."""
        return sum((c for sp, c in self.stoichiometry.items() if sp.is_gas), Fraction(0))

    def enthalpy_from(self, formation_kJ_per_mol: Mapping[Species | str, float]) -> float:
        """Σ ν Δ_fH° from a table of formation enthalpies (elements in reference states 0)."""
        table = {species_or_parse(k): float(v) for k, v in formation_kJ_per_mol.items()}
        total = 0.0
        for sp, c in self.stoichiometry.items():
            if sp in table:
                total += float(c) * table[sp]
            elif not is_reference_state(sp):
                raise EquationError(f"no formation enthalpy for {sp.name}", found=sp.name)
        return total

    def pretty(self, *, digits: int | None = None) -> str:
        """The equation with its enthalpy, e.g. ``'CO(g) + 1/2 O2(g) = CO2(g)   ΔrH = …'``."""
        text = self.equation
        if self.delta_r_H_kJ_per_mol is not None:
            value = _num(self.delta_r_H_kJ_per_mol, digits)
            text += f"   ΔrH = {value}"
            if self.u_delta_r_H_kJ_per_mol is not None:
                text += f" ± {_num(self.u_delta_r_H_kJ_per_mol, digits)}"
            text += " kJ/mol"
        if abs(self.temperature_K - T_REF_K) > 1e-6:
            text += f" at {self.temperature_K:g} K"
        return text

    def to_dict(self) -> dict[str, object]:
        return {
            "id": self.id,
            "equation": self.equation,
            "stoichiometry": {sp.name: format_coefficient(c)
                              for sp, c in self.stoichiometry.items()},
            "delta_r_H_kJ_per_mol": self.delta_r_H_kJ_per_mol,
            "u_delta_r_H_kJ_per_mol": self.u_delta_r_H_kJ_per_mol,
            "temperature_K": self.temperature_K,
            "source": self.source,
        }

    def report(self) -> str:
        return (f"[{self.id}] " if self.id else "") + self.pretty() + (
            f"  ({self.source})" if self.source else "")


def _num(value: float, digits: int | None) -> str:
    if digits is not None:
        return f"{value:.{digits}f}"
    text = f"{value:.6f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text

