"""Every command has help text with an example and is documented in the README
(the way sqlite-utils checks its docs against --help)."""


import pytest

from tests.support import REPO
from tracker.cli import main

README = (REPO / "README.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("name", sorted(main.commands))
def test_command_has_help_with_example(name, runner):
    res = runner.invoke(main, [name, "--help"])
    assert res.exit_code == 0, res.output
    assert main.commands[name].help, f"{name} has no help text"
    assert "Example:" in res.output, f"{name} --help has no Example: block"


@pytest.mark.parametrize("name", sorted(main.commands))
def test_command_is_in_readme(name):
    assert f"pourback {name}" in README, f"`pourback {name}` is missing from README.md"


def _examples(name: str, runner) -> list[str]:
    text = runner.invoke(main, [name, "--help"]).output
    block = text.split("Example:", 1)[1].split("Options:", 1)[0]
    return [line.strip() for line in block.splitlines() if line.strip()]


@pytest.mark.parametrize("name", sorted(main.commands))
def test_help_examples_are_one_whole_command_per_line(name, runner, tmp_path, monkeypatch):
    import shlex

    monkeypatch.chdir(tmp_path)  # files an example names exist (empty) for the parse
    for f in ("cert.pem", "key.pem"):
        (tmp_path / f).write_text("")

    for line in _examples(name, runner):
        command = line.rsplit("| ", 1)[-1]  # a pipeline feeds the command its input
        assert command.startswith(f"pourback {name}"), f"{name}: {line!r} is not a whole command"
        assert not line.endswith("\\"), f"{name}: {line!r} continues on the next line"
        args = shlex.split(command)[1:]
        if name in SERVES | ASKS:  # the others are run below
            # click parses the line as the shell hands it over (choices, types, required options)
            main.commands[name].make_context(name, args[1:])


# Commands that serve the dashboard until stopped are parsed above but not run;
# account commands ask for a password at the terminal, so they are parsed only too.
SERVES = {"dashboard", "demo"}
ASKS = {"user"}


def test_help_examples_run_on_the_demo_log(app_demo_file, tmp_path, monkeypatch, runner):
    """Each example, pasted as shown into a folder holding the demo log (as
    `pourback demo` builds it) and the demo files, runs without an error."""
    import shlex
    import shutil

    from tests.support import SAMPLE

    shutil.copyfile(app_demo_file, tmp_path / "pourback.db")
    shutil.copytree(SAMPLE, tmp_path / "sample_data")
    shutil.copyfile(SAMPLE / "patterns.csv", tmp_path / "patterns.csv")
    (tmp_path / "backups").mkdir()
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("POURBACK_DB", raising=False)
    order = ["init", "import", "log", "correct", "history", "backup", "restore", "size", "check",
             "patterns", "review", "suggest", "what-if", "fit-model"]
    names = [n for n in order if n in main.commands] + sorted(set(main.commands) - set(order) - SERVES - ASKS)
    for name in names:
        for line in _examples(name, runner):
            res = runner.invoke(main, shlex.split(line)[1:])
            assert res.exit_code == 0, f"{line}\n{res.output}"
