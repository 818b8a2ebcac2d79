"""``python -m tracker``: the ``pourback`` command line."""

from tracker.cli import main

if __name__ == "__main__":
    main()
