"""Exception classes a user can see.

Every message says what arrived, the rule it broke and how to fix it. The CLI
turns these into one clear line; the dashboard shows them with ``st.error``.
"""

from __future__ import annotations


class PourbackError(Exception):
    """Base class of every error meant for a user."""

    def __reduce__(self):
        # Pickled as its message and fields, not through __init__ (whose arguments differ
        # from class to class): an error raised in a child process reaches the parent whole.
        return _rebuild, (type(self), self.args, self.__dict__)


def _rebuild(cls, args: tuple, state: dict) -> PourbackError:
    error = cls.__new__(cls)
    Exception.__init__(error, *args)
    error.__dict__.update(state)
    return error


class BadInput(PourbackError, ValueError):
    """A single value (an option, a form field) broke a rule."""

    def __init__(self, field: str, value, reason: str):
        self.field = field
        self.value = value
        self.reason = reason
        super().__init__(f"{field}: got {value!r}; {reason}")


class UnknownAlloy(BadInput):
    def __init__(self, value, known):
        super().__init__("alloy", value, "known alloys are " + ", ".join(sorted(known)))


class BadRow(PourbackError, ValueError):
    """One row of an import file broke a rule."""

    def __init__(self, file: str, row: int, column: str, reason: str, form: str | None = None):
        self.file = file
        self.row = row
        self.column = column
        self.reason = reason
        self.form = form  # the rule in a form's words, where it differs from the file's
        super().__init__(f"{file}, row {row}, column {column}: {reason}")


class BadRecord(BadInput):
    """One record typed in (form or command line) broke one or more rules;
    ``problems`` holds (field, text) pairs, the text in the form's words."""

    def __init__(self, problems: list[tuple[str, str]], value=None):
        self.problems = list(problems)
        field, text = self.problems[0]
        PourbackError.__init__(self, " ".join(t if t.endswith(".") else t + "."
                                              for _, t in self.problems).rstrip(".")
                               if len(self.problems) > 1 else text)
        self.field, self.value, self.reason = field, value, text


class BadFile(PourbackError, ValueError):
    """An import file was refused; ``problems`` lists every bad row."""

    SHOWN = 20  # problems listed in the message

    def __init__(self, file: str, problems: list[BadRow], message: str | None = None, *,
                 rows: int | None = None, total: int | None = None):
        self.file = file
        self.problems = list(problems)
        self.total = len(self.problems) if total is None else total  # every problem, counted
        self.rows = len({p.row for p in self.problems}) if rows is None else rows
        if message is None:
            shown = "\n".join(str(p) for p in self.problems[:self.SHOWN])
            more = self.total - min(len(self.problems), self.SHOWN)
            extra = f"\n... and {more:,} more problem(s)" if more > 0 else ""
            message = (f"{file}: refused, nothing written ({self.rows:,} bad "
                       f"row(s)):\n{shown}{extra}")
        super().__init__(message)


class NotFound(PourbackError, LookupError):
    """A pattern, lot, riser or record that the log does not hold."""

    def __init__(self, kind: str, key, hint: str = ""):
        self.kind = kind
        self.key = key
        msg = f"unknown {kind} {key!r}"
        super().__init__(msg + (f"; {hint}" if hint else ""))


class SolveTooLong(PourbackError):
    """A thermal solve passed its time bound (it is stopped, nothing is kept)."""

    def __init__(self, limit_s: float, steps: int, expected_steps: int, cells: int):
        self.limit_s = limit_s
        super().__init__(f"thermal solve stopped at its time limit of {limit_s:g} s after {steps:,} of about "
                         f"{expected_steps:,} time steps on {cells:,} cells; check the dimensions, or ask for "
                         "a coarser grid (--cells-across)")


