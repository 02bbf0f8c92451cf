"""Thermochemical cycles from enthalpies of solution (docs/methods.md §2.5, §5).

A molar enthalpy of solution is a reaction enthalpy: the solute in its own state goes into a
solution state. Written in the Hess back-solver's notation (solvent water not written; the
solution label ``aq,1:n`` means 1 mol of solute in n mol of water, ``aq`` alone the standard
state, which for enthalpy is infinite dilution)::

    KCl(cr) = KCl(aq,1:500)                  Δ_solH at n(H2O)/n(KCl) = 500
    KCl(cr) = K+(aq) + Cl-(aq)               Δ_solH^∞ (ions at infinite dilution)
    MgSO4·7H2O(cr) = MgSO4(aq,1:407) + 7 H2O(l)   a hydrate: its water joins the solvent

Dissolving two solids to the *same* final solution and combining with key values closes a
cycle, e.g. MgSO4(cr) + 7 H2O(l) = MgSO4·7H2O(cr) from the two dissolutions, hence
Δ_fH°(hydrate) = Δ_fH°(MgSO4, cr) + 7 Δ_fH°(H2O, l) + Δ_solH(MgSO4) − Δ_solH(hydrate).

Cycle file (TOML, calwork's own format)::

    [cycle]
    name = "MgSO4·7H2O(cr) from MgSO4(cr) and water"
    target = "MgSO4·7H2O(cr)"          # species whose Δ_fH° is wanted (optional)
    target_reaction = "MgSO4(cr) + 7 H2O(l) = MgSO4·7H2O(cr)"   # optional
    key_values = true                  # use the bundled key values (default true)
    omit_key_values = []               # bundled species not to use (e.g. ["KCl(cr)"])

    [[dissolution]]
    id = "anhydrous"
    solute = "MgSO4(cr)"
    final_state = "MgSO4(aq,1:407)"    # or dilution_ratio = 400, or infinite_dilution = true
    delta_sol_H_kJ_per_mol = -88.6
    u_delta_sol_H_kJ_per_mol = 0.1
    temperature_K = 298.15             # optional
    source = "..."                     # optional

    [[reaction]]                       # any other determination
    id = "r1"
    equation = "..."
    delta_r_H_kJ_per_mol = 0.0
    u_delta_r_H_kJ_per_mol = 0.1

    [[species]]                        # a Δ_fH° not bundled (a prior; replaces a bundled one)
    name = "MgSO4(cr)"
    delta_f_H_kJ_per_mol = -1284.9
    u_delta_f_H_kJ_per_mol = 0.5
    source = "..."

    [[correlation]]                    # e.g. two dissolutions sharing a calibration
    a = "anhydrous"
    b = "hydrate"
    correlation = 0.3                  # or covariance_kJ2_per_mol2 = ...

:func:`solve_cycle` builds a :class:`calwork.hess.Network` and solves it by weighted least
squares with the key values; :func:`write_network_csv` writes determinations in the network
CSV format that ``calwork network`` reads.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

from calwork.core.constants import T_REF_K
from calwork.core.errors import CalworkError, ExportError, InputFileError, NetworkError
from calwork.core.results import SampleResult, jsonable
from calwork.data import load_data, parse_toml_text
from calwork.hess.key_values import KeyValues, load_key_values
from calwork.hess.network import Network, solve_network
from calwork.hess.network_result import DerivedEnthalpy, NetworkResult
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, parse_species

__all__ = [
    "CycleResult",
    "cycle_network",
    "determination_from_sample",
    "dissolution_equation",
    "solution_determination",
    "solve_cycle",
    "write_network_csv",
]

_WATER = "H2O(l)"


def _split_hydrate(sp: Species) -> tuple[str, Fraction]:
    """Base formula and number of waters of a hydrate species (``MgSO4·7H2O`` → MgSO4, 7)."""
    parts = sp.formula.split("·")
    base = parts[0]
    water = Fraction(0)
    for extra in parts[1:]:
        head = extra[:-3] if extra.endswith("H2O") else None
        if head is None:
            return sp.formula, Fraction(0)
        water += Fraction(head) if head else Fraction(1)
    return base, water


def _ions(base_formula: str) -> tuple[str, str, int, int] | None:
    entry = load_data("solution_properties.toml").get("electrolytes", {}).get(base_formula)
    if not entry or "cation" not in entry:
        return None
    return entry["cation"], entry["anion"], int(entry["nu_M"]), int(entry["nu_X"])


def dissolution_equation(
    solute: str,
    *,
    final_state: str | None = None,
    dilution_ratio: float | None = None,
    infinite_dilution: bool = False,
) -> str:
    """The balanced equation of a dissolution in water.

    Parameters
    ----------
    solute
        The solute species, e.g. ``'KCl(cr)'``, ``'MgSO4·7H2O(cr)'``.
    final_state
        The solution side, e.g. ``'KCl(aq,1:500)'`` or ``'K+(aq) + Cl-(aq)'``. Default: from
        ``dilution_ratio`` (``X(aq,1:n)``, n including a hydrate's own water) or, with
        ``infinite_dilution``, the ions at infinite dilution for bundled electrolytes
        (``X(aq)`` otherwise).
    dilution_ratio
        n(H2O)/n(solute) of the solvent, rounded to a whole number in the label.
    infinite_dilution
        Write the infinite-dilution (standard-state) solution.

    Examples
    --------
    >>> dissolution_equation("KCl(cr)", infinite_dilution=True)
    'KCl(cr) = K+(aq) + Cl-(aq)'
    >>> dissolution_equation("MgSO4·7H2O(cr)", dilution_ratio=400)
    'MgSO4·7H2O(cr) = MgSO4(aq,1:407) + 7 H2O(l)'
    """
    sp = parse_species(solute)
    base, water = _split_hydrate(sp)
    if final_state is None:
        if infinite_dilution:
            ions = _ions(base)
            if ions is None:
                final_state = f"{base}(aq)"
            else:
                cation, anion, nu_m, nu_x = ions
                final_state = " + ".join(
                    (f"{n} {ion}(aq)" if n != 1 else f"{ion}(aq)")
                    for n, ion in ((nu_m, cation), (nu_x, anion)))
        elif dilution_ratio is not None:
            if not (math.isfinite(dilution_ratio) and dilution_ratio > 0):
                raise NetworkError("dilution ratio must be positive", column="dilution_ratio",
                                   found=dilution_ratio)
            total = Fraction(round(dilution_ratio)) + water
            final_state = f"{base}(aq,1:{total})"
        else:
            raise NetworkError("a dissolution needs its final state", column="final_state",
                               expected="final_state, dilution_ratio or infinite_dilution")
    text = f"{sp.name} = {final_state}"
    released = water if final_state and water and _WATER not in final_state else Fraction(0)
    if released:
        text += f" + {released} {_WATER}"
    return text


def solution_determination(
    solute: str,
    delta_sol_H_kJ_per_mol: float,
    u_delta_sol_H_kJ_per_mol: float,
    *,
    final_state: str | None = None,
    dilution_ratio: float | None = None,
    infinite_dilution: bool = False,
    id: str = "",
    source: str = "",
    temperature_K: float = T_REF_K,
) -> Reaction:
    """A dissolution as a Hess-network determination (balance checked).

    Examples
    --------
    >>> r = solution_determination("KCl(cr)", 17.584, 0.017, dilution_ratio=500)
    >>> r.equation
    'KCl(cr) = KCl(aq,1:500)'
    """
    equation = dissolution_equation(solute, final_state=final_state,
                                    dilution_ratio=dilution_ratio,
                                    infinite_dilution=infinite_dilution)
    return Reaction.from_equation(equation, delta_sol_H_kJ_per_mol, u_delta_sol_H_kJ_per_mol,
                                  id=id, source=source, temperature_K=temperature_K)


def determination_from_sample(
    sample: SampleResult,
    *,
    solute: str | None = None,
    infinite_dilution: bool = False,
    temperature_K: float = T_REF_K,
    id: str | None = None,
    source: str | None = None,
) -> Reaction:
    """The determination of a solution series (:class:`~calwork.core.results.SampleResult`).

    Parameters
    ----------
    sample
        A solution SampleResult (``molar_enthalpy_kJ_per_mol`` at ``final_molality_mol_per_kg``
        and, where computed, ``infinite_dilution_enthalpy_kJ_per_mol``).
    solute
        The solute species; default ``'<formula>(cr)'``.
    infinite_dilution
        Use the infinite-dilution value (``salt(cr) = ions(aq)``); otherwise the series
        mean at its mean final molality (``X(aq,1:n)``).
    temperature_K
        Temperature the value refers to, K (the series' reference temperature; the network
        solver adjusts other temperatures only with heat capacities).
    """
    if solute is None:
        if not sample.formula:
            raise NetworkError("the sample has no formula; give the solute species",
                               column="formula", found=sample.sample)
        solute = f"{sample.formula}(cr)"
    rid = id or sample.sample
    src = source or f"calwork solution series {sample.sample!r} ({sample.n_runs} runs)"
    if infinite_dilution:
        if sample.infinite_dilution_enthalpy_kJ_per_mol is None:
            raise NetworkError("the series has no infinite-dilution value",
                               column="infinite_dilution_enthalpy_kJ_per_mol",
                               found=sample.sample)
        return solution_determination(
            solute, sample.infinite_dilution_enthalpy_kJ_per_mol,
            sample.u_infinite_dilution_enthalpy_kJ_per_mol, infinite_dilution=True, id=rid,
            source=src, temperature_K=temperature_K)
    if sample.molar_enthalpy_kJ_per_mol is None or sample.final_molality_mol_per_kg is None:
        raise NetworkError("the series has no molar enthalpy at a known molality",
                           column="final_molality_mol_per_kg", found=sample.sample)
    M_w = float(load_data("solution_properties.toml")["water"]["molar_mass_g_per_mol"])
    ratio = 1000.0 / (M_w * sample.final_molality_mol_per_kg)
    return solution_determination(
        solute, sample.molar_enthalpy_kJ_per_mol, sample.u_molar_enthalpy_kJ_per_mol,
        dilution_ratio=ratio, id=rid, source=src, temperature_K=temperature_K)


def write_network_csv(reactions: Sequence[Reaction], path: str | Path) -> Path:
    """Write determinations (and single-species priors) as a network CSV for ``calwork network``.

    Columns: ``id, equation, delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol, temperature_K,
    source`` (the contract columns first).
    """
    path = Path(path)
    rows = [["id", "equation", "delta_r_H_kJ_per_mol", "u_delta_r_H_kJ_per_mol",
             "temperature_K", "source"]]
    for r in reactions:
        equation = next(iter(r.stoichiometry)).name if r.is_single_species else r.equation
        rows.append([r.id, equation, repr(float(r.delta_r_H_kJ_per_mol)),
                     repr(float(r.u_delta_r_H_kJ_per_mol)), repr(float(r.temperature_K)),
                     r.source])
    try:
        with path.open("w", encoding="utf-8", newline="") as fh:
            csv.writer(fh, lineterminator="\n").writerows(rows)
    except OSError as exc:
        raise ExportError(f"cannot write the network file: {exc.strerror or exc}",
                          path=path) from None
    return path


# --- cycle files ----------------------------------------------------------------------------
_TABLES = {"cycle", "dissolution", "reaction", "species", "correlation", "source"}


def _load_spec(path_or_spec: str | Path | Mapping[str, Any]) -> tuple[dict[str, Any], str | None]:
    if isinstance(path_or_spec, Mapping):
        return dict(path_or_spec), None
    path = Path(path_or_spec)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputFileError("cycle file not found", path=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(f"cannot read the cycle file ({exc})", path=path) from None
    return parse_toml_text(text, path=path, error=NetworkError), str(path)


def _number(raw: Mapping[str, Any], key: str, where: dict[str, Any], *,
            positive: bool = False, default: float | None = None) -> float:
    value = raw.get(key, default)
    if value is None:
        raise NetworkError("a number is required", column=key, expected="a number", **where)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise NetworkError("not a finite number", column=key, found=value,
                           expected="a number", **where)
    if positive and value <= 0:
        raise NetworkError("must be > 0", column=key, found=value, expected="a value > 0",
                           **where)
    return float(value)


def cycle_network(path_or_spec: str | Path | Mapping[str, Any]) -> tuple[Network, dict]:
    """The :class:`calwork.hess.Network` of a cycle file (or mapping) and its ``[cycle]`` table.

    Raises
    ------
    NetworkError, EquationError, BalanceError
        Naming the file, the table entry and the field.
    """
    spec, path = _load_spec(path_or_spec)
    unknown = sorted(set(spec) - _TABLES)
    if unknown:
        raise NetworkError(f"unknown table(s) {unknown}", path=path,
                           expected=f"{sorted(_TABLES)}")
    cycle = dict(spec.get("cycle", {}))
    determinations: list[Reaction] = []
    for i, raw in enumerate(spec.get("dissolution", []), start=1):
        where = {"path": path, "run": f"dissolution #{i}"}
        try:
            determinations.append(solution_determination(
                str(raw.get("solute", "")),
                _number(raw, "delta_sol_H_kJ_per_mol", where),
                _number(raw, "u_delta_sol_H_kJ_per_mol", where, positive=True),
                final_state=raw.get("final_state"),
                dilution_ratio=None if raw.get("dilution_ratio") is None
                else _number(raw, "dilution_ratio", where, positive=True),
                infinite_dilution=bool(raw.get("infinite_dilution", False)),
                id=str(raw.get("id") or f"dissolution{i}"), source=str(raw.get("source", "")),
                temperature_K=_number(raw, "temperature_K", where, positive=True,
                                      default=T_REF_K)))
        except CalworkError as exc:
            raise exc.with_context(**where, column="solute") from None
    for i, raw in enumerate(spec.get("reaction", []), start=1):
        where = {"path": path, "run": f"reaction #{i}"}
        try:
            determinations.append(Reaction.from_equation(
                str(raw.get("equation", "")), _number(raw, "delta_r_H_kJ_per_mol", where),
                _number(raw, "u_delta_r_H_kJ_per_mol", where, positive=True),
                id=str(raw.get("id") or f"reaction{i}"), source=str(raw.get("source", "")),
                temperature_K=_number(raw, "temperature_K", where, positive=True,
                                      default=T_REF_K)))
        except CalworkError as exc:
            raise exc.with_context(**where, column="equation") from None
    priors = []
    for i, raw in enumerate(spec.get("species", []), start=1):
        where = {"path": path, "run": f"species #{i}"}
        try:
            priors.append(Reaction.formation(
                str(raw.get("name", "")), _number(raw, "delta_f_H_kJ_per_mol", where),
                _number(raw, "u_delta_f_H_kJ_per_mol", where, positive=True),
                source=str(raw.get("source", ""))))
        except CalworkError as exc:
            raise exc.with_context(**where, column="name") from None
    u_by_id = {r.id: r.u_delta_r_H_kJ_per_mol for r in (*determinations, *priors)}
    covariance = {}
    for i, raw in enumerate(spec.get("correlation", []), start=1):
        where = {"path": path, "run": f"correlation #{i}"}
        a, b = str(raw.get("a", "")), str(raw.get("b", ""))
        for key, name in ((a, "a"), (b, "b")):
            if key not in u_by_id:
                raise NetworkError("correlation names an unknown id", column=name, found=key,
                                   **where)
        if "covariance_kJ2_per_mol2" in raw:
            covariance[(a, b)] = _number(raw, "covariance_kJ2_per_mol2", where)
        else:
            rho = _number(raw, "correlation", where)
            if not -1.0 <= rho <= 1.0:
                raise NetworkError("correlation must lie in [-1, 1]", column="correlation",
                                   found=rho, **where)
            covariance[(a, b)] = rho * u_by_id[a] * u_by_id[b]
    if not determinations:
        raise NetworkError("a cycle needs at least one [[dissolution]] or [[reaction]]",
                           path=path, column="dissolution")
    try:
        network = Network(determinations=tuple(determinations), priors=tuple(priors),
                          covariance=covariance, name=str(cycle.get("name", "")),
                          source_path=path)
    except CalworkError as exc:
        raise exc.with_context(path=path) from None
    cycle["_path"] = path
    return network, cycle


@dataclass(frozen=True, kw_only=True, eq=False)
class CycleResult:
    """Result of a thermochemical cycle: Δ_fH° of the target and the solved network."""

    name: str
    target: str | None
    delta_f_H_kJ_per_mol: float | None
    u_delta_f_H_kJ_per_mol: float | None
    coverage_factor: float
    target_reaction: DerivedEnthalpy | None
    determinations: tuple[Reaction, ...]
    network: NetworkResult
    source_path: str | None = None
    warnings: tuple[str, ...] = field(default=())

    @property
    def U_delta_f_H_kJ_per_mol(self) -> float | None:
        """Expanded uncertainty U = k u of the target's Δ_fH°, kJ/mol."""
        u = self.u_delta_f_H_kJ_per_mol
        return None if u is None else self.coverage_factor * u

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "name": self.name, "target": self.target,
            "delta_f_H_kJ_per_mol": self.delta_f_H_kJ_per_mol,
            "u_delta_f_H_kJ_per_mol": self.u_delta_f_H_kJ_per_mol,
            "U_delta_f_H_kJ_per_mol": self.U_delta_f_H_kJ_per_mol,
            "coverage_factor": self.coverage_factor,
            "target_reaction": self.target_reaction,
            "determinations": [r.to_dict() for r in self.determinations],
            "network": self.network.to_dict(), "source_path": self.source_path,
            "warnings": list(self.warnings),
        })


