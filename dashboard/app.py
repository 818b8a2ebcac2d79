"""Pourback dashboard: the entry script (``pourback dashboard`` runs it).

Reads the log's path from $POURBACK_DB. Each page is one file next to this
one; charts live in ``charts.py``; shared helpers in ``common.py``. Library
errors raised while a page runs are shown by ``common.show_error``, never as
a traceback.
"""

from __future__ import annotations

import streamlit as st

from dashboard import common

st.set_page_config(page_title="Pourback", page_icon=":material/insights:", layout="wide")

LOG = st.Page("log_results.py", title="Log results", icon=":material/edit_note:", url_path="log")
PAGES = [
    LOG,
    st.Page("weekly_review.py", title="Weekly review", icon=":material/calendar_view_week:",
            url_path="review"),
    st.Page("design_map.py", title="Design map", icon=":material/scatter_plot:", url_path="design-map"),
    st.Page("pattern_file.py", title="Pattern file", icon=":material/folder_open:", url_path="pattern"),
    st.Page("suggestions.py", title="Suggestions", icon=":material/tune:", url_path="suggestions"),
]


def _home() -> None:
    st.switch_page(LOG)


# Streamlit serves its default page at "/" whatever its url_path, so "/log" would be
# "page not found": the default is a hidden page that moves on to /log, and every
# visible page keeps its own address.
HOME = st.Page(_home, title="Pourback", url_path="home", default=True, visibility="hidden")

page = st.navigation([HOME, *PAGES])
common.style()

with common.guard():
    page.run()

# The caution closes every page, whatever the page showed (or failed to show).
common.caution()

# After the page, so the counts include what the page just wrote.
with st.sidebar:
    st.caption("Log file")
    st.text(common.db_path())
    with common.guard():
        counts = common.load("start_state")["counts"]
        st.caption(f"{counts['patterns']:,} patterns · {counts['lots']:,} lots · "
                   f"{counts['inspections']:,} inspection records")