class MissingColumn(PourbackError, ValueError):
    """A feature table lacks columns the shrinkage model needs."""

    def __init__(self, missing, needed, table: str = "features"):
        self.missing = list(missing)
        self.needed = list(needed)
        names = ", ".join(repr(c) for c in self.missing)
        super().__init__(
            f"{table}: missing column(s) {names}; the shrinkage model needs columns "
            f"{', '.join(self.needed)} (the design engine adds them to each lot and zone)")


class IncompatibleModel(PourbackError, ValueError):
    """A saved model blob cannot be loaded by this install."""


class PermissionDenied(PourbackError, PermissionError):
    """The signed-in user's role may not do what was asked; nothing was written."""

    def __init__(self, user: str, role: str | None, action: str, allowed: list[str], what: str):
        self.user = user
        self.role = role
        self.action = action
        as_role = f" (role {role})" if role else ""
        who = " or ".join(allowed) if allowed else "no role"
        super().__init__(f"{user}{as_role} may not {what}; nothing was written. That needs the role {who}: "
                         "sign in as such a user, or ask an admin to give you an account with it")


class SignInRefused(PourbackError):
    """A sign-in failed: unknown user, wrong password, disabled or locked account.

    The message never says which of user name or password was wrong, and never
    holds the password."""


class AccountLocked(SignInRefused):
    """Too many failed sign-ins in a row: the account is locked for a while. Its
    words are those of every refused sign-in (``tracker.log.accounts.refusal``),
    so that a lock does not tell that the name exists."""

    def __init__(self, refused: SignInRefused):
        super().__init__(str(refused))


class SessionExpired(PourbackError):
    """A dashboard session ended (idle too long, signed out, or its account disabled)."""


class CopyMismatch(PourbackError):
    """A copy of a log differs from its source (a table's count or checksum, or the review)."""


# --- the log file itself ---------------------------------------------------------------

class LogError(PourbackError):
    """The log file cannot be used as asked (missing, not a log, read-only, disk full,
    locked). ``path`` is the file; nothing was written."""

    def __init__(self, path, message: str):
        self.path = str(path)
        super().__init__(message)


class LogNotFound(LogError):
    def __init__(self, path):
        super().__init__(path, f"no log at {path}; create one with `pourback init --db {path}` (or "
                               "`pourback demo`), or give the log's path with --db")


class LogLocked(LogError):
    """The log stayed locked by another writer longer than the busy timeout
    (``seconds``), or a write met a conflict with other writers on each of
    ``tries`` tries (a database server's serialization failures)."""

    def __init__(self, path, seconds: float | None = None, *, tries: int | None = None):
        if seconds is None:
            super().__init__(path, f"the log {path} stayed busy with other writers through {tries} tries; "
                                   "nothing was written; try again in a moment")
            return
        super().__init__(path, f"the log {path} stayed locked by another writer for {seconds:g} s; nothing "
                               "was written; try again when the other import or backup has finished")


class LogReadOnly(LogError):
    def __init__(self, path):
        super().__init__(path, f"the log {path} is read-only; nothing was written. Ask for write access to "
                               "the file and its folder, or copy the log to a place you can write")


class DiskFull(LogError):
    def __init__(self, path):
        super().__init__(path, f"the disk holding {path} is full; nothing was written. Free some space on "
                               "it and try again")


class NotALog(LogError):
    def __init__(self, path, why: str):
        super().__init__(path, f"{path} is not a pourback log ({why}); give the log's path with --db, or "
                               "create a new log with `pourback init --db NEW.db`")


def cut(value, limit: int = 60) -> str:
    """``repr`` of a value a user gave, cut to a readable length."""
    text = repr(value)
    if len(text) <= limit:
        return text
    return f"{text[:limit - 1]}…' ({len(str(value)):,} characters)"


class BadModel(PourbackError, ValueError):
    """A CAD model (an STL file) that cannot be solved: not closed, inside out,
    intersecting itself, or not readable as STL."""

    def __init__(self, file: str, reason: str):
        self.file = file
        self.reason = reason
        super().__init__(f"{file}: {reason}")
