"""Log commands: create the log, import files, log and correct inspection results."""

from __future__ import annotations

import datetime as dt
import pathlib

import click

from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option, open_store, who
from tracker.cli.output import emit, progress_bar, show_progress, table
from tracker.log.ingest import DEFECTS, KINDS, METHODS, RESULTS, XRAY_CATEGORIES

MAX_RECORD_ID = 2**63 - 1  # SQLite's largest integer


@command()
@click.option("--currency", default=None, metavar="CODE",
              help="Three-letter code of the currency the log's costs are in, e.g. EUR (default EUR; "
                   "change it later with `pourback settings --currency`).")
@click.option("--units", "system", type=click.Choice(["metric", "us"], case_sensitive=False), default=None,
              help="Unit system numbers are typed and shown in: metric (mm, cm³, kg, °C; the default) or "
                   "us (in, in³, lb, °F). The log itself always stores metric.")
@click.option("--plant", default=None, metavar="CODE",
              help="The plant that patterns imported without a plant column belong to (kept in the log).")
@db_option
@handle_errors
def init(currency, system, plant, db_path):
    """Create an empty log (or bring an old one up to the current schema).

    Example:

        pourback init --db plant.db --currency EUR --units metric
        pourback init --db north.db --plant NORTH
    """
    from tracker.log import settings as log_settings
    from tracker.log.ingest import set_default_plant

    with open_store(db_path, create=True) as store:
        if currency is not None:
            log_settings.set_currency(store, currency)
        if system is not None:
            log_settings.set_units(store, system)
        if plant is not None:
            set_default_plant(store, plant)
        code = log_settings.currency(store)
        shown = log_settings.units(store)
        default = store.get_meta("default_plant")
        extra = f"; default plant {default}" if default else ""
        click.echo(f"Log ready: {store.name} (schema version {store.schema_version()}; money in {code}; "
                   f"units {shown}{extra})")


@command()
@click.option("--currency", default=None, metavar="CODE",
              help="Set the three-letter code of the currency the log's costs are in, e.g. USD.")
@click.option("--units", "system", type=click.Choice(["metric", "us"], case_sensitive=False), default=None,
              help="Set the unit system numbers are typed and shown in: metric or us.")
@db_option
@json_option
@handle_errors
def settings(currency, system, db_path, as_json):
    """Show the log's settings, or change them (the currency money is counted in,
    the unit system numbers are typed and shown in).

    Costs already logged are not converted; they are read in the new currency.
    Changing the units converts nothing stored: the log keeps metric inside.

    Example:

        pourback settings --db plant.db --currency USD --units us
    """
    from tracker.log import settings as log_settings

    with open_store(db_path) as store:
        if currency is not None:
            log_settings.set_currency(store, currency)
        if system is not None:
            log_settings.set_units(store, system)
        data = log_settings.settings(store)
    emit(data, as_json, lambda d: "\n".join(f"{k}: {v}" for k, v in d.items()))


def _count_rows(path: pathlib.Path) -> int:
    if path.suffix.lower() != ".csv" or not path.is_file():  # a pipe is read once, by the import
        return 0
    with path.open("rb") as fh:
        return max(sum(buf.count(b"\n") for buf in iter(lambda: fh.read(1 << 20), b"")) - 1, 0)


@command("import")
@click.argument("kind_or_dir")
@click.argument("file", required=False, type=click.Path(exists=True, dir_okay=False))
@click.option("--skip-bad", is_flag=True,
              help="Write the good rows and a CSV of the refused ones, instead of refusing the file.")
@click.option("--sep", default=",", show_default=True,
              help="The CSV files' separator: ',', ';', '|' or tab.")
@click.option("--decimal", default=".", show_default=True, help="The decimal mark in numbers: '.' or ','.")
@click.option("--new-records", is_flag=True,
              help="Add inspection rows found in the log from an earlier file (the same rows of the same "
                   "bytes) as new records; without it they are named and not added again.")
