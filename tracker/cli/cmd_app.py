"""Dashboard commands: open the dashboard on a log, or build the demo log and open it."""

from __future__ import annotations

import contextlib
import os
import pathlib
import re
import signal
import sqlite3
import subprocess
import sys
import tempfile

import click

import tracker
from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option
from tracker.cli.output import emit
from tracker.errors import PourbackError
from tracker.log import accounts as auth

DEFAULT_DEMO_DB = "pourback-demo.db"
DEFAULT_PORT = 8501
DEFAULT_HOST = "127.0.0.1"


def app_path() -> pathlib.Path:
    """The dashboard's entry script (dashboard/app.py next to the package)."""
    import dashboard

    return pathlib.Path(dashboard.__file__).resolve().parent / "app.py"


def streamlit_argv(host: str, port: int, tls: tuple[str, str] | None = None) -> list[str]:
    """The command line that serves the dashboard (XSRF protection on, uploads
    capped at auth.MAX_UPLOAD_MB, HTTPS with ``tls`` = (certificate, key))."""
    argv = [sys.executable, "-m", "streamlit", "run", str(app_path()),
            "--server.address", host, "--server.port", str(port), "--server.headless", "true",
            "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none",
            "--client.toolbarMode", "minimal", "--server.enableXsrfProtection", "true",
            "--server.maxUploadSize", str(auth.MAX_UPLOAD_MB),
            # The tables' own CSV download writes cells unguarded: it is off, and the
            # pages offer downloads through tracker.csvsafe.csv_bytes instead.
            "--client.disableDataExport", "true"]
    if tls:
        argv += ["--server.sslCertFile", tls[0], "--server.sslKeyFile", tls[1]]
    return argv


def _launch(argv: list[str], env: dict) -> int:
    """Run Streamlit as a child and wait for it; SIGTERM, SIGINT and SIGHUP sent to
    this process are passed on to the child, so stopping this command by its
    process id stops the server too (and frees the port). Returns the child's
    exit status."""
    child = subprocess.Popen(argv, env=env)
    forwarded = (signal.SIGTERM, signal.SIGINT) + ((signal.SIGHUP,) if hasattr(signal, "SIGHUP") else ())

    def forward(signum, _frame):
        with contextlib.suppress(ProcessLookupError):
            child.send_signal(signum)

    previous = {s: signal.signal(s, forward) for s in forwarded}
    try:
        while True:
            try:
                return child.wait()
            except KeyboardInterrupt:  # pragma: no cover - a second Ctrl+C while waiting
                forward(signal.SIGINT, None)
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
        if child.poll() is None:  # never leave the server behind
            child.terminate()
            try:
                child.wait(timeout=10)
            except subprocess.TimeoutExpired:
                child.kill()
                child.wait()


def _url(host: str, port: int, tls: bool = False) -> str:
    shown = f"[{host}]" if ":" in host else host
    return f"{'https' if tls else 'http'}://{shown}:{port}"


NO_TLS_WARNING = ("Warning: served beyond this computer without TLS: user names, passwords and results cross "
                  "the network readable by anyone on it. Serve with --tls-cert FILE --tls-key FILE.")


def serve(db: pathlib.Path | str, host: str, port: int, *, require_login: bool = False,
          tls: tuple[str, str] | None = None, idle_hours: float | None = None) -> None:
    """Check the log may be served on ``host`` (refusing beyond loopback without an
    enabled admin account), then hand over to Streamlit."""
    from tracker.log.store import Store, display_name

    idle = auth.check_idle_hours(auth.DEFAULT_IDLE_HOURS if idle_hours is None else idle_hours)
    with Store(db, create=False) as store:  # migrate before the first page opens; never create
        sign_in = auth.check_can_serve(store, host, require_login)
    env = {**os.environ, "POURBACK_DB": str(db), "POURBACK_SIGN_IN": "1" if sign_in else "0",
           "POURBACK_IDLE_HOURS": f"{idle:g}", "POURBACK_TLS": "1" if tls else "0",
           "POURBACK_HOST": host}
    click.echo(f"Dashboard on {display_name(db)}: {_url(host, port, bool(tls))}  (stop with Ctrl+C)")
    if sign_in:
        click.echo(f"Every visitor signs in; a session ends after {idle:g} hours without activity.")
    if not auth.is_loopback(host) and not tls:
        click.echo(NO_TLS_WARNING, err=True)
    status = _launch(streamlit_argv(host, port, tls), env)
    if status and status > 0:
        # Streamlit stopped by a signal (negative) is a normal stop; other codes are its own failure.
        raise PourbackError(f"the dashboard server stopped with exit status {status}; see its messages above")


port_option = click.option("--port", type=click.IntRange(1, 65535), default=DEFAULT_PORT, show_default=True,
                           help="Port to serve the dashboard on.")
def _check_host(ctx, param, value: str) -> str:
    if not value.strip():
        raise click.BadParameter(f"got {value!r}; give an address such as 127.0.0.1 (this computer only) "
                                 "or 0.0.0.0 (every network interface)")
    return value.strip()


host_option = click.option("--host", default=DEFAULT_HOST, show_default=True, callback=_check_host,
                           help="Address to bind; the default keeps the dashboard on this computer. Any other "
                                "address needs an enabled admin account, and every visitor signs in.")


@command()
@db_option
@port_option
@host_option
@click.option("--require-login", is_flag=True,
              help="Ask every visitor to sign in on this computer too (always asked beyond it).")
