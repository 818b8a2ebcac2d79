"""Who is at the dashboard: the sign-in gate and what a page may offer.

``pourback dashboard`` says by $POURBACK_SIGN_IN whether visitors must sign in
(always beyond loopback, or with --require-login). Signed in, the session is a
``tracker.log.accounts.Session`` kept in this browser tab's state, and its token
(random, 256 bits; the log keeps only its SHA-256) in a cookie of this site, so a
reload finds it again (``accounts.resume``) while the session is live; signing
out ends it in the log and deletes the cookie. No password is kept by the browser. Pages ask
:func:`can` before offering a button, and write through :func:`open_store`,
whose every write the library checks against the user's role again.

On loopback without sign-in there is no account: the local desk may do
everything and names itself in a text field, as before accounts existed.
"""

from __future__ import annotations

import hashlib
import os

import streamlit as st

from dashboard.format import md_escape
from tracker.errors import SessionExpired, SignInRefused
from tracker.log import accounts as auth
from tracker.log.store import Store

_KEY = "pourback_session"
_NOTE = "pourback_sign_in_note"
_TRIED = "pourback_cookie_tried"  # the cookie's token, once looked up in this tab (not again)
_SET_COOKIE = "pourback_set_cookie"  # after a sign-in: write the cookie on the next page
_FORGET = "pourback_forget_cookie"  # after a sign-out or an ended session: delete it


def _md(text: str) -> str:
    return md_escape(text)


def sign_in_required() -> bool:
    return os.environ.get("POURBACK_SIGN_IN") == "1"


def idle_hours() -> float:
    try:
        return auth.check_idle_hours(os.environ.get("POURBACK_IDLE_HOURS", auth.DEFAULT_IDLE_HOURS))
    except auth.PourbackError:
        return auth.DEFAULT_IDLE_HOURS


def served_without_tls() -> bool:
    """Served beyond loopback over plain HTTP."""
    host = os.environ.get("POURBACK_HOST", "127.0.0.1")
    return not auth.is_loopback(host) and os.environ.get("POURBACK_TLS") != "1"


def session() -> auth.Session | None:
    """The signed-in user of this tab (None at the local desk)."""
    return st.session_state.get(_KEY) if sign_in_required() else None


def can(action: str) -> bool:
    """Whether to offer ``action`` on a page (the write is checked again in the library)."""
    if sign_in_required() and session() is None:
        return False
    return auth.may(session(), action)


def open_store(path: str) -> Store:
    """A connection whose writes are made, and checked, as the signed-in user."""
    if sign_in_required() and session() is None:
        raise SessionExpired("not signed in; sign in again")
    return Store(path, actor=session(), create=False)


def author_field(container, label: str, key: str) -> str:
    """Who a written record names: the signed-in user (shown, not typed), or at
    the local desk a required text field."""
    s = session()
    if s is not None:
        container.text_input("Recorded as (signed in)", value=s.user, disabled=True, key=key,
                             help="Signed in: every record you write carries your user name.")
        return s.user
    return container.text_input(label, key=key, max_chars=100).strip()


# --- the session's cookie -------------------------------------------------------------------

def cookie_name(path: str) -> str:
    """One cookie per log: dashboards on other ports of the same host (which share
    cookies) keep their own sessions."""
    return "pourback_session_" + hashlib.sha256(path.encode()).hexdigest()[:12]


def _cookie_token(path: str) -> str | None:
    token = st.context.cookies.get(cookie_name(path))
    return token if isinstance(token, str) and auth.TOKEN_RULE.fullmatch(token) else None


def _cookie_script(path: str, token: str | None) -> str:
    """A script writing (or, for None, deleting) the session cookie: this site only
    (SameSite=Strict), over HTTPS only when served with TLS, gone when the browser closes."""
    name = cookie_name(path)
    secure = "; Secure" if os.environ.get("POURBACK_TLS") == "1" else ""
    if token is None or not auth.TOKEN_RULE.fullmatch(token):
        value = f"{name}=; Path=/; Max-Age=0; SameSite=Strict{secure}"
    else:
        value = f"{name}={token}; Path=/; SameSite=Strict{secure}"
    return f'<script>document.cookie = "{value}";</script>'


