"""The command classes every ``pourback`` command is built with: their help keeps
its ``Example:`` block verbatim."""

from __future__ import annotations

import inspect
from typing import Any

import click


class ExampleCommand(click.Command):
    """A command whose help keeps its ``Example:`` block verbatim: one command per
    line, never rewrapped, so each line pastes into a terminal and runs."""

    def format_help_text(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        text = inspect.cleandoc(self.help or "").partition("\f")[0]
        prose, sep, example = text.partition("Example:")
        if prose.strip():
            formatter.write_paragraph()
            with formatter.indentation():
                formatter.write_text(prose.strip())
        if sep:
            formatter.write_paragraph()
            with formatter.indentation():
                formatter.write_text("Example:")
                formatter.write_paragraph()
                with formatter.indentation():
                    for line in example.strip("\n").splitlines():
                        formatter.write(f"{'':>{formatter.current_indent}}{line.strip()}\n" if line.strip()
                                        else "\n")


class ExampleGroup(click.Group):
    """A group whose commands, and sub-groups' commands, format their examples the same way."""

    command_class = ExampleCommand
    group_class = type  # sub-groups (``pourback user``) are ExampleGroups too


def command(name: str | None = None, **kwargs: Any) -> Any:
    """``click.command`` building an :class:`ExampleCommand`."""
    return click.command(name, cls=ExampleCommand, **kwargs)


def group(name: str | None = None, **kwargs: Any) -> Any:
    """``click.group`` building an :class:`ExampleGroup`."""
    return click.group(name, cls=ExampleGroup, **kwargs)
