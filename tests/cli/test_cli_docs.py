"""Every command has help text with an example and is documented in the README,
and every command example in the README and docs/*.md is a whole command that
click parses (the way sqlite-utils checks its docs against --help)."""

import re
import shlex
import subprocess
import sys

import click
import pytest

from tests.support import REPO
from tracker.cli import main

ROOT = REPO
README = (ROOT / "README.md").read_text(encoding="utf-8")
PAGES = [ROOT / "README.md", ROOT / "DEVELOPERS.md", *sorted((ROOT / "docs").glob("*.md"))]


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


# --- command examples in the README and docs/*.md -----------------------------------------------

FENCE = re.compile(r"^```(\w*)")


def _doc_commands(text: str) -> list[str]:
    """The commands a page shows: `$ ...` lines of its console blocks and every
    line of its bash blocks (comments and blank lines left out)."""
    found, kind = [], None
    for raw in text.splitlines():
        line = raw.strip()
        fence = FENCE.match(line)
        if fence:
            kind = None if kind is not None else (fence.group(1) or "text")
            continue
        if kind == "console" and line.startswith("$ "):
            found.append(line[2:])
        elif kind == "bash" and line and not line.startswith("#"):
            found.append(line)
    return found


def _page_examples(prefix: str) -> list[tuple[str, str]]:
    """(page, line) for every example whose command (after a pipeline's last `| `)
    starts with prefix, over the README and every page in docs/."""
    out = []
    for page in PAGES:
        for line in _doc_commands(page.read_text(encoding="utf-8")):
            if line.rsplit("| ", 1)[-1].startswith(prefix):
                out.append((str(page.relative_to(ROOT)), line))
    return out


DOC_EXAMPLES = _page_examples("pourback ") + _page_examples("python -m tracker ")


def _parse(command: click.Command, name: str, args: list[str]) -> None:
    """Let click parse args as the shell hands them over, into a group's subcommand."""
    if isinstance(command, click.Group):  # pourback's groups take no options of their own
        assert args and args[0] in command.commands, f"{name}: no subcommand in {args!r}"
        _parse(command.commands[args[0]], args[0], args[1:])
    else:
        command.make_context(name, list(args))


def test_docs_show_command_examples():
    pages = {page for page, _ in DOC_EXAMPLES}
    assert "README.md" in pages and len(pages) >= 8, pages


@pytest.mark.parametrize(("page", "line"), DOC_EXAMPLES)
def test_doc_examples_are_whole_commands_click_parses(page, line, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # relative files an example names exist (empty) for the parse
    command = line.rsplit("| ", 1)[-1].split("  #", 1)[0]  # a pipeline feeds it; a comment may follow
    assert not line.endswith("\\"), f"{page}: {line!r} continues on the next line"
    words = shlex.split(command)
    args = words[1:] if words[0] == "pourback" else words[3:]
    assert args and args[0] in main.commands, f"{page}: {line!r} names no pourback command"
    for word in args:
        if not word.startswith("-") and word.endswith((".pem", ".csv", ".db")) and "/" not in word:
            (tmp_path / word).write_text("")
    try:
        _parse(main.commands[args[0]], args[0], args[1:])
    except click.BadParameter as e:
        # a file on another machine (/etc/..., /srv/...) is named for the reader, not for this test
        missing_file = e.param is not None and isinstance(e.param.type, click.Path) and "does not exist" in e.message
        assert missing_file, f"{page}: {line}\n{e}"


# Examples that only read the log (or write a file of their own) are run on the demo log
# as `pourback demo` builds it; the others change it, or need a server, files or a terminal.
READS = {"check", "size", "patterns", "review", "suggest", "what-if", "thermal", "history", "settings"}


def test_doc_examples_that_read_the_demo_log_run_on_it(app_demo_file, tmp_path, monkeypatch, runner):
    import shutil

    shutil.copyfile(app_demo_file, tmp_path / "pourback-demo.db")
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("POURBACK_DB", raising=False)
    ran = 0
    for page, line in DOC_EXAMPLES:
        words = shlex.split(line.split("  #", 1)[0])
        args = words[1:] if words[0] == "pourback" else words[3:]
        if args[0] not in READS or "pourback-demo.db" not in args:
            continue
        if args[0] == "settings" and len(args) > 3:  # changes the log's settings
            continue
        res = runner.invoke(main, args)
        assert res.exit_code == 0, f"{page}: {line}\n{res.output}"
        ran += 1
    assert ran >= 8, ran


def test_benchmark_examples_name_its_options():
    lines = _page_examples("python -m benchmarks.scale") + [
        (page, m.group(0))
        for page in map(str, PAGES)
        for m in re.finditer(r"python -m benchmarks\.scale[^`\n]*", (ROOT / page).read_text(encoding="utf-8"))
    ]
    assert lines
    text = subprocess.run([sys.executable, "-m", "benchmarks.scale", "--help"], cwd=ROOT, capture_output=True,
                          text=True, check=True).stdout
    for page, line in lines:
        for option in re.findall(r"(?<![\w-])--[a-z][a-z0-9-]*", line):
            assert option in text, f"{page}: {line!r}: python -m benchmarks.scale has no {option}"


def test_no_page_names_the_old_benchmark_module():
    for page in PAGES:
        assert "tracker.bench" not in page.read_text(encoding="utf-8"), f"{page.name}: now python -m benchmarks.scale"


def test_every_docs_page_is_listed_and_every_link_resolves():
    index = (ROOT / "docs" / "index.md").read_text(encoding="utf-8")
    for page in sorted((ROOT / "docs").glob("*.md")):
        if page.name != "index.md":
            assert f"]({page.name})" in index, f"docs/index.md does not list {page.name}"
    for page in PAGES:
        for target in re.findall(r"\]\(([^)#\s]+)(?:#[^)]*)?\)", page.read_text(encoding="utf-8")):
            if "://" not in target:
                assert (page.parent / target).exists(), f"{page.name}: link to {target} finds no file"