@click.option("--by", default=None, help="Who imports (recorded with each record; default: login name).")
@db_option
@json_option
@handle_errors
def import_(kind_or_dir, file, skip_bad, sep, decimal, new_records, by, db_path, as_json):
    """Import a file of KIND (patterns, zones, sleeves, risers, lots,
    inspections), or every known file of a folder in dependency order.

    By default one bad row refuses the whole import and nothing is written;
    every bad row is reported with file, row, column and reason. With
    --skip-bad the refused rows go to FILE.refused.csv, written before the
    good rows are committed. FILE may be a pipe (/dev/stdin).

    Example:

        pourback import patterns patterns.csv
        pourback import sample_data
    """
    from tracker.log.ingest import import_files

    if file is None:
        folder = pathlib.Path(kind_or_dir)
        if not folder.is_dir():
            raise click.UsageError(f"{kind_or_dir!r} is not a folder; give KIND FILE or a folder "
                                   f"(KIND is one of {', '.join(KINDS)})")
        items = [(k, p) for k in KINDS for p in [folder / f"{k}.csv", folder / f"{k}.xlsx"] if p.is_file()]
        items = list({k: (k, p) for k, p in reversed(items)}.values())[::-1]
        if not items:
            raise click.UsageError(f"{folder} holds none of " + ", ".join(f"{k}.csv" for k in KINDS))
    else:
        if kind_or_dir not in KINDS:
            raise click.UsageError(f"unknown kind {kind_or_dir!r}; use one of {', '.join(KINDS)}")
        items = [(kind_or_dir, pathlib.Path(file))]
    total = sum(_count_rows(pathlib.Path(p)) for _, p in items)
    with open_store(db_path) as store:
        with progress_bar(show_progress(as_json) and total >= 5000, total, "Importing") as bar:
            results = import_files(store, items, skip_bad=skip_bad, by=who(by), progress=bar.update,
                                   sep=sep, decimal=decimal, new_records=new_records, refused_to=_refused_to)
        out = [r.to_dict() for r in results]
    emit(out, as_json, _format_import)


def _refused_to(path) -> pathlib.Path:
    """FILE.refused.csv beside the file; for a pipe (/dev/stdin), in the current folder."""
    path = pathlib.Path(path)
    return (path if path.is_file() else pathlib.Path(path.name)).with_suffix(".refused.csv")


def _format_import(results: list[dict]) -> str:
    lines = [table(results, [("file", "file"), ("kind", "kind"), ("rows", "rows"), ("added", "added"),
                             ("skipped", "already present"), ("refused", "refused")])]
    for r in results:
        for w in r.get("warnings", [])[:20]:
            lines.append(f"{r['file']}: warning: {w}")
        if r.get("refused_file"):
            lines.append(f"{r['file']}: {r['refused']} row(s) refused, written to {r['refused_file']}:")
            lines.extend("  " + p for p in r["problems"][:20])
    return "\n".join(lines)


def _inspection_options(fn):
    opts = [
        click.option("--lot", required=True, help="Pour lot code."),
        click.option("--inspected-on", default=None, help="Inspection date YYYY-MM-DD (default today)."),
        click.option("--method", required=True, type=click.Choice(METHODS), help="Inspection method."),
        click.option("--quantity", required=True, type=int, help="Number of castings with this result."),
        click.option("--result", required=True, type=click.Choice(RESULTS), help="accept, reject or rework."),
        click.option("--defect", type=click.Choice(DEFECTS), default=None,
                     help="Defect found (required for reject and rework)."),
        click.option("--zone", default=None, help="Zone of the casting where the defect was seen."),
        click.option("--xray-category", type=click.Choice(XRAY_CATEGORIES), default=None,
                     help="Reference-radiograph category (method xray)."),
        click.option("--severity", type=int, default=None, help="Severity level 1-5 (categories A, B, C*)."),
        click.option("--serial", default=None, help="Casting serial number."),
        click.option("--inspector", default=None, help="Inspector's name or initials."),
        click.option("--notes", default=None, help="Free text."),
    ]
    for o in reversed(opts):
        fn = o(fn)
    return fn


@command()
@_inspection_options
@click.option("--by", default=None, help="Who logs the result (default: login name).")
@db_option
@json_option
@handle_errors
def log(lot, inspected_on, method, quantity, result, defect, zone, xray_category, severity, serial,
        inspector, notes, by, db_path, as_json):
    """Log one inspection result for a pour lot, checked as an import would be.

    Example:

        pourback log --lot L2647-043 --method xray --quantity 1 --result reject --defect shrinkage --zone neck --xray-category CB --severity 4 --inspector QE-ML
    """  # noqa: E501 (an example stays on one line, to paste and run)
    from tracker.log.ingest import log_inspection

    record = dict(lot=lot, inspected_on=inspected_on or dt.date.today().isoformat(), method=method,
                  quantity=quantity, result=result, defect=defect, zone=zone, xray_category=xray_category,
                  severity=severity, serial=serial, inspector=inspector, notes=notes)
    with open_store(db_path) as store:
        rid = log_inspection(store, record, by=who(by), source="cli")
        rec = store.inspection(rid)
    emit(rec, as_json, lambda r: f"Logged record {r['id']}: lot {r['lot']}, {r['quantity']} x {r['result']}"
         + (f" ({r['defect']}" + (f", zone {r['zone']}" if r['zone'] else "") + ")" if r["defect"] else ""))


