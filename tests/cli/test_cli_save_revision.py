"""`pourback what-if ... --save-revision REV --effective-from DAY`: the what-if saved as
the pattern's next riser revision, every unchanged riser carried over."""

import json

from tracker.cli import main
from tracker.log import accounts as auth
from tracker.log.ingest.next_revision import stored_risers
from tracker.log.store import Store

WHAT_IF = ["what-if", "--pattern", "T-100", "--riser", "R2", "--sleeve", "none", "--diameter-mm", "120"]


def test_what_if_saved_as_the_next_revision(runner, db):
    res = runner.invoke(main, [*WHAT_IF, "--db", str(db), "--save-revision", "B", "--effective-from", "2026-04-01",
                               "--by", "methods-eng", "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["saved_revision"] == {"revision": "B", "effective_from": "2026-04-01", "base": "A",
                                     "changed": ["R2"], "carried_over": ["R1"]}
    with Store(db) as s:
        old = {r["riser"]: r for r in stored_risers(s, "T-100", "A")}
        new = {r["riser"]: r for r in stored_risers(s, "T-100", "B")}
        assert new["R1"] == old["R1"]
        # the what-if's own figures are what is stored: a bare riser of its size
        assert (new["R2"]["diameter_mm"], new["R2"]["height_mm"], new["R2"]["sleeve"]) == (
            out["diameter_mm"], out["height_mm"], None)
        assert auth.audit_log(s)[-1]["user"] == "methods-eng"
    # the same code again is refused in one line, and nothing more is stored
    res = runner.invoke(main, [*WHAT_IF, "--db", str(db), "--save-revision", "B", "--effective-from", "2026-05-01"])
    assert res.exit_code == 1
    assert res.output == ("Error: revision: got 'B'; T-100 has a revision B already (in effect from 2026-04-01); "
                          "give the new revision a new code\n")
    with Store(db) as s:
        assert s.revisions_frame("T-100")["revision"].tolist() == ["A", "B"]


def test_save_revision_and_effective_from_go_together(runner, db):
    res = runner.invoke(main, [*WHAT_IF, "--db", str(db), "--save-revision", "B"])
    assert res.exit_code == 2
    assert "--save-revision needs --effective-from YYYY-MM-DD" in res.output
    res = runner.invoke(main, [*WHAT_IF, "--db", str(db), "--effective-from", "2026-04-01"])
    assert res.exit_code == 2
    assert "--effective-from needs --save-revision REV" in res.output
