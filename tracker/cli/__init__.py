"""The ``pourback`` command line: parse, call the library, format.

No computation lives here; every command is a thin layer over ``tracker``.
The group and its list of commands are in :mod:`tracker.cli.group`; each
``cmd_*`` module holds plain click commands built on the shared options
(:mod:`tracker.cli.options`), output (:mod:`tracker.cli.output`) and error
handling (:mod:`tracker.cli.errors`).
"""

from tracker.cli.group import main

__all__ = ["main"]

if __name__ == "__main__":  # pragma: no cover
    main(prog_name="pourback")
