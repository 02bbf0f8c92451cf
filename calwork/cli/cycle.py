"""``calwork cycle FILE``: a thermochemical cycle of enthalpies of solution."""

from __future__ import annotations

import argparse

from calwork.cli._common import print_json, with_safety_note, write_document_outputs
from calwork.report.plain import render_text
from calwork.report.views import cycle_document

__all__ = ["register", "run"]

_HELP = """\
Combine enthalpies of solution (and other reaction enthalpies) with the bundled CODATA key
values into a thermochemical cycle and give the standard enthalpy of formation of the target
(e.g. a hydrate from its anhydrous salt and water) with its uncertainty.

FILE is a cycle file (TOML): a [cycle] table (name, target, target_reaction, key_values,
omit_key_values), [[dissolution]] entries (solute, final_state or dilution_ratio or
infinite_dilution, delta_sol_H_kJ_per_mol, u_delta_sol_H_kJ_per_mol), optional [[reaction]]
(id, equation, delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol), [[species]] (a known ΔfH° not
bundled: name, delta_f_H_kJ_per_mol, u_delta_f_H_kJ_per_mol) and [[correlation]] (a, b,
correlation) tables. Species are written as for `calwork network` (see its --help): state
in parentheses, charges as Cu^2+(aq), hydrates as CuSO4·5H2O(cr). If the target is "not
determined", the cycle lacks a known ΔfH° (add a [[species]] entry, e.g. the anhydrous
salt). Uncertainties are standard uncertainties (k = 1). --export-network writes the
cycle as a network CSV that `calwork network` reads.

"""


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("cycle", help="thermochemical cycle from enthalpies of solution",
                              description=with_safety_note(_HELP),
                              formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("file", metavar="FILE", help="cycle file (.toml)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--xlsx", metavar="FILE",
                   help="also write the cycle, the solved network and the derivation of the "
                        "target (live formulas) as a workbook")
    p.add_argument("--report", metavar="FILE",
                   help="also write the same as a report (.html or .pdf)")
    p.add_argument("--coverage-factor", type=float, default=2.0, metavar="K",
                   help="coverage factor of the expanded uncertainty (default 2)")
    p.add_argument("--export-network", metavar="CSV",
                   help="also write the cycle's determinations and priors as a network CSV")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from calwork.solution.cycles import cycle_network, solve_cycle, write_network_csv

    result = solve_cycle(args.file, coverage_factor=args.coverage_factor)
    if args.export_network:
        network, _ = cycle_network(args.file)
        write_network_csv([*network.determinations, *network.priors], args.export_network)
    derivation = None
    if result.target_reaction is not None:
        derivation = result.network.derivation(result.target_reaction.equation)
    elif result.target is not None and result.delta_f_H_kJ_per_mol is not None:
        from calwork.hess.reactions import Reaction

        # ΔfH° of the target: its formation from the elements ('0 = X' in a network)
        derivation = result.network.derivation(Reaction.formation(result.target))
    doc = cycle_document(result, derivation)
    write_document_outputs(doc, args)
    if args.json:
        print_json(result)
        return 0
    print(render_text(doc), end="")
    return 0
