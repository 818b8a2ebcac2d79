"""Hostile sign-ins (issue 27), on both backends: simultaneous sign-ins cannot beat
the lockout, and a lock reads and costs the same as an unknown name.

Plumbing tests on invented accounts; no trade figures here.
"""

import multiprocessing

import pytest
from argon2 import PasswordHasher, extract_parameters

from tracker.errors import SignInRefused
from tracker.log import accounts as auth
from tracker.log.store import Store

PASSWORD = "bench tablet seven"
PROCESSES = 12  # eleven wrong passwords and the right one, at once (issue 27)


@pytest.fixture
def cheap_hash(monkeypatch):
    """A cheap Argon2id (the lockout, not the hash, is under test; forked children inherit it)."""
    monkeypatch.setattr(auth, "HASHER", PasswordHasher(time_cost=1, memory_cost=8, parallelism=1))
    monkeypatch.setattr(auth, "_DUMMY_HASH", [])


def _try(target, password, barrier, out):
    with Store(target) as store:
        barrier.wait(timeout=60)
        try:
            auth.sign_in(store, "ana", password)
            out.put((password, "in"))
        except SignInRefused as exc:
            out.put((password, str(exc)))


def test_twelve_simultaneous_sign_ins_cannot_beat_the_lockout(logs, cheap_hash):
    target = logs.new()
    with Store(target) as s:
        auth.add_user(s, "ana", "admin", PASSWORD, by="setup")
    ctx = multiprocessing.get_context("fork")  # children start at once, with the cheap hash
    barrier, out = ctx.Barrier(PROCESSES), ctx.Queue()
    passwords = [f"wrong password {i:02d}" for i in range(PROCESSES - 1)] + [PASSWORD]
    procs = [ctx.Process(target=_try, args=(target, p, barrier, out)) for p in passwords]
    for p in procs:
        p.start()
    results = dict(out.get(timeout=120) for _ in procs)
    for p in procs:
        p.join(timeout=60)
        assert p.exitcode == 0
    assert len(results) == PROCESSES
    refused = str(auth.refusal())
    assert all(r == refused for p, r in results.items() if p != PASSWORD)
    with Store(target, create=False) as s:
        audit = [r for r in auth.audit_log(s) if r["subject"] == "ana" and r["event"] != "user_added"]
        assert s.integrity_check() == "ok"
        locked_now = [u["locked"] for u in auth.list_users(s)]
    events = [r["event"] for r in audit]
    # Every attempt is audited once; the account is locked once, and is locked at the end.
    assert sum(e in ("sign_in", "sign_in_failed", "sign_in_refused") for e in events) == PROCESSES
    assert events.count("locked") == 1
    assert locked_now == [True]
    if results[PASSWORD] == "in":
        # The right password came before the fifth wrong one: it reset the count, and
        # five of the wrong ones after it locked the account (the rest were refused).
        before = events[:events.index("sign_in")]
        assert before.count("sign_in_failed") < auth.LOCK_AFTER_FAILURES
        after = events[events.index("sign_in"):]
        assert after.count("sign_in_failed") == auth.LOCK_AFTER_FAILURES
    else:
        # Refused: it came after the lock, which five wrong passwords made; the other six were refused.
        assert results[PASSWORD] == refused
        assert events.count("sign_in_failed") == auth.LOCK_AFTER_FAILURES
        assert events.count("sign_in_refused") == PROCESSES - auth.LOCK_AFTER_FAILURES
        assert events.index("locked") < len(events) - events[::-1].index("sign_in_refused")


def test_a_lock_reads_and_costs_the_same_as_an_unknown_name(logs, cheap_hash, monkeypatch):
    # The time of a check is what would tell a name apart;
    # this machine's timings are too noisy to compare, so the work is compared: each
    # refusal verifies one hash of the same parameters (a lock answered at once did none).
    checked = []
    real_verify = auth.verify_password

    def verify(password_hash, password):
        checked.append(extract_parameters(password_hash))
        return real_verify(password_hash, password)

    with Store(logs.new()) as s:
        auth.add_user(s, "ana", "admin", PASSWORD, by="setup")
        for i in range(auth.LOCK_AFTER_FAILURES):
            with pytest.raises(SignInRefused):
                auth.sign_in(s, "ana", f"wrong {i}")
        before = s.snapshot()
        monkeypatch.setattr(auth, "verify_password", verify)
        words = {}
        for name, password in (("ana", "wrong again"), ("ana", PASSWORD), ("nobody", PASSWORD)):
            with pytest.raises(SignInRefused) as exc:
                auth.sign_in(s, name, password)
            words[name, password] = str(exc.value)
        assert set(words.values()) == {str(auth.refusal())}
        assert checked == [extract_parameters(auth.HASHER.hash("x"))] * 3
        # The refusals changed the audit only (a locked account's count stays as it was).
        after = s.snapshot()
        assert {k for k in after if after[k] != before[k]} == {"audit"}
        assert s.integrity_check() == "ok"
