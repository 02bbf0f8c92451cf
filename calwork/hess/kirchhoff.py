"""Kirchhoff's law: bring a reaction enthalpy to 298.15 K with heat capacities.

    Δ_rH°(T₂) = Δ_rH°(T₁) + ∫_{T₁}^{T₂} Σ_s ν_s C°_p,s(T) dT       (docs/methods.md §5.5)

Heat-capacity models per species (each valid over a stated interval; several intervals make
a piecewise model):

* :class:`ConstantCp` — C°_p constant, J/(mol·K);
* :class:`Shomate` — NIST-JANAF / WebBook form with ``t = T/1000``:
  C°_p = A + B t + C t² + D t³ + E/t²  [J/(mol·K)],
  ∫C°_p dT = 1000 (A t + B t²/2 + C t³/3 + D t⁴/4 − E/t) J/mol;
* :class:`Nasa7` — C°_p/R = a1 + a2 T + a3 T² + a4 T³ + a5 T⁴.

Outside a model's interval the integral raises :class:`~calwork.core.errors.NetworkError`
(extrapolating a fitted C_p is a choice the user must make by widening the interval).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.core.errors import NetworkError, check_choice
from calwork.hess.species import Species, species_or_parse

__all__ = [
    "CP_MODELS",
    "ConstantCp",
    "Nasa7",
    "Piecewise",
    "Shomate",
    "adjust_reaction_enthalpy",
    "cp_model_from_dict",
    "enthalpy_increment_kJ_per_mol",
]

CP_MODELS = ("constant", "shomate", "nasa7")


def _check_range(name: str, T_min_K: float, T_max_K: float, T1: float, T2: float) -> None:
    lo, hi = min(T1, T2), max(T1, T2)
    if lo < T_min_K - 1e-9 or hi > T_max_K + 1e-9:
        raise NetworkError(
            f"heat capacity of {name or 'species'} is valid for {T_min_K:g}–{T_max_K:g} K; "
            f"the integral needs {lo:g}–{hi:g} K",
            expected="a model covering the temperatures of the determination",
        )


@dataclass(frozen=True, kw_only=True)
class ConstantCp:
    """Constant heat capacity ``cp_J_per_mol_K`` over ``T_min_K``–``T_max_K``."""

    cp_J_per_mol_K: float
    T_min_K: float = 0.0
    T_max_K: float = math.inf
    name: str = ""

    def cp_J_per_mol_K_at(self, T_K: float) -> float:
        return self.cp_J_per_mol_K

    def integral_J_per_mol(self, T1_K: float, T2_K: float) -> float:
        """∫_{T1}^{T2} C_p dT in J/mol."""
        _check_range(self.name, self.T_min_K, self.T_max_K, T1_K, T2_K)
        return self.cp_J_per_mol_K * (T2_K - T1_K)


@dataclass(frozen=True, kw_only=True)
class Shomate:
    """Shomate coefficients A–E (and F, H for H° − H°(298.15 K), kJ/mol) over an interval."""

    A: float
    B: float
    C: float
    D: float
    E: float
    T_min_K: float
    T_max_K: float
    F: float | None = None
    H: float | None = None
    name: str = ""

    def cp_J_per_mol_K_at(self, T_K: float) -> float:
        t = T_K / 1000.0
        return self.A + self.B * t + self.C * t**2 + self.D * t**3 + self.E / t**2

    def _antiderivative_kJ(self, T_K: float) -> float:
        t = T_K / 1000.0
        return (self.A * t + self.B * t**2 / 2 + self.C * t**3 / 3 + self.D * t**4 / 4
                - self.E / t)

    def integral_J_per_mol(self, T1_K: float, T2_K: float) -> float:
        """∫_{T1}^{T2} C_p dT in J/mol (analytic)."""
        _check_range(self.name, self.T_min_K, self.T_max_K, T1_K, T2_K)
        return 1000.0 * (self._antiderivative_kJ(T2_K) - self._antiderivative_kJ(T1_K))

    def enthalpy_above_298_kJ_per_mol(self, T_K: float) -> float:
        """H°(T) − H°(298.15 K) by the WebBook formula (needs F and H)."""
        if self.F is None or self.H is None:
            raise NetworkError("Shomate F and H coefficients are needed for H − H(298.15 K)")
        return self._antiderivative_kJ(T_K) + self.F - self.H


@dataclass(frozen=True, kw_only=True)
class Nasa7:
    """NASA 7-coefficient polynomial (only a1–a5 are needed for C_p and its integral)."""

    a: tuple[float, ...]
    T_min_K: float
    T_max_K: float
    name: str = ""

    def __post_init__(self) -> None:
        if len(self.a) < 5:
            raise NetworkError("NASA 7-coefficient form needs at least a1..a5", found=self.a)
        object.__setattr__(self, "a", tuple(float(v) for v in self.a))

    def cp_J_per_mol_K_at(self, T_K: float) -> float:
        a1, a2, a3, a4, a5 = self.a[:5]
        return R_J_per_mol_K * (a1 + a2 * T_K + a3 * T_K**2 + a4 * T_K**3 + a5 * T_K**4)

    def _antiderivative(self, T: float) -> float:
        a1, a2, a3, a4, a5 = self.a[:5]
        return R_J_per_mol_K * (a1 * T + a2 * T**2 / 2 + a3 * T**3 / 3 + a4 * T**4 / 4
                                + a5 * T**5 / 5)

    def integral_J_per_mol(self, T1_K: float, T2_K: float) -> float:
        _check_range(self.name, self.T_min_K, self.T_max_K, T1_K, T2_K)
        return self._antiderivative(T2_K) - self._antiderivative(T1_K)


@dataclass(frozen=True, kw_only=True)
class Piecewise:
    """Several models on adjacent intervals (e.g. the two NASA ranges)."""

    pieces: tuple[ConstantCp | Shomate | Nasa7, ...]
    name: str = ""

    def __post_init__(self) -> None:
        pieces = tuple(sorted(self.pieces, key=lambda p: p.T_min_K))
        for a, b in itertools.pairwise(pieces):
            if abs(a.T_max_K - b.T_min_K) > 1e-6:
                raise NetworkError(f"heat-capacity intervals of {self.name or 'species'} do "
                                   f"not join: {a.T_max_K:g} K and {b.T_min_K:g} K")
        object.__setattr__(self, "pieces", pieces)

    @property
    def T_min_K(self) -> float:
        return self.pieces[0].T_min_K

    @property
    def T_max_K(self) -> float:
        return self.pieces[-1].T_max_K

    def cp_J_per_mol_K_at(self, T_K: float) -> float:
        for p in self.pieces:
            if p.T_min_K <= T_K <= p.T_max_K:
                return p.cp_J_per_mol_K_at(T_K)
        _check_range(self.name, self.T_min_K, self.T_max_K, T_K, T_K)
        raise AssertionError("unreachable")

    def integral_J_per_mol(self, T1_K: float, T2_K: float) -> float:
        _check_range(self.name, self.T_min_K, self.T_max_K, T1_K, T2_K)
        sign = 1.0 if T2_K >= T1_K else -1.0
        lo, hi = min(T1_K, T2_K), max(T1_K, T2_K)
        total = 0.0
        for p in self.pieces:
            a, b = max(lo, p.T_min_K), min(hi, p.T_max_K)
            if b > a:
                total += p.integral_J_per_mol(a, b)
        return sign * total


CpModel = ConstantCp | Shomate | Nasa7 | Piecewise


def cp_model_from_dict(raw: Mapping[str, object], *, name: str = "") -> CpModel:
    """Build a model from a file entry: ``model`` = ``constant`` | ``shomate`` | ``nasa7``.

    Fields: ``cp_J_per_mol_K`` (constant); ``A``…``E`` (optional ``F``, ``H``) for Shomate;
    ``coefficients`` = [a1, …, a5(, a6, a7)] for NASA-7; ``T_min_K`` and ``T_max_K``.
    """
    model = check_choice("heat-capacity model", str(raw.get("model", "")), CP_MODELS)

    def num(key: str, default: float | None = None) -> float:
        if key not in raw:
            if default is not None:
                return default
            raise NetworkError(f"heat capacity of {name}: missing field {key!r}")
        try:
            return float(raw[key])  # type: ignore[arg-type]
        except (TypeError, ValueError):
            raise NetworkError(f"heat capacity of {name}: {key!r} must be a number",
                               found=raw[key]) from None

    if model == "constant":
        return ConstantCp(cp_J_per_mol_K=num("cp_J_per_mol_K"), T_min_K=num("T_min_K", 0.0),
                          T_max_K=num("T_max_K", math.inf), name=name)
    if model == "shomate":
        return Shomate(A=num("A"), B=num("B"), C=num("C"), D=num("D"), E=num("E"),
                       F=float(raw["F"]) if "F" in raw else None,  # type: ignore[arg-type]
                       H=float(raw["H"]) if "H" in raw else None,  # type: ignore[arg-type]
                       T_min_K=num("T_min_K"), T_max_K=num("T_max_K"), name=name)
    coeffs = raw.get("coefficients")
    if not isinstance(coeffs, Sequence) or isinstance(coeffs, str):
        raise NetworkError(f"heat capacity of {name}: 'coefficients' must be a list a1..a7")
    return Nasa7(a=tuple(float(c) for c in coeffs), T_min_K=num("T_min_K"),
                 T_max_K=num("T_max_K"), name=name)


def enthalpy_increment_kJ_per_mol(model: CpModel, T1_K: float, T2_K: float) -> float:
    """``∫_{T1}^{T2} C°_p dT`` in kJ/mol."""
    return model.integral_J_per_mol(T1_K, T2_K) / 1000.0


def adjust_reaction_enthalpy(
    stoichiometry: Mapping[Species, object],
    delta_r_H_kJ_per_mol: float,
    T_K: float,
    heat_capacities: Mapping[Species | str, CpModel],
    *,
    T_ref_K: float = T_REF_K,
    label: str = "",
) -> tuple[float, float]:
    """Δ_rH at ``T_ref_K`` from its value at ``T_K`` (Kirchhoff, eq. 5.2).

    Every species of the reaction, elements included, needs a heat-capacity model; the
    missing ones are named in the :class:`~calwork.core.errors.NetworkError`.

    Returns
    -------
    (value_kJ_per_mol, correction_kJ_per_mol)
    """
    table = {species_or_parse(k): v for k, v in heat_capacities.items()}
    missing = [sp.name for sp in stoichiometry if sp not in table]
    if missing:
        raise NetworkError(
            f"determination {label!r} at {T_K:g} K needs heat capacities to be brought to "
            f"{T_ref_K:g} K; missing for {missing}",
            expected="Shomate, NASA-7 or constant C_p for every species, or an explicit "
                     "opt-out (allow_unadjusted_temperature=True)",
        )
    correction = sum(float(c) * enthalpy_increment_kJ_per_mol(table[sp], T_K, T_ref_K)
                     for sp, c in stoichiometry.items())
    return delta_r_H_kJ_per_mol + correction, correction
