"""``calwork network FILE``: solve a thermochemical network (Hess back-solver)."""

from __future__ import annotations

import argparse

from calwork.cli._choices import WORST_OFFENDER_MODES
from calwork.cli._common import print_json, with_safety_note, write_document_outputs
from calwork.core.errors import NetworkError
from calwork.report.plain import render_text
from calwork.report.views import network_document

__all__ = ["register"]

_HELP = """\
Solve a network of reaction enthalpies for standard enthalpies of formation (298.15 K) by
weighted least squares, with consistency checks (χ², Birge ratio, normalised and
standardised residuals, worst offenders) and the species the data do not determine.

FILE is CSV (columns id, equation, delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol, optional
temperature_K, source; a row with a single species is a known ΔfH°) or TOML
([[determination]], [[species]], [[heat_capacity]], [[correlation]] tables).
Uncertainties in the file are standard uncertainties (k = 1). CODATA key values for the
species present are added unless --no-key-values; a row for the same species replaces them.
The CSV is comma-separated with a decimal point; commas inside a state need no quotes
(HCl(aq,1:50)), but any other cell holding a comma must be quoted ("Smith, 1990").

Equations: species joined by "+", one "=" (or "→"), coefficients as numbers or fractions
("1/2 O2(g)", "0.5 O2(g)"). Every species carries its state in parentheses: g, l, cr, s, am,
aq, sln, with an optional qualifier (C(cr,graphite), HCl(aq,1:50), KCl(aq,inf)). Charges:
Na+(aq), Cl-(aq), SO4^2-(aq), Fe^3+(aq) or SO4-2(aq); digits straight before a sign belong
to the formula, so write Cu^2+(aq), not Cu2+(aq) (that is Cu₂ with charge +1). Hydrates:
CuSO4·5H2O(cr), CuSO4*5H2O(cr) or CuSO4.5H2O(cr). Equations must balance in elements and
charge.

TOML tables: [[determination]] id, equation, delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol
(temperature_K, source optional); [[species]] name, delta_f_H_kJ_per_mol,
u_delta_f_H_kJ_per_mol; [[heat_capacity]] species, model (shomate, nasa7, constant) and its
coefficients; [[correlation]] a, b, correlation (or covariance_kJ2_per_mol2).

"""


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("network", help="solve a thermochemical network (Hess)",
                              description=with_safety_note(_HELP),
                              formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("file", metavar="FILE", help="network file (.csv or .toml)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--xlsx", metavar="FILE",
                   help="also write the solved network, residuals and the target's derivation "
                        "(live formulas) as a workbook")
    p.add_argument("--report", metavar="FILE",
                   help="also write the same as a report (.html or .pdf)")
    p.add_argument("--target", metavar="EQUATION",
                   help='reaction whose ΔrH to derive, e.g. "C(cr,graphite) + O2(g) = CO2(g)"')
    p.add_argument("--monte-carlo", type=int, metavar="N", default=None,
                   help="check the linear propagation with N Monte Carlo draws (JCGM 101)")
    p.add_argument("--seed", type=int, default=1, help="seed of the Monte Carlo draws")
    p.add_argument("--no-key-values", action="store_true",
                   help="do not add the bundled CODATA key values")
    p.add_argument("--coverage-factor", type=float, default=2.0, metavar="K",
                   help="coverage factor of the expanded uncertainties (default 2)")
    p.add_argument("--worst-offender", choices=WORST_OFFENDER_MODES, default="report",
                   help="report the worst offenders (default), also inflate their "
                        "uncertainties until consistent, or skip")
    p.add_argument("--threshold", type=float, default=2.0,
                   help="|standardised residual| regarded as consistent (default 2)")
    p.add_argument("--uncertainty-of", action="append", metavar="SPECIES", default=None,
                   help="species whose uncertainty (and covariance) to compute; repeatable "
                        "(large networks compute only these)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from calwork.hess.files import read_network_file
    from calwork.hess.network import solve_network
    from calwork.hess.reactions import Reaction

    if args.monte_carlo is not None and args.monte_carlo < 100:
        raise NetworkError("--monte-carlo needs at least 100 draws", found=args.monte_carlo)
    network = read_network_file(args.file)
    target = Reaction.from_equation(args.target, id="target") if args.target else None
    result = solve_network(
        network, key_values=not args.no_key_values, worst_offender=args.worst_offender,
        threshold=args.threshold, monte_carlo=args.monte_carlo, seed=args.seed,
        coverage_factor=args.coverage_factor,
        include_species=target.species if target is not None else (),
        covariance_species=args.uncertainty_of,
    )
    derivation = None
    if target is not None:
        derivation = result.derivation(target)
        target = result.reaction_enthalpy(target)
    doc = network_document(result, source=str(args.file), n_rows=len(network.rows),
                           target=target, derivation=derivation)
    write_document_outputs(doc, args)
    if args.json:
        out = result.to_dict()
        out["file"] = str(args.file)
        if target is not None:
            out["target"] = target.equation
            out["delta_r_H_kJ_per_mol"] = target.delta_r_H_kJ_per_mol
            out["u_delta_r_H_kJ_per_mol"] = target.u_delta_r_H_kJ_per_mol
            out["U_delta_r_H_kJ_per_mol"] = target.U_delta_r_H_kJ_per_mol
            found = derivation.to_dict()
            out["derivation"] = found["derivation"]
            out["cancelled"] = found["cancelled"]
            out["over_determined"] = found["over_determined"]
            out["routes"] = found["routes"]
        print_json(out)
        return 0
    print(render_text(doc), end="")
    return 0

