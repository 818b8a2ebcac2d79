"""Every command has help text with an example and is documented in the README
(the way sqlite-utils checks its docs against --help)."""

import pathlib

import pytest

from tracker.cli import main

README = (pathlib.Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("name", sorted(main.commands))
def test_command_has_help_with_example(name, runner):
    res = runner.invoke(main, [name, "--help"])
    assert res.exit_code == 0, res.output
    assert main.commands[name].help, f"{name} has no help text"
    assert "Example:" in res.output, f"{name} --help has no Example: block"


@pytest.mark.parametrize("name", sorted(main.commands))
def test_command_is_in_readme(name):
    assert f"pourback {name}" in README, f"`pourback {name}` is missing from README.md"
