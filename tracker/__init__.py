"""Pourback: ties each pattern's riser design to the scrap it causes.

The library holds everything but presentation; the CLI (``tracker.cli``) and
the Streamlit dashboard (``dashboard/``) are thin layers over it.
"""

__version__ = "0.1.0"
