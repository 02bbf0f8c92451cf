"""``calwork labbook``: record sheets, list, show, void, recompute, verify, export, back up."""

from __future__ import annotations

import argparse
from pathlib import Path

from calwork.cli._common import print_json
from calwork.core.errors import ExportError, LabbookError
from calwork.labbook.lifecycle import SETTINGS, STATES
from calwork.report.plain import render_text
from calwork.report.views import (
    amend_document,
    ingest_document,
    labbook_list_document,
    labbook_run_document,
    recompute_document,
    run_versions_document,
    verify_document,
)

__all__ = ["register"]

_DESCRIPTION = """\
The lab book keeps, in one SQLite file, the exact bytes of every run sheet and temperature log
(content-addressed by SHA-256), every reduced result with its provenance (calwork version,
method, constants), and an append-only, hash-chained audit log. Runs are never deleted: a run
is voided with a reason, and later series (QA, recomputed calibrations) leave it out.

A recorded run is never edited in place either: `amend` records a new version with corrected
sheet cells (a mistyped mass, a period boundary, the run's rise method) and a reason, and
re-reduces its sheet; `approve` records a second person's review of the current version;
`void` and `restore` take a run out of the series and bring it back. Each is audited.

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


def _filters(parser: argparse.ArgumentParser, *, kind: bool = True,
             state: bool = False) -> None:
    parser.add_argument("--calorimeter", metavar="ID", help="only this calorimeter")
    parser.add_argument("--sample", metavar="S", help="only this sample")
    if state:
        parser.add_argument("--state", metavar="STATE", choices=STATES,
                            help=f"only runs in this state ({', '.join(STATES)})")
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
                       "reports 'already recorded'; run ids are unique in a lab book. A "
                       "corrected sheet of runs already recorded is taken with --amend "
                       "--reason: each changed row becomes an amendment of its run.")
    p.add_argument("sheet", metavar="SHEET", help="run sheet (.csv, .xlsx or .toml)")
    p.add_argument("--amend", action="store_true",
                   help="the sheet corrects recorded runs: record each changed row as an "
                        "amendment (needs --reason)")
    p.add_argument("--reason", metavar="TEXT", help="why (with --amend)")
    p.add_argument("--method", default="newton-fit",
                   help="temperature-rise method (default newton-fit)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_add)

    p = sub.add_parser("list", help="list runs, calibrations and samples",
                       description="List runs (with state and version), current "
                       "calibrations (with their validity) and samples.")
    _filters(p, state=True)
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

    p = sub.add_parser("history", help="versions of one run, what changed, and its audit "
                       "entries")
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

    p = sub.add_parser("restore", help="bring a void run back (audited)",
                       description="Undo a void with a reason: the sheet is re-reduced with "
                       "the run back in it; the run returns as 'recorded' (an approval it had "
                       "before the void does not return).")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--reason", required=True, metavar="TEXT", help="why (required)")
    _common(p)
    p.set_defaults(func=_restore)

    p = sub.add_parser("amend", help="record a corrected version of a run (audited)",
                       description="Record a new version of a run with run-sheet cells "
                       "overridden (each --set COLUMN=VALUE is read and checked as the sheet "
                       "column is; an empty VALUE clears the cell), e.g. a mistyped mass, "
                       "the period boundaries fire_time_s / main_end_s / fore_start_s / "
                       "after_end_s in the log's own time notation, or rise_method. The "
                       "sheet is re-reduced from the stored bytes with every amendment in "
                       "force, so the calibration series and the samples of the sheet "
                       "follow; earlier versions stay on record. An approved run returns to "
                       "'recorded'.")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--set", dest="cells", action="append", required=True,
                   metavar="COLUMN=VALUE", help="a corrected cell (repeat for several)")
    p.add_argument("--reason", required=True, metavar="TEXT", help="why (required)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_amend)

    p = sub.add_parser("approve", help="approve the current version of a run (audited)",
                       description="Record that the current version of a run was reviewed "
                       "and its result is fit to report (who, when, an optional note, and the "
                       "SHA-256 of the result approved). Refused for a void or failed run, "
                       "for another --version than the current one, and — with the setting "
                       "four_eyes on — for the person who recorded or amended that version. "
                       "If the result later changes (its sheet re-reduced after another "
                       "run's amendment) the approval lapses.")
    p.add_argument("run", metavar="RUN")
    p.add_argument("--note", default="", metavar="TEXT", help="review note")
    p.add_argument("--version", type=int, metavar="N",
                   help="the version reviewed (refused if the run has changed since)")
    _common(p)
    p.set_defaults(func=_approve)

    p = sub.add_parser("setting", help="show or change a lab-book setting (audited)",
                       description="Lab-book settings: four_eyes (on/off, default off): "
                       "when on, nobody approves a version they recorded or amended "
                       "themselves (common practice in accredited testing laboratories).")
    p.add_argument("key", metavar="KEY", choices=sorted(SETTINGS))
    p.add_argument("value", metavar="VALUE", nargs="?", help="new value (omit to show)")
    p.add_argument("--reason", default="", metavar="TEXT", help="why")
    _common(p)
    p.set_defaults(func=_setting)

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

    p = sub.add_parser("export", help="export results to a workbook or a report",
                       description="Write an .xlsx workbook and/or an HTML or PDF report of "
                       "the selected active runs, calibrations and samples, rebuilt from the "
                       "lab book, with each run's state, version, approver and the origin of "
                       "its period boundaries.")
    p.add_argument("--xlsx", metavar="FILE", help="workbook to write")
    p.add_argument("--report", metavar="FILE", help="report to write (.html or .pdf)")
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
                   since=getattr(args, "since", None), until=getattr(args, "until", None),
                   state=getattr(args, "state", None))


def _add(args: argparse.Namespace) -> int:
    if args.amend:
        if not (args.reason or "").strip():
            raise LabbookError("--amend needs --reason TEXT (why the sheet was corrected)",
                               path=args.sheet)
        with _open(args) as book:
            results = book.amend_from_sheet(args.sheet, reason=args.reason)
        if args.json:
            print_json({"amended": [r.to_dict() for r in results]})
        else:
            print(render_text(amend_document(results)), end="")
        return 0
    if args.reason:
        raise LabbookError("--reason is for --amend (a sheet is recorded without one)")
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
        versions = book.versions(args.run)
    if args.json:
        print_json({"run": args.run, "versions": versions,
                    "entries": [e.to_dict() for e in entries]})
    else:
        print(render_text(run_versions_document(args.run, versions, entries)), end="")
    return 0


def _restore(args: argparse.Namespace) -> int:
    with _open(args) as book:
        entry = book.restore(args.run, reason=args.reason)
    print(f"run {args.run} is restored (audit entry #{entry.id}); its sheet was re-reduced "
          "with it")
    return 0


def _cells(items: list[str]) -> dict[str, str]:
    out: dict[str, str] = {}
    for item in items:
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            raise LabbookError("--set takes COLUMN=VALUE", path="--set", found=item,
                               expected="e.g. --set mass_g=0.9982 or --set fire_time_s=5:12")
        if key.strip() in out:
            raise LabbookError("--set names a column twice", path="--set", column=key.strip(),
                               found=item)
        out[key.strip()] = value.strip()
    return out


def _amend(args: argparse.Namespace) -> int:
    cells = _cells(args.cells)
    with _open(args) as book:
        result = book.amend(args.run, cells, reason=args.reason)
    if args.json:
        print_json(result)
    else:
        print(render_text(amend_document([result])), end="")
    return 0


def _approve(args: argparse.Namespace) -> int:
    with _open(args) as book:
        entry = book.approve(args.run, note=args.note, expect_version=args.version)
    print(f"run {args.run} version {entry.details['version']} approved by {entry.user} "
          f"(audit entry #{entry.id})")
    return 0


def _setting(args: argparse.Namespace) -> int:
    with _open(args) as book:
        if args.value is None:
            print(f"{args.key} = {book.setting(args.key)}")
            return 0
        entry = book.set_setting(args.key, args.value, reason=args.reason)
    print(f"{args.key} = {entry.details['value']} (audit entry #{entry.id})")
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
        from calwork.report import write_report, write_workbook
    except ImportError as exc:
        raise ExportError("the workbook writer (calwork.report.write_workbook) is not "
                          f"available in this installation ({exc})") from None

    if not (args.xlsx or args.report):
        raise ExportError("nothing to write: give --xlsx FILE and/or --report FILE")
    with _open(args) as book:
        reduction = book.reduction(_make_filters(args))
    if not reduction.runs:
        raise ExportError("no active runs match the filters; nothing to export")
    counts = (f"{len(reduction.runs)} runs, {len(reduction.calibrations)} calibrations, "
              f"{len(reduction.samples)} samples")
    for target, write in ((args.xlsx, write_workbook), (args.report, write_report)):
        if target:
            write(reduction, Path(target))
            print(f"wrote {target}: {counts}")
    return 0


def _backup(args: argparse.Namespace) -> int:
    with _open(args) as book:
        dest = book.backup(args.dest)
        size = dest.stat().st_size
    print(f"backed up {book.path} to {dest} ({size} bytes; verified)")
    return 0