def _key_table(cycle: Mapping[str, Any]) -> KeyValues | bool:
    use = cycle.get("key_values", True)
    if not use:
        return False
    omit = [parse_species(str(s)) for s in cycle.get("omit_key_values", [])]
    table = load_key_values()
    if not omit:
        return table
    return KeyValues(values={sp: kv for sp, kv in table.values.items() if sp not in omit},
                     version=table.version, citation=table.citation,
                     uncertainty_convention=table.uncertainty_convention,
                     coverage_factor=table.coverage_factor, path=table.path,
                     extended_by=(*table.extended_by, f"omitted {[s.name for s in omit]}"))


def solve_cycle(path_or_spec: str | Path | Mapping[str, Any], *,
                coverage_factor: float = 2.0, **network_options: Any) -> CycleResult:
    """Solve a thermochemical cycle of dissolution enthalpies and key values.

    Parameters
    ----------
    path_or_spec
        A cycle file (TOML, see the module docstring) or the same content as a mapping.
    coverage_factor
        k of the expanded uncertainty U = k u.
    network_options
        Passed to :func:`calwork.hess.solve_network` (e.g. ``worst_offender``,
        ``monte_carlo``, ``allow_unadjusted_temperature``).

    Returns
    -------
    CycleResult
        Δ_fH° of ``[cycle] target`` (if given) with u and U, ``target_reaction``'s Δ_rH (if
        given), and the whole :class:`~calwork.hess.NetworkResult`.
    """
    network, cycle = cycle_network(path_or_spec)
    path = cycle.get("_path")
    result = solve_network(network, key_values=_key_table(cycle),
                           coverage_factor=coverage_factor, **network_options)
    target = cycle.get("target")
    value = u = None
    if target is not None:
        try:
            name = parse_species(str(target)).name
            value, u = result.value(name)
        except CalworkError as exc:
            raise exc.with_context(path=path, column="target") from None
        target = name
    derived = None
    if cycle.get("target_reaction"):
        try:
            derived = result.reaction_enthalpy(str(cycle["target_reaction"]))
        except CalworkError as exc:
            raise exc.with_context(path=path, column="target_reaction") from None
    warnings = list(result.warnings)
    if result.dof > 0 and result.p_value is not None and result.p_value < 0.05:
        warnings.append(f"the cycle does not close within its uncertainties (χ² = "
                        f"{result.chi2:.3g}, ν = {result.dof}, p = {result.p_value:.3g})")
    return CycleResult(name=str(cycle.get("name", "")), target=target,
                       delta_f_H_kJ_per_mol=value, u_delta_f_H_kJ_per_mol=u,
                       coverage_factor=coverage_factor, target_reaction=derived,
                       determinations=network.determinations, network=result,
                       source_path=path, warnings=tuple(warnings))
