"""Progress of long commands: a step status on standard error, on a terminal
only and never with --json (plumbing tests on the demo log)."""

import io
import json
import time

import pytest

from tests.support import REPO
from tracker.cli import main
from tracker.cli import output as cli
from tracker.cli.steps import Steps

ROOT = REPO
SAMPLE = ROOT / "sample_data"


@pytest.fixture(scope="module")
def demo_db(tmp_path_factory):
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    path = tmp_path_factory.mktemp("progress") / "log.db"
    with Store(path) as s:
        import_dir(s, SAMPLE)
    return str(path)


@pytest.fixture
def terminal(monkeypatch):
    """Standard error taken for a terminal, and every step shown at once."""
    monkeypatch.setattr(cli, "stderr_is_terminal", lambda: True)
    monkeypatch.setattr(Steps, "DELAY_S", 0.0)
    monkeypatch.setattr(Steps, "TICK_S", 0.01)


def test_steps_show_label_and_seconds_then_close_each_line():
    out = io.StringIO()
    with Steps(True, out) as steps:
        steps.DELAY_S = 0.0
        steps.step("Reading")
        time.sleep(0.5)
        steps.step("Writing")
        time.sleep(0.5)
    text = out.getvalue()
    done = [line.rsplit("\r\x1b[K", 1)[-1] for line in text.split("\n") if line]
    assert [d.split(" ... ")[0] for d in done] == ["Reading", "Writing"]
    assert all(d.endswith(" s") for d in done)
    assert float(done[0].split(" ... ")[1][:-2]) >= 0.4


def test_quick_steps_and_hidden_steps_print_nothing():
    out = io.StringIO()
    with Steps(True, out) as steps:
        steps.step("Quick")  # closed long before DELAY_S
    assert out.getvalue() == ""
    out = io.StringIO()
    with Steps(False, out) as steps:
        steps.step("Hidden")
        time.sleep(Steps.DELAY_S + 0.1)
    assert out.getvalue() == ""


def test_a_failed_step_clears_its_line():
    out = io.StringIO()
    with pytest.raises(ValueError), Steps(True, out) as steps:
        steps.DELAY_S = 0.0
        steps.step("Failing")
        time.sleep(0.3)
        raise ValueError("x")
    assert out.getvalue().endswith("\r\x1b[K")


@pytest.mark.parametrize("args", [["review", "--weeks", "52"], ["fit-model", "--folds", "2"],
                                  ["suggest"]])
def test_long_commands_show_steps_on_a_terminal(runner, demo_db, terminal, args):
    res = runner.invoke(main, [*args, "--db", demo_db])
    assert res.exit_code == 0, res.output
    assert " ... " in res.stderr and res.stderr.rstrip().endswith(" s")
    assert " ... " not in res.stdout


@pytest.mark.parametrize("args", [["review", "--weeks", "52", "--json"], ["review", "--format", "json"],
                                  ["fit-model", "--folds", "2", "--json"], ["suggest", "--json"]])
def test_json_output_carries_no_status_even_on_a_terminal(runner, demo_db, terminal, args):
    res = runner.invoke(main, [*args, "--db", demo_db])
    assert res.exit_code == 0, res.output
    assert res.stderr == ""
    json.loads(res.stdout)


@pytest.mark.parametrize("args", [["review", "--weeks", "52"], ["fit-model", "--folds", "2"]])
def test_no_status_when_stderr_is_not_a_terminal(runner, demo_db, args, monkeypatch):
    monkeypatch.setattr(Steps, "DELAY_S", 0.0)
    res = runner.invoke(main, [*args, "--db", demo_db])
    assert res.exit_code == 0, res.output
    assert res.stderr == ""


def test_import_bar_on_stderr_only_on_a_terminal(runner, tmp_path, terminal, monkeypatch):
    shown = []
    real = cli.progress_bar

    def spy(show, length, label):
        shown.append(show)
        return real(show, length, label)

    monkeypatch.setattr("tracker.cli.cmd_log.progress_bar", spy)
    db = str(tmp_path / "a.db")
    assert runner.invoke(main, ["init", "--db", db]).exit_code == 0  # only init creates a log
    res = runner.invoke(main, ["import", str(SAMPLE), "--db", db, "--json"])
    assert res.exit_code == 0, res.output
    assert shown == [False] and res.stderr == ""
    json.loads(res.stdout)
