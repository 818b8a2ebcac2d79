"""Accounts, roles, sign-in, dashboard sessions and the audit of who did what.

A served dashboard asks every visitor to sign in; what a signed-in user may
write is decided here, by the role of their account as the log holds it at
the moment of the write (``require``), so a page that offered a button by
mistake, or a caller that builds its own request, is still refused.

Passwords are kept only as Argon2id hashes (argon2-cffi) and never leave this
module: no function returns, logs or puts in an error message a password or a
hash. A session token is kept only as its SHA-256.

The local desk -- the command line, or the dashboard on loopback without
``--require-login`` -- has no account: it is whoever can open the log file,
and records the name it is given (``by``), as before accounts existed.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import secrets
from dataclasses import dataclass, field

from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError

from tracker.errors import (
    AccountLocked,
    BadInput,
    NotFound,
    PermissionDenied,
    PourbackError,
    SessionExpired,
    SignInRefused,
)

# --- roles ---------------------------------------------------------------------------

# What each action lets a user do (the words of PermissionDenied).
ACTIONS = {
    "log": "log, correct or import inspection results and lots",
    "design": "import or change patterns, zones, sleeves and riser revisions",
    "what_if": "try riser changes (what-if)",
    "fit_model": "refit the reject model",
    "users": "add, change or disable user accounts",
    "backup": "back up or restore the log",
    "settings": "change the log's settings",
    "actions": "add or close the weekly review's actions",
}


@dataclass(frozen=True)
class Role:
    name: str
    summary: str
    actions: frozenset


ROLES = {r.name: r for r in (
    Role("inspector", "log, correct and import inspection results and lots; review actions",
         frozenset({"log", "actions"})),
    Role("methods", "everything of an inspector, plus patterns, zones, sleeves, riser revisions, "
                    "what-if and fit-model", frozenset({"log", "design", "what_if", "fit_model", "actions"})),
    Role("reviewer", "reads every page and report, writes nothing", frozenset()),
    # Every action, whatever is added to ACTIONS later: the lead who runs the log also logs,
    # corrects, imports and works on the methods side.
    Role("admin", "everything: every other role's work, plus users, backup and restore, settings",
         frozenset(ACTIONS)),
)}
# Every role reads every page and report; these are the writes.
TABLE_ACTION = {"patterns": "design", "zones": "design", "sleeves": "design", "revisions": "design",
                "risers": "design", "lots": "log", "inspections": "log"}

# --- rules -------------------------------------------------------------------------------

MIN_PASSWORD_LENGTH = 12
MAX_PASSWORD_LENGTH = 1024  # Argon2 takes any length; a cap keeps one request from costing seconds
LOCK_AFTER_FAILURES = 5
LOCK_MINUTES = 15
DEFAULT_IDLE_HOURS = 8.0  # a shift
MAX_IDLE_HOURS = 24.0 * 7
TOUCH_EVERY_S = 60  # a session's last activity is written at most once a minute
# A session idle longer than MAX_IDLE_HOURS is over; its row is dropped at a later
# sign-in once it has been idle this long (the audit keeps the story).
SESSIONS_KEPT_DAYS = 30
NAME_RULE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._@-]{0,63}")
TOKEN_RULE = re.compile(r"[A-Za-z0-9_-]{43}")  # secrets.token_urlsafe(32): 256 random bits
LOOPBACK_HOSTS = ("127.0.0.1", "::1", "localhost")
# A day's inspection and lot files with room to spare: 10 MB is ~70,000 CSV rows at 150 bytes a
# row (the demo's 26 weeks of inspections, 2,024 rows, take 0.12 MB).
MAX_UPLOAD_MB = 10

# argon2-cffi's defaults are Argon2id with RFC 9106's second recommended option
# (t=3 passes, m=64 MiB, p=4 lanes); spelled out so a library upgrade cannot weaken them.
HASHER = PasswordHasher(time_cost=3, memory_cost=65536, parallelism=4, hash_len=32, salt_len=16)
_DUMMY_HASH: list[str] = []  # verified against for an unknown user, so both take the same time (_dummy_hash)


@dataclass(frozen=True)
class Session:
    """A signed-in dashboard user. Only :func:`sign_in` makes a valid one: the
    token is checked against the log on every write, so a hand-made Session
    (or one whose user was disabled, or that went idle) is refused."""

    user: str
    role: str
    idle_hours: float
    started_at: str
    token: str = field(repr=False)


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


def _iso(t: dt.datetime) -> str:
    return t.astimezone(dt.UTC).isoformat(timespec="seconds")


def _parse(s: str) -> dt.datetime:
    t = dt.datetime.fromisoformat(s)
    return t if t.tzinfo else t.replace(tzinfo=dt.UTC)


def _sha(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def _hide(password) -> str:
    """How a refused password is named in an error: its length, never its text."""
    return f"({len(password)} characters, not shown)" if isinstance(password, str) else "(not shown)"


# --- checks ------------------------------------------------------------------------------

def check_name(name: str) -> str:
    name = str(name or "").strip()
    if not NAME_RULE.fullmatch(name):
        raise BadInput("user name", name, "use 1 to 64 letters, digits, '.', '_', '@' or '-', starting "
                                          "with a letter or digit")
    return name


def check_role(role: str) -> str:
    role = str(role or "").strip().lower()
    if role not in ROLES:
        raise BadInput("role", role, "must be one of " + ", ".join(ROLES) + " (see `pourback user roles`)")
    return role


def check_password(password, name: str = "") -> str:
    """The password rules: a string of MIN_PASSWORD_LENGTH to MAX_PASSWORD_LENGTH
    characters that is not the user name. Errors never hold the password."""
    if not isinstance(password, str):
        raise BadInput("password", "(not shown)", "must be text")
    if len(password) < MIN_PASSWORD_LENGTH:
        raise BadInput("password", _hide(password),
                       f"must be at least {MIN_PASSWORD_LENGTH} characters; a few words with spaces are fine")
    if len(password) > MAX_PASSWORD_LENGTH:
        raise BadInput("password", _hide(password), f"must be at most {MAX_PASSWORD_LENGTH} characters")
    if name and password.strip().lower() == name.strip().lower():
        raise BadInput("password", _hide(password), "must not be the user name")
    return password


def check_idle_hours(hours) -> float:
    try:
        h = float(hours)
    except (TypeError, ValueError):
        raise BadInput("idle hours", hours, f"must be a number of hours above 0 and at most {MAX_IDLE_HOURS:g}") \
            from None
    if not (0 < h <= MAX_IDLE_HOURS):
        raise BadInput("idle hours", hours, f"must be a number of hours above 0 and at most {MAX_IDLE_HOURS:g}")
    return h


def hash_password(password: str) -> str:
    """The Argon2id hash of ``password`` (a PHC string with its own salt)."""
    return HASHER.hash(password)


def verify_password(password_hash: str, password: str) -> bool:
    try:
        return HASHER.verify(password_hash, password)
    except (VerifyMismatchError, VerificationError, InvalidHashError):
        return False


# --- the audit ------------------------------------------------------------------------------

def record(store, event: str, *, user: str | None, subject: str | None = None, detail: str | None = None,
           via: str | None = None, at: dt.datetime | None = None) -> None:
    """Add one audit entry (inside the caller's transaction when one is open)."""
    with store.write():
        store.insert_audit(_iso(at or _now()), event, user, subject, detail, via)


def audit_log(store, since: str | None = None) -> list[dict]:
    """The audit entries, oldest first; ``since`` a date (YYYY-MM-DD) or an ISO time (UTC)."""
    if since is not None:
        text = str(since).strip()
        try:
            since = _iso(_parse(text)) if "T" in text else dt.date.fromisoformat(text).isoformat()
        except ValueError:
            raise BadInput("since", since, "give a date YYYY-MM-DD or a time YYYY-MM-DDTHH:MM (UTC)") from None
    frame = store.audit_frame(since)
    return frame.astype(object).where(frame.notna(), None).to_dict("records")


# --- who may write --------------------------------------------------------------------------

def _may(role: str | None, action: str) -> bool:
    return role in ROLES and action in ROLES[role].actions


def may(session: Session | None, action: str) -> bool:
    """Whether the page should offer ``action`` (the local desk may do everything).
    Offering is not permission: the write itself is checked by :func:`require`."""
    if action not in ACTIONS:
        raise KeyError(action)
    return session is None or _may(session.role, action)


def roles_for(action: str) -> list[str]:
    return [r.name for r in ROLES.values() if action in r.actions]


def require(store, action: str) -> None:
    """Refuse (PermissionDenied, SessionExpired) unless the store's actor may do ``action``.

    The role is read from the log at this moment, and the session must be live:
    a Session built by hand, one that went idle or whose account was disabled
    is refused. No actor (the local desk) may do everything.
    """
    if action not in ACTIONS:
        raise KeyError(action)
    session = getattr(store, "actor", None)
    if session is None:
        return
    account = _live_account(store, session, _now())
    if not _may(account["role"], action):
        raise PermissionDenied(account["name"], account["role"], action, roles_for(action), ACTIONS[action])


def author(store, actions, by: str | None) -> str | None:
    """Check ``actions`` (one or a list) and return the name a written record carries:
    the signed-in user while served with sign-in (any ``by`` is ignored), else ``by``."""
    for a in [actions] if isinstance(actions, str) else list(dict.fromkeys(actions)):
        require(store, a)
    session = getattr(store, "actor", None)
    return session.user if session is not None else by


def acting_name(store, by: str | None) -> str | None:
    session = getattr(store, "actor", None)
    return session.user if session is not None else by


def _via(store) -> str:
    return "dashboard" if getattr(store, "actor", None) is not None else "cli"


# --- accounts ---------------------------------------------------------------------------------

def list_users(store) -> list[dict]:
    """Every account (never its hash), with whether it is locked now."""
    frame = store.users_frame()
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    now = _now()
    for r in rows:
        r["enabled"] = bool(r["enabled"])
        r["locked"] = bool(r["locked_until"] and _parse(r["locked_until"]) > now)
    return rows


def role_table() -> list[dict]:
    return [{"role": r.name, "may": r.summary, "actions": sorted(r.actions)} for r in ROLES.values()]


def _account(store, name: str) -> dict:
    acc = store.user_account(str(name or "").strip())
    if acc is None:
        raise NotFound("user", name, "see `pourback user list`")
    return acc


def find_user(store, name: str) -> dict:
    """One account (never its hash); NotFound for an unknown name."""
    acc = _account(store, name)
    acc.pop("password_hash")
    return acc


def add_user(store, name: str, role: str, password: str, *, by: str | None = None,
             now: dt.datetime | None = None) -> dict:
    """Add an enabled account; returns it (without the hash)."""
    require(store, "users")
    name, role = check_name(name), check_role(role)
    check_password(password, name)
    hashed = hash_password(password)  # slow on purpose: outside the write lock
    who, at = acting_name(store, by), now or _now()
    with store.write():
        if store.user_account(name) is not None:
            raise BadInput("user name", name, "is taken already (names are matched without case); choose "
                                              "another, or set its password with `pourback user passwd`")
        store.insert_user(name, role, hashed, _iso(at), who)
        store.insert_audit(_iso(at), "user_added", who, name, f"role {role}", _via(store))
    return {"name": name, "role": role, "enabled": True}


def set_password(store, name: str, password: str, *, by: str | None = None,
                 now: dt.datetime | None = None) -> dict:
    """Give an account a new password; clears a lock and ends its open sessions."""
    require(store, "users")
    acc = _account(store, name)
    check_password(password, acc["name"])
    hashed = hash_password(password)
    who, at = acting_name(store, by), _iso(now or _now())
    with store.write():
        store.update_user(acc["name"], password_hash=hashed, failed_sign_ins=0, locked_until=None,
                          password_set_at=at)
        store.end_sessions(at, "password changed", user=acc["name"])
        store.insert_audit(at, "password_changed", who, acc["name"], None, _via(store))
    return {"name": acc["name"], "role": acc["role"], "enabled": bool(acc["enabled"])}


def set_enabled(store, name: str, enabled: bool, *, by: str | None = None,
                now: dt.datetime | None = None) -> dict:
    """Disable (ending its sessions) or enable an account; the account is kept
    so the records it wrote keep their author. Returns the account and how many
    enabled admins the log has left."""
    require(store, "users")
    acc = _account(store, name)
    who, at = acting_name(store, by), _iso(now or _now())
    with store.write():
        if enabled:
            store.update_user(acc["name"], enabled=1, failed_sign_ins=0, locked_until=None)
        else:
            store.update_user(acc["name"], enabled=0)
            store.end_sessions(at, "account disabled", user=acc["name"])
        store.insert_audit(at, "user_enabled" if enabled else "user_disabled", who, acc["name"], None,
                           _via(store))
        admins = store.enabled_users("admin")
    return {"name": acc["name"], "role": acc["role"], "enabled": enabled, "enabled_admins": admins}


# --- sign-in and sessions ---------------------------------------------------------------------

def _dummy_hash() -> str:
    """The hash an unknown name's password is checked against (made on the first
    sign-in of a process, whatever the name, so that it costs every name the same)."""
    if not _DUMMY_HASH:
        _DUMMY_HASH.append(hash_password(secrets.token_urlsafe(16)))
    return _DUMMY_HASH[0]


def refusal() -> SignInRefused:
    """The one refusal of a sign-in: the same words for an unknown name, a disabled
    account, a wrong password and a locked account, so that nobody learns from it
    which names exist."""
    return SignInRefused("The user name or the password is wrong, or the account is locked (names are matched "
                         f"without case; after {LOCK_AFTER_FAILURES} wrong passwords in a row an account is "
                         f"locked for {LOCK_MINUTES} minutes): wait, or ask an admin to set a new password with "
                         "`pourback user passwd NAME`")


def sign_in(store, name: str, password: str, *, idle_hours: float = DEFAULT_IDLE_HOURS,
            now: dt.datetime | None = None) -> Session:
    """Check a user name and password and open a dashboard session.

    Refused (SignInRefused, with the same words and about the same time for
    each) for an unknown or disabled user, a wrong password or a locked
    account; after LOCK_AFTER_FAILURES wrong passwords in a row the account is
    locked for LOCK_MINUTES (AccountLocked), even for the right password.
    Counting a failure and checking the lock are one statement of the log
    (see ``count_failed_sign_in`` and ``open_sign_in``), so simultaneous
    sign-ins cannot pass the lock. Every attempt is audited; the password never is.
    """
    idle_hours = check_idle_hours(idle_hours)
    now = now or _now()
    at = _iso(now)
    name = str(name or "").strip()
    password = password if isinstance(password, str) else ""
    dummy = _dummy_hash()
    acc = store.user_account(name) if NAME_RULE.fullmatch(name) else None
    known: dict = acc if acc is not None and acc["enabled"] else {}
    # The slow check, outside the write lock; a known name's locked account is checked too.
    right = verify_password(known.get("password_hash", dummy), password)
    rehash = bool(known) and right and HASHER.check_needs_rehash(known["password_hash"])
    new_hash = hash_password(password) if rehash else None
    if not known:
        # An unknown name is not recorded: it may be a password typed in the wrong field.
        record(store, "sign_in_failed", user=None, subject=acc["name"] if acc else None,
               detail="disabled account" if acc else "unknown user name", via="dashboard", at=now)
        raise refusal()
    user = known["name"]
    token = secrets.token_urlsafe(32)
    until = _iso(now + dt.timedelta(minutes=LOCK_MINUTES))
    with store.write():
        if right:
            opened = store.open_sign_in(user, known["password_hash"], at, new_hash)
            counted = None
        else:
            opened, counted = False, store.count_failed_sign_in(user, at, LOCK_AFTER_FAILURES, until)
        if opened:
            store.insert_session(_sha(token), user, at)
            store.prune_sessions(_iso(now - dt.timedelta(days=SESSIONS_KEPT_DAYS)))
            store.insert_audit(at, "sign_in", user, user, None, "dashboard")
        elif counted is not None:
            failures, locked = counted
            store.insert_audit(at, "sign_in_failed", user, user, f"wrong password ({failures} in a row)",
                               "dashboard")
            if locked:
                store.end_sessions(at, "account locked", user=user)
                store.insert_audit(at, "locked", None, user,
                                   f"{failures} failed sign-ins in a row; locked until {until}", "dashboard")
        else:  # locked (or disabled, or its password changed, since it was read)
            store.insert_audit(at, "sign_in_refused", user, user, "account locked", "dashboard")
    if opened:
        return Session(user=user, role=known["role"], idle_hours=idle_hours, started_at=at, token=token)
    if counted is None or counted[1]:
        raise AccountLocked(refusal())
    raise refusal()


def _live_account(store, session: Session, now: dt.datetime) -> dict:
    """The account behind a live session, or SessionExpired (read only)."""
    if not isinstance(session, Session):
        raise SessionExpired("not signed in; sign in again")
    row = store.session_row(_sha(session.token))
    if row is None or row["user"].lower() != session.user.lower():
        raise SessionExpired("not signed in (this session is unknown to the log); sign in again")
    if row["ended_at"]:
        raise SessionExpired(f"your session ended ({row['end_reason']}); sign in again")
    if now - _parse(row["last_seen"]) > dt.timedelta(hours=session.idle_hours):
        raise SessionExpired(f"your session ended after {session.idle_hours:g} hours without activity; "
                             "sign in again")
    acc = store.user_account(row["user"])
    if acc is None or not acc["enabled"]:
        raise SessionExpired("your account is disabled; ask an admin")
    acc.pop("password_hash", None)
    return acc


def check_session(store, session: Session, *, now: dt.datetime | None = None) -> Session:
    """Keep a session alive on activity; SessionExpired once it went idle longer
    than its idle hours (or was ended). Returns it with the role as the log holds it now."""
    now = now or _now()
    try:
        acc = _live_account(store, session, now)
    except SessionExpired as exc:
        if isinstance(session, Session) and "without activity" in str(exc):
            with store.write():
                if store.end_sessions(_iso(now), "idle", token_sha256=_sha(session.token)):
                    store.insert_audit(_iso(now), "session_expired", session.user, session.user,
                                       f"idle over {session.idle_hours:g} h", "dashboard")
        raise
    row = store.session_row(_sha(session.token))
    if (now - _parse(row["last_seen"])).total_seconds() >= TOUCH_EVERY_S:
        with store.write():
            store.touch_session(_sha(session.token), _iso(now))
    if acc["role"] != session.role:
        session = Session(user=session.user, role=acc["role"], idle_hours=session.idle_hours,
                          started_at=session.started_at, token=session.token)
    return session


def resume(store, token, *, idle_hours: float = DEFAULT_IDLE_HOURS, now: dt.datetime | None = None) -> Session | None:
    """The session whose token a browser kept (a page reloaded), checked and kept alive
    as :func:`check_session` does. None for a token the log never issued (or forgot);
    SessionExpired for one that went idle, was signed out or whose account was disabled."""
    if not isinstance(token, str) or not TOKEN_RULE.fullmatch(token):
        return None
    row = store.session_row(_sha(token))
    if row is None:
        return None
    acc = store.user_account(row["user"])
    session = Session(user=row["user"], role=acc["role"] if acc else "", idle_hours=check_idle_hours(idle_hours),
                      started_at=row["started_at"], token=token)
    return check_session(store, session, now=now)


def sign_out(store, session: Session, *, now: dt.datetime | None = None) -> None:
    at = _iso(now or _now())
    with store.write():
        if store.end_sessions(at, "signed out", token_sha256=_sha(session.token)):
            store.insert_audit(at, "sign_out", session.user, session.user, None, "dashboard")


# --- serving ---------------------------------------------------------------------------------

def is_loopback(host: str) -> bool:
    """127.0.0.1, ::1 and localhost only: any other address (0.0.0.0, a LAN
    address, even 127.0.0.2) is treated as reachable by others."""
    return str(host).strip().strip("[]").lower() in LOOPBACK_HOSTS


def check_can_serve(store, host: str, require_login: bool = False) -> bool:
    """Whether a dashboard on ``host`` must ask for sign-in; refuses
    (PourbackError) to serve beyond loopback without an enabled admin account,
    or with sign-in but no enabled account at all."""
    if not is_loopback(host) and store.enabled_users("admin") == 0:
        raise PourbackError(f"refusing to serve the dashboard on {host}: beyond this computer (anything but "
                            f"{', '.join(LOOPBACK_HOSTS)}) every visitor must sign in, and the log "
                            f"{store.name} has no enabled admin account. Add one with `pourback user add NAME "
                            "--role admin`, then accounts for the team")
    need = require_login or not is_loopback(host)
    if need and store.enabled_users() == 0:
        raise PourbackError(f"--require-login: the log {store.name} has no enabled account to sign in "
                            "with; add one with `pourback user add NAME --role ROLE`")
    return need


def note_write(store, event: str, detail: str) -> None:
    """Audit a write made while served with sign-in (the rows of patterns, zones,
    risers ... carry no author of their own); the local desk's writes are not noted."""
    session = getattr(store, "actor", None)
    if session is not None:
        record(store, event, user=session.user, detail=detail, via="dashboard")
