"""``calwork labbook``: record sheets, list, show, void, recompute, verify, export, back up."""

from __future__ import annotations

import argparse
from pathlib import Path

from calwork.cli._common import print_json
from calwork.core.errors import ExportError
from calwork.report.plain import render_text
from calwork.report.views import (
    audit_document,
    ingest_document,
    labbook_list_document,
    labbook_run_document,
    recompute_document,
    verify_document,
)

__all__ = ["register"]

_DESCRIPTION = """\
The lab book keeps, in one SQLite file, the exact bytes of every run sheet and temperature log
(content-addressed by SHA-256), every reduced result with its provenance (calwork version,
method, constants), and an append-only, hash-chained audit log. Runs are never deleted: a run
is voided with a reason, and later series (QA, recomputed calibrations) leave it out.

The lab book is ./calwork-labbook.sqlite unless --labbook PATH or $CALWORK_LABBOOK names
another file. Changes are recorded under --user, else $CALWORK_USER, else the login name.
Keep it on a local disk (not a network share); copy it while in use with `labbook backup`.
"""


def _common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--labbook", metavar="PATH",
                        help="lab book file (default $CALWORK_LABBOOK, else "
                             "./calwork-labbook.sqlite)")
    parser.add_argument("--user", metavar="NAME",
                        help="name recorded in the audit log (default $CALWORK_USER, else the "
                             "login name)")
    parser.add_argument("--timeout", metavar="S", type=float, default=None,
                        help="seconds to wait while another process writes (default "
                             "$CALWORK_LABBOOK_TIMEOUT, else 30)")