@command()
@click.argument("record_id", type=click.IntRange(1, MAX_RECORD_ID))
@click.option("--reason", required=True, help="Why the record is corrected.")
@click.option("--by", default=None, help="Who corrects it (default: login name).")
@click.option("--void", is_flag=True, help="Withdraw the record (entered in error).")
@click.option("--quantity", type=int, default=None, help="Corrected quantity.")
@click.option("--result", type=click.Choice(RESULTS), default=None, help="Corrected result.")
@click.option("--defect", type=click.Choice(DEFECTS), default=None, help="Corrected defect.")
@click.option("--zone", default=None, help="Corrected zone.")
@click.option("--xray-category", type=click.Choice(XRAY_CATEGORIES), default=None, help="Corrected category.")
@click.option("--severity", type=int, default=None, help="Corrected severity level.")
@click.option("--method", type=click.Choice(METHODS), default=None, help="Corrected method.")
@click.option("--notes", default=None, help="Corrected notes.")
@db_option
@json_option
@handle_errors
def correct(record_id, reason, by, void, db_path, as_json, **changes):
    """Correct an inspection record: a new record supersedes it, the old one
    stays readable in the history with who, when and why.

    Example:

        pourback correct 1834 --quantity 3 --reason "recount at the bench" --by QE-ML
    """
    from tracker.log.ingest import correct_inspection

    changes = {k: v for k, v in changes.items() if v is not None}
    if void and changes:
        raise click.UsageError("--void withdraws the record; give no other changes with it")
    if not void and not changes:
        raise click.UsageError("say what to change (for example --quantity 3) or --void")
    if void:
        changes["void"] = True
    with open_store(db_path) as store:
        rid = correct_inspection(store, record_id, changes, by=who(by), reason=reason)
        rec = store.inspection(rid)
    emit(rec, as_json, lambda r: f"Record {record_id} superseded by record {r['id']}"
         + (" (withdrawn)" if r["void"] else ""))


@command()
@click.option("--lot", default=None, help="Only this lot.")
@click.option("--limit", type=click.IntRange(1, 1_000_000), default=50, show_default=True,
              help="Newest records to show.")
@db_option
@json_option
@handle_errors
def history(lot, limit, db_path, as_json):
    """Inspection records, newest first, superseded ones included with who
    corrected them, when and why.

    Example:

        pourback history --lot L2647-043
    """
    with open_store(db_path) as store:
        frame = store.inspections_history(lot=lot, limit=limit)
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    for r in rows:
        r["status"] = ("withdrawn" if r["void"] else "current") if r["superseded_by"] is None \
            else f"superseded by {int(r['superseded_by'])}"
    emit(rows, as_json, lambda rs: table(rs, [
        ("id", "record"), ("lot", "lot"), ("inspected_on", "inspected on"), ("method", "method"),
        ("quantity", "castings"), ("result", "result"), ("defect", "defect"), ("zone", "zone"),
        ("status", "status"), ("recorded_by", "by"), ("corrected_by", "corrected by"),
        ("correction_why", "why")]))


@command()
@click.argument("file", type=click.Path(dir_okay=False))
@db_option
@handle_errors
def backup(file, db_path):
    """Copy the log to FILE: SQLite's online backup (safe while others write), or
    on PostgreSQL pg_dump (when installed; else the exact command is printed).

    On PostgreSQL the server's own backups are the plan of record; this is an
    extra copy.

    Example:

        pourback backup backups/pourback-2026-12-01.db
    """
    with open_store(db_path) as store:
        done = store.backup(file)
    if done["command"] is None:
        click.echo(f"Backed up {store.name} to {file}")
        return
    if done["ran"]:
        click.echo(f"Backed up {store.name} to {file} with: {done['command']}")
    else:
        click.echo(f"Not backed up here. Run: {done['command']}")
    click.echo(f"Note: {done['note']}")


@command()
@click.argument("backup_file", type=click.Path(exists=True, dir_okay=False))
@db_option
@handle_errors
def restore(backup_file, db_path):
    """Restore a backup into a new log file (checked for integrity first).

    Example:

        pourback restore backups/pourback-2026-12-01.db --db restored.db
    """
    from tracker.log.store import is_url, resolve_path
    from tracker.log.store import restore as do_restore

    target = resolve_path(db_path)
    if is_url(target):
        raise click.UsageError("restore writes a new SQLite file; a PostgreSQL log is restored with "
                               "pg_restore from a pg_dump file (see `pourback backup`), or filled from an "
                               "SQLite backup with `pourback copy-log BACKUP URL`")
    do_restore(backup_file, target)
    click.echo(f"Restored {backup_file} to {target}")