@click.option("--tls-cert", type=click.Path(exists=True, dir_okay=False), default=None,
              help="Certificate file (PEM) to serve HTTPS with; give --tls-key with it.")
@click.option("--tls-key", type=click.Path(exists=True, dir_okay=False), default=None,
              help="Private key file (PEM) of --tls-cert.")
@click.option("--idle-hours", type=float, default=8.0, show_default=True,
              help="A signed-in session ends after this many hours without activity.")
@handle_errors
def dashboard(db_path, port, host, require_login, tls_cert, tls_key, idle_hours):
    """Open the dashboard (log results, weekly review, design map, pattern
    file, suggestions) in the browser, on the log in --db.

    The log must exist (create it with `pourback init`, or build the demo
    log with `pourback demo`); stopping this command stops the server.
    On any address but 127.0.0.1, ::1 or localhost it refuses to start unless
    the log has an enabled admin account, and asks every visitor to sign in.

    Example:

        pourback dashboard --db plant.db --port 8502
        pourback dashboard --db plant.db --host 0.0.0.0 --tls-cert cert.pem --tls-key key.pem
    """
    from tracker.log.store import absolute_target

    if bool(tls_cert) != bool(tls_key):
        raise click.UsageError("give --tls-cert and --tls-key together (the certificate and its private key)")
    db = absolute_target(db_path)
    tls = (str(pathlib.Path(tls_cert).resolve()), str(pathlib.Path(tls_key).resolve())) if tls_cert else None
    if tls:
        check_tls(*tls)
    serve(db, host, port, require_login=require_login, tls=tls, idle_hours=idle_hours)


def check_tls(cert: str, key: str) -> None:
    """Refuse (one line, before the server starts) a --tls-cert that is not a PEM
    certificate, a --tls-key that is not an unencrypted PEM private key, or a key
    that is not the certificate's: the server would fail with a traceback."""
    import ssl

    def text(path: str) -> str:
        try:
            with open(path, "rb") as fh:
                return fh.read(1 << 20).decode("ascii", "replace")
        except OSError as exc:
            raise PourbackError(f"cannot read {path}: {exc.strerror or exc}") from None

    if "-----BEGIN CERTIFICATE-----" not in text(cert):
        raise PourbackError(f"--tls-cert {cert} is not a PEM certificate (it has no BEGIN CERTIFICATE line); give "
                            "the server's certificate in PEM form")
    key_text = text(key)
    if not re.search(r"-----BEGIN [A-Z ]*PRIVATE KEY-----", key_text):
        raise PourbackError(f"--tls-key {key} is not a PEM private key (it has no BEGIN PRIVATE KEY line); give "
                            "the private key of --tls-cert in PEM form")
    if "ENCRYPTED" in key_text:
        raise PourbackError(f"--tls-key {key} is encrypted with a passphrase, which the server cannot ask for; "
                            "give it unencrypted (openssl pkey -in KEY -out KEY.plain), readable by this user "
                            "only")
    context = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
    try:
        context.load_cert_chain(cert, key, password=lambda: b"")  # never asks for a passphrase
    except ssl.SSLError as exc:
        reason = getattr(exc, "reason", None) or str(exc)
        if reason == "KEY_VALUES_MISMATCH":
            raise PourbackError(f"--tls-key {key} is not the private key of --tls-cert {cert}; give the key "
                                "the certificate was made for") from None
        raise PourbackError(f"--tls-cert {cert} and --tls-key {key} cannot serve HTTPS ({reason}); give a PEM "
                            "certificate and its own unencrypted PEM private key") from None


# --- demo ------------------------------------------------------------------------------

def sample_dir() -> pathlib.Path:
    """The committed demo files next to the package."""
    return pathlib.Path(tracker.__file__).resolve().parent.parent / "sample_data"


def _is_demo(path: pathlib.Path) -> bool:
    from tracker.log.store import Store

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
    from tracker.log.ingest import KINDS

    folder = sample_dir()
    if all((folder / f"{k}.csv").is_file() for k in KINDS):
        return folder, False
    folder = pathlib.Path(tmp) / "sample_data"
    demo.generate(folder)
    return folder, True


def _fill_demo(store) -> dict:
    from tracker.advice.fitting import fit_model
    from tracker.demo.castings import store_demo_castings
    from tracker.log.ingest import import_dir

    with tempfile.TemporaryDirectory(prefix="pourback-demo-") as tmp:
        folder, generated = _demo_files(tmp)
        import_dir(store, folder, by="pourback demo")
        store_demo_castings(store, folder)
    fit_model(store)  # so the first visit to Suggestions need not fit it
    store.set_meta("demo", "1")
    return {"source": "generated" if generated else str(sample_dir()), **store.counts()}


def build_demo(target: pathlib.Path | str) -> dict:
    """Build the demo log into ``target`` (replacing an earlier demo log file) and
    return its counts. On a PostgreSQL server (a URL) the log must be empty."""
    from tracker.log.store import Store, display_name, is_url

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


@command("demo")
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
    from tracker.log.store import absolute_target

    target = absolute_target(db_path)
    if not no_dashboard and not auth.is_loopback(host):
        raise click.UsageError(f"the demo log has no accounts, so it is served on this computer only; drop "
                               f"--host {host}, or build it with --no-dashboard, add an admin with `pourback user "
                               "add NAME --role admin --db FILE` and serve it with `pourback dashboard`")
    built = build_demo(target)
    built.update(url=_url(host, port), host=host, port=port, opening=not no_dashboard)
    emit(built, as_json, _format_demo)
    if not no_dashboard:
        serve(target, host, port)
