"""Network files: CSV (one determination a row) and TOML (determinations, priors, C_p).

CSV columns: ``id, equation, delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol`` and optional
``temperature_K``, ``source``, ``note``, ``anchor`` (``yes``/``no``: an anchored row is
never removed or widened by the worst-offender procedure, like a key value). A row whose
equation is a single species (no ``=``) gives a known Δ_fH° of that species (it replaces
the bundled key value). Equations may be quoted; an unquoted equation whose states
contain commas (``C(cr,graphite)``) is joined back together (its brackets must balance).
Lines starting with ``#`` are comments.

TOML::

    [[determination]]
    id = "r1"
    equation = "C(cr,graphite) + 1/2 O2(g) = CO(g)"
    delta_r_H_kJ_per_mol = -110.53
    u_delta_r_H_kJ_per_mol = 0.085
    temperature_K = 298.15            # optional
    source = "..."                    # optional
    anchor = false                    # optional: never removed or widened

    [[species]]                       # a known Δ_fH° (prior)
    name = "CO2(g)"
    delta_f_H_kJ_per_mol = -393.51
    u_delta_f_H_kJ_per_mol = 0.065

    [[heat_capacity]]                 # per species; several entries make a piecewise model
    species = "N2(g)"
    model = "shomate"                 # or "nasa7" (coefficients = [a1..a7]) or "constant"
    A = 28.98641                      # ... B, C, D, E; T_min_K, T_max_K

    [[correlation]]                   # between two determinations
    a = "r1"
    b = "r2"
    correlation = 0.5                 # or covariance_kJ2_per_mol2 = ...

Errors name the file, the line and the column (field).
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from calwork.core.constants import T_REF_K
from calwork.core.errors import CalworkError, InputFileError, NetworkError, ValueCellError
from calwork.data import parse_toml_text
from calwork.hess.kirchhoff import Piecewise, cp_model_from_dict
from calwork.hess.network import Network
from calwork.hess.reactions import Reaction
from calwork.hess.species import parse_species

__all__ = ["NETWORK_COLUMNS", "OPTIONAL_COLUMNS", "read_network_file", "read_network_text"]

NETWORK_COLUMNS = ("id", "equation", "delta_r_H_kJ_per_mol", "u_delta_r_H_kJ_per_mol")
OPTIONAL_COLUMNS = ("temperature_K", "source", "note", "notes", "anchor")
_YES = ("yes", "true", "1", "y")
_NO = ("no", "false", "0", "n", "")


def _number(value: Any, *, path: Path, line: int | None, column: str, positive: bool = False,
            optional: bool = False) -> float | None:
    if value is None or (isinstance(value, str) and not value.strip()):
        if optional:
            return None
        raise ValueCellError("a number is required", path=path, line=line, column=column,
                             found=value, expected="a number")
    try:
        number = float(str(value).strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        raise ValueCellError("not a number", path=path, line=line, column=column,
                             found=value, expected="a number such as -110.53") from None
    if not math.isfinite(number):
        raise ValueCellError("not a finite number", path=path, line=line, column=column,
                             found=value, expected="a finite number")
    if positive and number <= 0:
        raise ValueCellError("must be > 0", path=path, line=line, column=column,
                             found=value, expected="a standard uncertainty > 0")
    return number


def _anchor(fields: Mapping[str, Any], *, path: Path, line: int | None) -> bool:
    value = fields.get("anchor")
    if isinstance(value, bool):
        return value
    text = "" if value is None else str(value).strip().lower()
    if text in _YES:
        return True
    if text in _NO:
        return False
    raise ValueCellError("anchor must be yes or no", path=path, line=line, column="anchor",
                         found=value, expected="yes, no, true, false, 1, 0 or blank")


def _row(fields: Mapping[str, Any], *, path: Path, line: int | None, default_id: str
         ) -> Reaction:
    rid = str(fields.get("id") or "").strip() or default_id
    equation = str(fields.get("equation") or "").strip()
    if not equation:
        raise NetworkError("equation is empty", path=path, line=line, column="equation",
                           expected="a reaction 'A + B = C' or a single species")
    value = _number(fields.get("delta_r_H_kJ_per_mol"), path=path, line=line,
                    column="delta_r_H_kJ_per_mol")
    u = _number(fields.get("u_delta_r_H_kJ_per_mol"), path=path, line=line,
                column="u_delta_r_H_kJ_per_mol", positive=True)
    temperature = _number(fields.get("temperature_K"), path=path, line=line,
                          column="temperature_K", positive=True, optional=True)
    source = str(fields.get("source") or "").strip()
    try:
        if any(tok in equation for tok in ("=", "->", "→")):
            return Reaction.from_equation(equation, value, u, id=rid, source=source,
                                          temperature_K=temperature or T_REF_K)
        reaction = Reaction.formation(parse_species(equation), value, u, id=rid,
                                      source=source)
        if temperature is not None and abs(temperature - T_REF_K) > 0.005:
            raise NetworkError("a known Δ_fH° must refer to 298.15 K", found=temperature)
        return reaction
    except CalworkError as exc:
        raise exc.with_context(path=path, line=line, column="equation") from None


def _read_csv(path: Path, text: str) -> Network:
    lines = text.splitlines()
    content = [(i, ln) for i, ln in enumerate(lines, start=1)
               if ln.strip() and not ln.lstrip().startswith("#")]
    if not content:
        raise NetworkError("network file has no header row", path=path,
                           expected=f"columns {list(NETWORK_COLUMNS)}")
    header_line = content[0][0]
    reader = csv.reader([ln for _, ln in content])
    header = [h.strip() for h in next(reader)]
    missing = [c for c in NETWORK_COLUMNS if c not in header]
    if missing:
        raise NetworkError(f"missing column(s) {missing}", path=path, line=header_line,
                           found=header, expected=f"columns {list(NETWORK_COLUMNS)}")
    unknown = [h for h in header if h not in NETWORK_COLUMNS + OPTIONAL_COLUMNS]
    if unknown:
        raise NetworkError(f"unknown column(s) {unknown}", path=path, line=header_line,
                           expected=f"{list(NETWORK_COLUMNS + OPTIONAL_COLUMNS)}")
    rows = []
    anchors: set[str] = set()
    for (line_no, _), cells in zip(content[1:], reader, strict=True):
        if len(cells) > len(header):
            # an unquoted equation splits at the commas of its states ("C(cr,graphite)");
            # join the extra cells back into the equation column
            extra = len(cells) - len(header)
            k = header.index("equation")
            parts = cells[k:k + extra + 1]
            joined = ",".join(parts)
            depth, inside = 0, True
            for part in parts[:-1]:
                depth += part.count("(") - part.count(")")
                inside &= depth > 0
            if not inside or joined.count("(") != joined.count(")"):
                raise NetworkError(f"row has {len(cells)} cells for {len(header)} columns",
                                   path=path, line=line_no,
                                   expected="quote cells that contain commas (equations, sources)")
            cells = [*cells[:k], joined, *cells[k + extra + 1:]]
        fields = dict(zip(header, (c.strip() for c in cells), strict=False))
        rows.append(_row(fields, path=path, line=line_no, default_id=f"line{line_no}"))
        if _anchor(fields, path=path, line=line_no):
            anchors.add(rows[-1].id)
    if not rows:
        raise NetworkError("network file has no rows", path=path)
    determinations = [r for r in rows if not r.is_single_species]
    priors = [r for r in rows if r.is_single_species]
    return _network(determinations, priors, {}, {}, path, anchors)


def _network(determinations, priors, covariance, heat, path: Path,
             anchors: set[str]) -> Network:
    try:
        return Network(determinations=tuple(determinations), priors=tuple(priors),
                       covariance=covariance, heat_capacities=heat, name=path.stem,
                       source_path=str(path), anchors=frozenset(anchors))
    except CalworkError as exc:
        raise exc.with_context(path=path) from None


def _header_lines(text: str, table: str) -> list[int]:
    pattern = re.compile(rf"^\s*\[\[\s*{re.escape(table)}\s*\]\]")
    return [i for i, ln in enumerate(text.splitlines(), start=1) if pattern.match(ln)]


def _read_toml(path: Path, text: str) -> Network:
    data = parse_toml_text(text, path=path, error=NetworkError)
    known = {"determination", "species", "heat_capacity", "correlation", "name", "source"}
    unknown = sorted(set(data) - known)
    if unknown:
        raise NetworkError(f"unknown table(s) {unknown}", path=path,
                           expected=f"{sorted(known)}")
    det_lines = _header_lines(text, "determination")
    determinations = []
    anchors: set[str] = set()
    for i, raw in enumerate(data.get("determination", [])):
        line = det_lines[i] if i < len(det_lines) else None
        r = _row(raw, path=path, line=line, default_id=f"determination{i + 1}")
        determinations.append(r)
        if _anchor(raw, path=path, line=line):
            anchors.add(r.id)
    sp_lines = _header_lines(text, "species")
    priors = []
    for i, raw in enumerate(data.get("species", [])):
        line = sp_lines[i] if i < len(sp_lines) else None
        fields = {"id": raw.get("id") or raw.get("name"), "equation": raw.get("name"),
                  "delta_r_H_kJ_per_mol": raw.get("delta_f_H_kJ_per_mol"),
                  "u_delta_r_H_kJ_per_mol": raw.get("u_delta_f_H_kJ_per_mol"),
                  "source": raw.get("source"), "anchor": raw.get("anchor")}
        if "=" in str(raw.get("name", "")):
            raise NetworkError("a [[species]] entry names one species", path=path, line=line,
                               column="name", found=raw.get("name"))
        priors.append(_row(fields, path=path, line=line, default_id=f"species{i + 1}"))
        if _anchor(fields, path=path, line=line):
            anchors.add(priors[-1].id)
    # single-species determinations are priors too
    priors += [r for r in determinations if r.is_single_species]
    determinations = [r for r in determinations if not r.is_single_species]
    cp_lines = _header_lines(text, "heat_capacity")
    pieces: dict[Any, list] = {}
    for i, raw in enumerate(data.get("heat_capacity", [])):
        line = cp_lines[i] if i < len(cp_lines) else None
        try:
            sp = parse_species(str(raw.get("species", "")))
            pieces.setdefault(sp, []).append(cp_model_from_dict(raw, name=sp.name))
        except CalworkError as exc:
            raise exc.with_context(path=path, line=line, column="heat_capacity") from None
    heat = {sp: (ms[0] if len(ms) == 1 else Piecewise(pieces=tuple(ms), name=sp.name))
            for sp, ms in pieces.items()}
    by_id = {r.id: r for r in determinations + priors}
    cor_lines = _header_lines(text, "correlation")
    covariance = {}
    for i, raw in enumerate(data.get("correlation", [])):
        line = cor_lines[i] if i < len(cor_lines) else None
        a, b = str(raw.get("a", "")), str(raw.get("b", ""))
        for key in (a, b):
            if key not in by_id:
                raise NetworkError("correlation names an unknown row id", path=path,
                                   line=line, column="a" if key == a else "b", found=key)
        if "covariance_kJ2_per_mol2" in raw:
            cov = _number(raw["covariance_kJ2_per_mol2"], path=path, line=line,
                          column="covariance_kJ2_per_mol2")
        else:
            rho = _number(raw.get("correlation"), path=path, line=line, column="correlation")
            if not -1 <= rho <= 1:
                raise ValueCellError("correlation must lie in [-1, 1]", path=path, line=line,
                                     column="correlation", found=rho)
            cov = rho * by_id[a].u_delta_r_H_kJ_per_mol * by_id[b].u_delta_r_H_kJ_per_mol
        covariance[(a, b)] = cov
    return _network(determinations, priors, covariance, heat, path, anchors)


def read_network_file(path: str | Path) -> Network:
    """Read a network from a CSV or TOML file (see the module docstring).

    Raises
    ------
    InputFileError
        The file is missing or not UTF-8 text.
    NetworkError, EquationError, BalanceError, ValueCellError
        With the file, the line and the column of the problem.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputFileError("network file not found", path=path) from None
    except UnicodeDecodeError:
        raise InputFileError("network file is not UTF-8 text", path=path) from None
    except OSError as exc:
        raise InputFileError(f"cannot read network file ({exc.strerror})", path=path) from None
    return read_network_text(text, path)


def read_network_text(text: str, name: str | Path = "network.csv") -> Network:
    """Read a network from text in the CSV or TOML form (by the suffix of ``name``, which
    error messages name as the file), e.g. typed into the workbench's Hess page.

    Raises
    ------
    NetworkError, EquationError, BalanceError, ValueCellError
        With the name, the line and the column of the problem.
    """
    path = Path(name)
    if path.suffix.lower() == ".toml":
        return _read_toml(path, text)
    return _read_csv(path, text)
