"""The workbench's Hess page: solve a network typed or pasted as text and derive targets."""

from __future__ import annotations

from typing import Any

from calwork.core.errors import NetworkError

__all__ = ["MAX_ROWS", "solve_text"]

#: Most rows a network typed into the page may have (larger networks: ``calwork network``).
MAX_ROWS = 5000


def solve_text(rows: str, targets: list[str], *, name: str = "network.csv"
               ) -> dict[str, Any]:
    """Solve the network in ``rows`` (the CSV form of ``calwork network``, or TOML when
    ``name`` ends in ``.toml``) and derive each target reaction.

    Returns the network result's JSON with ``targets``: for each target its ΔrH, u and the
    derivation (factors, contributions, what cancels, single routes), and ``document``, the
    same content as a report document (rendered by the page with calwork's HTML renderer).
    """
    from calwork.hess.files import read_network_text
    from calwork.hess.network import solve_network
    from calwork.hess.reactions import Reaction
    from calwork.report.views import network_document

    if not rows.strip():
        raise NetworkError("no reactions given", expected="rows in the network CSV form")
    if rows.count("\n") > MAX_ROWS:
        raise NetworkError(f"more than {MAX_ROWS} rows: use `calwork network FILE`",
                           found=rows.count("\n"))
    network = read_network_text(rows, name)
    reactions = [Reaction.from_equation(t, id=f"target {i}") for i, t in
                 enumerate((t for t in targets if t.strip()), 1)]
    include = [sp for r in reactions for sp in r.species]
    result = solve_network(network, include_species=include)
    out = result.to_dict()
    out["targets"] = []
    docs = []
    for reaction in reactions:
        derivation = result.derivation(reaction)
        derived = result.reaction_enthalpy(reaction)
        found = derivation.to_dict()
        out["targets"].append({
            "target": derived.equation,
            "delta_r_H_kJ_per_mol": derived.delta_r_H_kJ_per_mol,
            "u_delta_r_H_kJ_per_mol": derived.u_delta_r_H_kJ_per_mol,
            "derivation": found["derivation"], "cancelled": found["cancelled"],
            "over_determined": found["over_determined"], "routes": found["routes"]})
        docs.append((derived, derivation))
    first = docs[0] if docs else (None, None)
    out["document"] = network_document(result, source=name, n_rows=len(network.rows),
                                       target=first[0], derivation=first[1])
    out["more_documents"] = [network_document(result, source=name,
                                              n_rows=len(network.rows), target=t,
                                              derivation=d) for t, d in docs[1:]]
    return out