def _filters(parser: argparse.ArgumentParser, *, kind: bool = True) -> None:
    parser.add_argument("--calorimeter", metavar="ID", help="only this calorimeter")
    parser.add_argument("--sample", metavar="S", help="only this sample")
    parser.add_argument("--since", metavar="DATE", help="only runs dated on/after (ISO 8601)")
    parser.add_argument("--until", metavar="DATE", help="only runs dated on/before (ISO 8601)")
    if kind:
        parser.add_argument("--kind", metavar="K", help="only runs of this kind")


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add ``labbook`` and its subcommands."""
    parser = subparsers.add_parser(
        "labbook", help="the lab book: raw files, results and audit trail (SQLite)",
        description=_DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])
    sub = parser.add_subparsers(dest="labbook_command", metavar="SUBCOMMAND")

    p = sub.add_parser("add", help="import, reduce and record a run sheet",
                       description="Import and reduce a run sheet and record its raw bytes "
                       "(sheet and every log) and its results in one transaction. Failed "
                       "runs are recorded with their error. Re-adding an identical sheet "
                       "reports 'already recorded'; run ids are unique in a lab book.")
    p.add_argument("sheet", metavar="SHEET", help="run sheet (.csv, .xlsx or .toml)")
    p.add_argument("--method", default="newton-fit",
                   help="temperature-rise method (default newton-fit)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_add)

    p = sub.add_parser("list", help="list runs, calibrations and samples",
                       description="List runs (with status), current calibrations (with "
                       "their validity) and samples.")
    _filters(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_list)

    p = sub.add_parser("show", help="everything about one run",
                       description="Everything about one run: sheet row, results, "
                       "provenance back to the stored raw bytes (hashes, original paths).")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_show)

    p = sub.add_parser("history", help="audit entries of one run")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_history)

    p = sub.add_parser("void", help="void a run (audited; never deleted)",
                       description="Mark a run void with a reason. The run and its earlier "
                       "results stay on record; its sheet is re-reduced from the stored bytes "
                       "without it, and QA and calibration series leave it out.")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--reason", required=True, metavar="TEXT", help="why (required)")
    _common(p)
    p.set_defaults(func=_void)

    p = sub.add_parser("recompute", help="recompute stored results from the stored bytes",
                       description="Rebuild every stored result from the stored raw bytes "
                       "(sheet and logs written to a temporary folder, reduced again with "
                       "the stored method) and compare every number. Exit 0 if all agree "
                       "within the tolerance, 1 otherwise. The filters select the sheets "
                       "that hold matching runs; every stored version of a sheet's reduction "
                       "is recomputed.")
    _filters(p, kind=False)
    p.add_argument("--tolerance", type=float, default=1e-12, metavar="REL",
                   help="relative tolerance (default 1e-12)")
    p.add_argument("--jobs", type=int, default=1, metavar="N",
                   help="recompute sheets in N worker processes (default 1)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_recompute)

    p = sub.add_parser("verify", help="check the audit chain and every stored file",
                       description="Check the audit hash chain, every stored raw file "
                       "against its SHA-256, the stored results and records against the audit "
                       "record, the schema (views, triggers, indexes) and the insert-only "
                       "triggers. Exit 0 if intact, 1 otherwise. Record the printed head "
                       "(--print-head) somewhere outside the lab book and check against it "
                       "later (--expect-head): a chain rebuilt from scratch cannot contain it.")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--print-head", action="store_true",
                   help="also print the hash of the newest audit entry")
    p.add_argument("--expect-head", metavar="HASH",
                   help="fail unless the audit chain contains this recorded head")
    _common(p)
    p.set_defaults(func=_verify)

    p = sub.add_parser("export-raw", help="write a run's raw sheet and log bytes out",
                       description="Write the run's sheet and log, byte-identical, into DIR "
                       "(original relative layout; existing different files are not "
                       "replaced).")
    p.add_argument("run", metavar="RUN")
    p.add_argument("dir", metavar="DIR")
    _common(p)
    p.set_defaults(func=_export_raw)

    p = sub.add_parser("export", help="export results to a workbook",
                       description="Write an .xlsx workbook of the selected active runs, "
                       "calibrations and samples, rebuilt from the lab book.")
    p.add_argument("--xlsx", required=True, metavar="FILE", help="workbook to write")
    _filters(p)
    _common(p)
    p.set_defaults(func=_export)

    p = sub.add_parser("backup", help="consistent copy while in use (SQLite online backup)",
                       description="Copy the lab book to DEST with SQLite's online backup "
                       "API: a consistent snapshot even while other processes write (a plain "
                       "file copy of a lab book in use can miss committed changes). DEST must "
                       "not exist; the copy is verified before it is put in place.")
    p.add_argument("dest", metavar="DEST")
    _common(p)
    p.set_defaults(func=_backup)


def _open(args: argparse.Namespace, *, create: bool = False):
    from calwork.labbook import open_labbook

    return open_labbook(args.labbook, create=create, user=args.user, timeout_s=args.timeout)


def _make_filters(args: argparse.Namespace):
    from calwork.labbook import Filters

    return Filters(calorimeter=getattr(args, "calorimeter", None),
                   sample=getattr(args, "sample", None), kind=getattr(args, "kind", None),
                   since=getattr(args, "since", None), until=getattr(args, "until", None))


def _add(args: argparse.Namespace) -> int:
    with _open(args, create=True) as book:
        result = book.add_sheet(args.sheet, method=args.method)
    if args.json:
        print_json(result)
    else:
        print(render_text(ingest_document(result)), end="")
    return 0


def _list(args: argparse.Namespace) -> int:
    filters = _make_filters(args)
    with _open(args) as book:
        runs = book.runs(filters)
        cals = book.calibrations(filters)
        samples = book.samples(filters)
    if args.json:
        print_json({"labbook": str(book.path), "filters": filters.to_dict(), "runs": runs,
                    "calibrations": cals, "samples": samples})
        return 0
    print(render_text(labbook_list_document(runs, cals, samples)), end="")
    return 0


def _show(args: argparse.Namespace) -> int:
    with _open(args) as book:
        info = book.show(args.run)
    if args.json:
        print_json(info)
        return 0
    print(render_text(labbook_run_document(info)), end="")
    return 0


def _history(args: argparse.Namespace) -> int:
    with _open(args) as book:
        entries = book.history(args.run)
    if args.json:
        print_json({"run": args.run, "entries": [e.to_dict() for e in entries]})
    else:
        print(render_text(audit_document(args.run, entries)), end="")
    return 0


def _void(args: argparse.Namespace) -> int:
    with _open(args) as book:
        entry = book.void(args.run, reason=args.reason)
    print(f"run {args.run} is void (audit entry #{entry.id}); its sheet was re-reduced "
          "without it")
    return 0


def _recompute(args: argparse.Namespace) -> int:
    with _open(args) as book:
        report = book.recompute(_make_filters(args), tolerance=args.tolerance,
                                jobs=args.jobs)
    if args.json:
        print_json(report)
    else:
        print(render_text(recompute_document(report)), end="")
    return 0 if report.agree else 1


def _verify(args: argparse.Namespace) -> int:
    with _open(args) as book:
        report = book.verify(expect_head=args.expect_head)
    if args.json:
        print_json(report)
    else:
        print(render_text(verify_document(report, print_head=args.print_head)), end="")
    return 0 if report.ok else 1


def _export_raw(args: argparse.Namespace) -> int:
    with _open(args) as book:
        written = book.export_raw(args.run, args.dir)
    print("\n".join(str(p) for p in written))
    return 0


def _export(args: argparse.Namespace) -> int:
    try:
        from calwork.report import write_workbook
    except ImportError as exc:
        raise ExportError("the workbook writer (calwork.report.write_workbook) is not "
                          f"available in this installation ({exc})") from None
    with _open(args) as book:
        reduction = book.reduction(_make_filters(args))
    if not reduction.runs:
        raise ExportError("no active runs match the filters; nothing to export")
    write_workbook(reduction, Path(args.xlsx))
    print(f"wrote {args.xlsx}: {len(reduction.runs)} runs, {len(reduction.calibrations)} "
          f"calibrations, {len(reduction.samples)} samples")
    return 0


def _backup(args: argparse.Namespace) -> int:
    with _open(args) as book:
        dest = book.backup(args.dest)
        size = dest.stat().st_size
    print(f"backed up {book.path} to {dest} ({size} bytes; verified)")
    return 0
