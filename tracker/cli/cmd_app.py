"""Dashboard commands: open the dashboard on a log, or build the demo log and open it."""

from __future__ import annotations

import os
import pathlib
import sqlite3
import subprocess
import sys
import tempfile

import click

import tracker
from tracker.cli import db_option, emit, handle_errors, json_option, main
from tracker.errors import PourbackError

DEFAULT_DEMO_DB = "pourback-demo.db"
DEFAULT_PORT = 8501
DEFAULT_HOST = "127.0.0.1"
LOOPBACK = ("127.0.0.1", "localhost", "::1")


def app_path() -> pathlib.Path:
    """The dashboard's entry script (dashboard/app.py next to the package)."""
    import dashboard

    return pathlib.Path(dashboard.__file__).resolve().parent / "app.py"


def streamlit_argv(host: str, port: int) -> list[str]:
    """The command line that serves the dashboard."""
    return [sys.executable, "-m", "streamlit", "run", str(app_path()),
            "--server.address", host, "--server.port", str(port), "--server.headless", "true",
            "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none",
            "--client.toolbarMode", "minimal"]


def _launch(argv: list[str], env: dict) -> None:
    """Hand the process over to Streamlit (same PID, so stopping this command stops the server)."""
    if os.name == "posix":
        os.execvpe(argv[0], argv, env)
    raise SystemExit(subprocess.call(argv, env=env))  # pragma: no cover - not POSIX


def _url(host: str, port: int) -> str:
    shown = f"[{host}]" if ":" in host else host
    return f"http://{shown}:{port}"


def serve(db: pathlib.Path | str, host: str, port: int) -> None:
    from tracker.store import display_name

    env = {**os.environ, "POURBACK_DB": str(db)}
    click.echo(f"Dashboard on {display_name(db)}: {_url(host, port)}  (stop with Ctrl+C)")
    if host not in LOOPBACK:
        click.echo(f"Note: the dashboard has no login; anyone who can reach {host}:{port} can read the "
                   "log and record results.", err=True)
    _launch(streamlit_argv(host, port), env)


port_option = click.option("--port", type=click.IntRange(1, 65535), default=DEFAULT_PORT, show_default=True,
                           help="Port to serve the dashboard on.")
host_option = click.option("--host", default=DEFAULT_HOST, show_default=True,
                           help="Address to bind; the default keeps the dashboard on this computer.")


@main.command()
@db_option
@port_option
@host_option
@handle_errors
def dashboard(db_path, port, host):
    """Open the dashboard (log results, weekly review, design map, pattern
    file, suggestions) in the browser, on the log in --db.

    A missing log file is created empty; the dashboard then shows how to start.

    Example:

        pourback dashboard --db plant.db --port 8502
    """
    from tracker.store import Store, absolute_target

    db = absolute_target(db_path)
    with Store(db):  # create or migrate before the first page opens
        pass
    serve(db, host, port)


# --- demo ------------------------------------------------------------------------------

def sample_dir() -> pathlib.Path:
    """The committed demo files next to the package."""
    return pathlib.Path(tracker.__file__).resolve().parent.parent / "sample_data"


def _is_demo(path: pathlib.Path) -> bool:
    from tracker.store import Store

    try:
        with Store(path, create=False) as store:
            return store.get_meta("demo") == "1"
    except (sqlite3.DatabaseError, PourbackError):
        return False


def _remove_db(path: pathlib.Path) -> None:
    for p in (path, pathlib.Path(f"{path}-wal"), pathlib.Path(f"{path}-shm")):
        p.unlink(missing_ok=True)


def _demo_files(tmp: str) -> tuple[pathlib.Path, bool]:
    """The demo's CSV folder (the committed one, else generated into ``tmp``) and whether it was generated."""
    from tracker import demo
    from tracker.ingest import KINDS

    folder = sample_dir()
    if all((folder / f"{k}.csv").is_file() for k in KINDS):
        return folder, False
    folder = pathlib.Path(tmp) / "sample_data"
    demo.generate(folder)
    return folder, True


def _fill_demo(store) -> dict:
    from tracker.advise import fit_model
    from tracker.ingest import import_dir

    with tempfile.TemporaryDirectory(prefix="pourback-demo-") as tmp:
        folder, generated = _demo_files(tmp)
        import_dir(store, folder, by="pourback demo")
    fit_model(store)  # so the first visit to Suggestions need not fit it
    store.set_meta("demo", "1")
    return {"source": "generated" if generated else str(sample_dir()), **store.counts()}


def build_demo(target: pathlib.Path | str) -> dict:
    """Build the demo log into ``target`` (replacing an earlier demo log file) and
    return its counts. On a PostgreSQL server (a URL) the log must be empty."""
    from tracker.store import Store, display_name, is_url

    if is_url(str(target)):
        with Store(str(target)) as store:
            if any(store.counts().values()):
                raise PourbackError(f"{store.name} already holds a log; the demo is built only into an "
                                    "empty database. Create one (createdb) and pass its URL with --db")
            return {"db": display_name(target), **_fill_demo(store)}
    target = pathlib.Path(target)
    if target.exists() and not _is_demo(target):
        raise PourbackError(f"{target} exists and was not made by `pourback demo`; it is left alone. "
                            "Pass another file with --db, or move that one away")
    target.parent.mkdir(parents=True, exist_ok=True)
    building = target.with_name(target.name + ".building")
    _remove_db(building)
    try:
        with Store(building) as store:
            built = _fill_demo(store)
    except BaseException:
        _remove_db(building)
        raise
    _remove_db(target)
    os.replace(building, target)
    _remove_db(building)
    return {"db": str(target), **built}


def _format_demo(d: dict) -> str:
    text = (f"Built the demo log {d['db']} (an invented foundry) from {d['source']}:\n"
            f"  {d['patterns']:,} patterns, {d['zones']:,} zones, {d['sleeves']:,} sleeves, "
            f"{d['risers']:,} risers in {d['revisions']:,} revisions,\n"
            f"  {d['lots']:,} lots, {d['inspections']:,} inspection records")
    if not d["opening"]:  # else serve() prints the address
        extra = ("" if d["port"] == DEFAULT_PORT else f" --port {d['port']}") + \
                ("" if d["host"] == DEFAULT_HOST else f" --host {d['host']}")
        text += f"\nOpen it with: pourback dashboard --db {d['db']}{extra}  ->  {d['url']}"
    return text


@main.command("demo")
@click.option("--db", "db_path", type=click.Path(dir_okay=False), default=DEFAULT_DEMO_DB, show_default=True,
              help="File to build the demo log in; an existing file is replaced only if `pourback demo` "
                   "made it. A postgresql:// URL builds it in that (empty) database.")
@click.option("--no-dashboard", is_flag=True, help="Build the log only; do not open the dashboard.")
@port_option
@host_option
@json_option
@handle_errors
def demo_command(db_path, no_dashboard, port, host, as_json):
    """Build the demo log of an invented foundry (30 patterns, 26 weeks of
    pours and inspections) and open the dashboard on it.

    Example:

        pourback demo --db /tmp/demo.db --port 8502
    """
    from tracker.store import absolute_target

    target = absolute_target(db_path)
    built = build_demo(target)
    built.update(url=_url(host, port), host=host, port=port, opening=not no_dashboard)
    emit(built, as_json, _format_demo)
    if not no_dashboard:
        serve(target, host, port)
