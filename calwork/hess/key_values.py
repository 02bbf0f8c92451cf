"""Auxiliary thermochemical data: key values and the reference states of the elements.

The bundled table ``calwork/data/key_values.toml`` holds CODATA Key Values (Cox, Wagman &
Medvedev 1989) with per-value status and the ± as printed; its ``uncertainty_convention``
says how a ± becomes a standard uncertainty (``expanded``: u = ± / coverage_factor, the
bundled choice; ``standard``: u = ±). A key value is either a formation enthalpy of one
species or, for solution species defined through a reaction (H2SO4 in 115 H2O), the
enthalpy of that reaction; either way it enters a network as one row.

Elements in their reference states and ``H+(aq)`` have Δ_fH° = 0 and are never unknowns
(:func:`calwork.hess.species.reference_states`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from types import MappingProxyType
from typing import Any

from calwork.core.errors import CalworkError, DataFileError, check_choice
from calwork.data import load_data, load_toml
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, parse_species, species_or_parse

__all__ = [
    "KeyValue",
    "KeyValues",
    "load_key_values",
]

UNCERTAINTY_CONVENTIONS = ("expanded", "standard")


@dataclass(frozen=True, kw_only=True)
class KeyValue:
    """One auxiliary value.

    Attributes
    ----------
    species
        The species the value is for.
    row
        The network row it gives: a single-species formation row, or the defining reaction.
    value_kJ_per_mol
        Δ_fH° (or the defining reaction's Δ_rH), kJ/mol.
    u_kJ_per_mol
        Standard uncertainty (k = 1), kJ/mol.
    pm_kJ_per_mol
        The ± as printed in the source.
    status
        ``confirmed``, ``memory``, ``derived`` or ``user``.
    source
        Citation (table citation unless the entry names its own).
    """

    species: Species
    row: Reaction
    value_kJ_per_mol: float
    u_kJ_per_mol: float
    pm_kJ_per_mol: float | None = None
    status: str = "user"
    source: str = ""
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "species": self.species.name,
            "equation": None if self.row.is_single_species else self.row.equation,
            "value_kJ_per_mol": self.value_kJ_per_mol,
            "u_kJ_per_mol": self.u_kJ_per_mol,
            "pm_kJ_per_mol": self.pm_kJ_per_mol,
            "status": self.status,
            "source": self.source,
        }


@dataclass(frozen=True, kw_only=True)
class KeyValues:
    """A table of key values (bundled, user-supplied, or both)."""

    values: Mapping[Species, KeyValue]
    version: str = ""
    citation: str = ""
    uncertainty_convention: str = "expanded"
    coverage_factor: float = 2.0
    path: str | None = None
    extended_by: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))

    def __contains__(self, species: object) -> bool:
        try:
            return species_or_parse(species) in self.values  # type: ignore[arg-type]
        except CalworkError:
            return False

    def __getitem__(self, species: Species | str) -> KeyValue:
        sp = species_or_parse(species)
        try:
            return self.values[sp]
        except KeyError:
            raise DataFileError(f"no key value for {sp.name}", path=self.path) from None

    def __iter__(self):
        return iter(self.values.values())

    def __len__(self) -> int:
        return len(self.values)

    def rows_for(self, species: Iterable[Species], *, exclude: Iterable[Species] = ()) -> list[
            KeyValue]:
        """The key values a network with ``species`` needs (closed under their own rows).

        A value defined by a reaction brings in the species of that reaction, whose key
        values are then added too. Species in ``exclude`` (given by the user) are skipped.
        """
        skip = set(exclude)
        wanted = [sp for sp in species if sp in self.values and sp not in skip]
        out: dict[Species, KeyValue] = {}
        while wanted:
            sp = wanted.pop()
            if sp in out:
                continue
            kv = self.values[sp]
            out[sp] = kv
            wanted.extend(s for s in kv.row.stoichiometry
                          if s in self.values and s not in out and s not in skip)
        return list(out.values())

    def to_dict(self) -> dict[str, Any]:
        return {
            "version": self.version,
            "citation": self.citation,
            "uncertainty_convention": self.uncertainty_convention,
            "coverage_factor": self.coverage_factor,
            "path": self.path,
            "values": [kv.to_dict() for kv in self.values.values()],
        }


def _entry(raw: Mapping[str, Any], *, where: str, convention: str, k: float,
           citation: str, default_status: str) -> KeyValue:
    def number(key: str) -> float:
        try:
            value = float(raw[key])
        except KeyError:
            raise DataFileError(f"{where}: missing field {key!r}") from None
        except (TypeError, ValueError):
            raise DataFileError(f"{where}: field {key!r} must be a number",
                                found=raw[key]) from None
        if not math.isfinite(value):
            raise DataFileError(f"{where}: field {key!r} must be finite", found=raw[key])
        return value

    if "species" not in raw:
        raise DataFileError(f"{where}: missing field 'species'")
    try:
        sp = parse_species(str(raw["species"]))
    except CalworkError as exc:
        raise DataFileError(f"{where}: {exc}") from None
    if "u_kJ_per_mol" in raw or "u_delta_f_H_kJ_per_mol" in raw:
        u = number("u_kJ_per_mol" if "u_kJ_per_mol" in raw else "u_delta_f_H_kJ_per_mol")
        pm = None
    else:
        pm = number("pm_kJ_per_mol")
        u = pm / k if convention == "expanded" else pm
    if u <= 0:
        raise DataFileError(f"{where}: uncertainty must be > 0 (an auxiliary value is never "
                            "exact)", found=u)
    source = str(raw.get("citation") or raw.get("source") or citation)
    status = str(raw.get("status", default_status))
    if "equation" in raw:
        value = number("delta_r_H_kJ_per_mol")
        try:
            row = Reaction.from_equation(str(raw["equation"]), value, u,
                                         id=f"key:{sp.name}", source=source)
        except CalworkError as exc:
            raise DataFileError(f"{where}: {exc}") from None
        if sp not in row.stoichiometry:
            raise DataFileError(f"{where}: the equation does not contain {sp.name}")
    else:
        value = number("delta_f_H_kJ_per_mol")
        row = Reaction.formation(sp, value, u, id=f"key:{sp.name}", source=source)
    return KeyValue(species=sp, row=row, value_kJ_per_mol=value, u_kJ_per_mol=u,
                    pm_kJ_per_mol=pm, status=status, source=source,
                    note=str(raw.get("note", "")))


def _parse_table(data: Mapping[str, Any], path: str | None, default_status: str) -> KeyValues:
    convention = check_choice("uncertainty_convention",
                              str(data.get("uncertainty_convention", "expanded")),
                              UNCERTAINTY_CONVENTIONS)
    k = float(data.get("coverage_factor", 2.0))
    if not k > 0:
        raise DataFileError("coverage_factor must be > 0", path=path, found=k)
    src = data.get("source", {})
    citation = str(src.get("citation", "")) if isinstance(src, Mapping) else str(src)
    values: dict[Species, KeyValue] = {}
    for i, raw in enumerate(data.get("value", []), start=1):
        where = f"{path or 'key values'}: [[value]] #{i}"
        kv = _entry(raw, where=where, convention=convention, k=k, citation=citation,
                    default_status=default_status)
        if kv.species in values:
            raise DataFileError(f"{where}: {kv.species.name} appears twice")
        values[kv.species] = kv
    return KeyValues(values=values, version=str(data.get("version", "")), citation=citation,
                     uncertainty_convention=convention, coverage_factor=k, path=path)


def _extra_entries(extra: Any) -> list[KeyValue]:
    if isinstance(extra, KeyValues):
        return list(extra)
    if isinstance(extra, (str, Path)):
        return list(_parse_table(load_toml(extra), str(extra), "user"))
    out = []
    if isinstance(extra, Mapping):
        for name, spec in extra.items():
            if isinstance(spec, KeyValue):
                out.append(spec)
                continue
            if isinstance(spec, Mapping):
                raw = {"species": name, **spec}
            else:
                try:
                    value, u = spec
                except (TypeError, ValueError):
                    raise DataFileError(
                        f"extra key value for {name!r} must be (value_kJ_per_mol, "
                        "u_kJ_per_mol) or a mapping", found=spec) from None
                raw = {"species": name, "delta_f_H_kJ_per_mol": value, "u_kJ_per_mol": u}
            out.append(_entry(raw, where=f"extra key value {name!r}", convention="standard",
                              k=1.0, citation="user", default_status="user"))
        return out
    if isinstance(extra, Iterable):
        return [kv if isinstance(kv, KeyValue) else _extra_entries(kv)[0] for kv in extra]
    raise DataFileError("extra key values must be a mapping, a KeyValues or a file path",
                        found=type(extra).__name__)


def load_key_values(path: str | Path | None = None, *, extra: Any = None) -> KeyValues:
    """Load the key-value table.

    Parameters
    ----------
    path
        A user TOML table (same layout as ``calwork/data/key_values.toml``: a ``[source]``
        table, ``uncertainty_convention``, ``coverage_factor`` and ``[[value]]`` entries)
        that *replaces* the bundled one; ``None`` loads the bundled table.
    extra
        Entries that *extend or override* the table: a mapping ``{species: (value, u)}`` or
        ``{species: {"delta_f_H_kJ_per_mol": …, "u_kJ_per_mol": …, "source": …}}`` (u is a
        standard uncertainty), a :class:`KeyValues`, or the path of another table.

    Examples
    --------
    >>> kv = load_key_values()
    >>> kv["CO2(g)"].value_kJ_per_mol, kv["CO2(g)"].u_kJ_per_mol
    (-393.51, 0.065)
    """
    if path is None:
        table = _bundled()
    else:
        table = _parse_table(load_toml(path), str(path), "user")
    if extra is None:
        return table
    values = dict(table.values)
    for kv in _extra_entries(extra):
        values[kv.species] = kv
    return KeyValues(values=values, version=table.version, citation=table.citation,
                     uncertainty_convention=table.uncertainty_convention,
                     coverage_factor=table.coverage_factor, path=table.path,
                     extended_by=(*table.extended_by, "extra"))


@cache
def _bundled() -> KeyValues:
    from calwork.data import data_path

    return _parse_table(load_data("key_values.toml"), str(data_path("key_values.toml")),
                        "memory")