def _resume(path: str) -> None:
    """A reloaded page: the session whose token the cookie holds, if still live (once per tab)."""
    token = _cookie_token(path)
    if token is None or st.session_state.get(_TRIED) == token:
        return
    st.session_state[_TRIED] = token
    try:
        with Store(path) as store:
            resumed = auth.resume(store, token, idle_hours=idle_hours())
    except SessionExpired as exc:
        st.session_state[_NOTE] = str(exc)
        resumed = None
    if resumed is None:
        st.session_state[_FORGET] = True
    else:
        st.session_state[_KEY] = resumed


def _forget_here(path: str) -> None:
    """After this tab's session ended: no retry of the cookie's token, and delete the cookie."""
    token = _cookie_token(path)
    if token is not None:
        st.session_state[_TRIED] = token
    st.session_state[_FORGET] = True


def gate(path: str, url_paths: list[str]) -> bool:
    """True when the page may be shown: no sign-in asked, or a live session.
    Otherwise shows the sign-in form (and nothing else) at every page's address
    (so a link to a page leads there after signing in) and returns False."""
    if not sign_in_required():
        return True
    if st.session_state.get(_KEY) is None:
        _resume(path)
    current = st.session_state.get(_KEY)
    if current is not None:
        try:
            with Store(path) as store:
                st.session_state[_KEY] = auth.check_session(store, current)
            return True
        except SessionExpired as exc:
            st.session_state.clear()
            st.session_state[_NOTE] = str(exc)
            _forget_here(path)
    form = lambda: _sign_in_page(path)  # noqa: E731 (a one-line local helper)
    st.navigation([st.Page(form, title="Sign in", url_path=u, default=i == 0) for i, u in enumerate(url_paths)],
                  position="hidden").run()
    return False


def _sign_in_page(path: str) -> None:
    if st.session_state.pop(_FORGET, False):
        st.html(_cookie_script(path, None), unsafe_allow_javascript=True)
    st.title("Pourback: sign in")
    note = st.session_state.pop(_NOTE, None)
    if note:
        st.info(_md(note[0].upper() + note[1:] + "."), icon=":material/logout:")
    with st.form("sign_in", clear_on_submit=True, border=True, width=420):
        name = st.text_input("User name", key="sign_in_name", max_chars=64, autocomplete="username")
        password = st.text_input("Password", type="password", key="sign_in_password",
                                 max_chars=auth.MAX_PASSWORD_LENGTH, autocomplete="current-password")
        go = st.form_submit_button("Sign in", type="primary")
    st.caption(f"After {auth.LOCK_AFTER_FAILURES} wrong passwords in a row an account is locked for "
               f"{auth.LOCK_MINUTES} minutes. A session ends after {idle_hours():g} hours without activity. "
               "Accounts are given by an admin (`pourback user add`).")
    if not go:
        return
    try:
        with Store(path) as store:
            st.session_state[_KEY] = auth.sign_in(store, name, password, idle_hours=idle_hours())
            st.session_state[_SET_COOKIE] = True
    except SignInRefused as exc:
        st.error(_md(str(exc).replace("`", "") + "."), icon=":material/lock:")
        return
    finally:
        password = None  # noqa: F841 - not kept past this run
    st.rerun()


def sidebar(path: str) -> None:
    """Who is signed in, the sign-out button, and the admins' TLS warning."""
    s = session()
    if s is None:
        return
    if st.session_state.pop(_SET_COOKIE, False):  # just signed in: a reload finds the session again
        st.html(_cookie_script(path, s.token), unsafe_allow_javascript=True)
    st.caption(f"Signed in as **{_md(s.user)}** ({s.role})")
    if st.button("Sign out", key="sign_out"):
        with Store(path) as store:
            auth.sign_out(store, s)
        st.session_state.clear()  # nothing of this user's widgets is left for the next one
        _forget_here(path)
        st.rerun()
    if s.role == "admin" and served_without_tls():
        st.warning(NO_TLS_TEXT, icon=":material/lock_open:")


NO_TLS_TEXT = ("Served beyond this computer without TLS: user names, passwords and results cross the "
               "network readable by anyone on it. Restart with `pourback dashboard --tls-cert FILE "
               "--tls-key FILE`.")


def not_offered(action: str) -> str:
    """Why a page leaves out what the user's role may not do."""
    s = session()
    who = f"You are signed in as {_md(s.user)} (role {s.role}); " if s else ""
    return (f"{who}to {auth.ACTIONS[action]} needs the role {' or '.join(auth.roles_for(action))}. "
            "Reading every page is open to every role.")
