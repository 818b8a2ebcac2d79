"""Pourback dashboard: the entry script (``pourback dashboard`` runs it).

Reads the log's path from $POURBACK_DB. Each page is one file next to this
one; charts live in ``charts.py``; shared helpers in ``common.py``. Library
errors raised while a page runs are shown by ``common.show_error``, never as
a traceback.
"""

from __future__ import annotations

import pathlib

import streamlit as st

from dashboard import access, common

# A file served by the app itself: a ":material/...:" page icon makes the browser fetch
# the favicon from an outside font host, on every page.
ICON = pathlib.Path(__file__).with_name("icon.png")
st.set_page_config(page_title="Pourback", page_icon=ICON, layout="wide")

# file, title, icon, address; "/" opens the first (through HOME below)
SPECS = [
    ("log_results.py", "Log results", ":material/edit_note:", "log"),
    ("weekly_review.py", "Weekly review", ":material/calendar_view_week:", "review"),
    ("design_map.py", "Design map", ":material/scatter_plot:", "design-map"),
    ("pattern_file.py", "Pattern file", ":material/folder_open:", "pattern"),
    ("suggestions.py", "Suggestions", ":material/tune:", "suggestions"),
    ("design_form.py", "Pattern design", ":material/design_services:", "design"),
]
HOME_URL = "home"  # the hidden start page at "/" (see HOME below)
TEAM = ("team.py", "Team", ":material/group:", "team")  # admins, signed in

# Served with sign-in, a visitor sees the sign-in form and nothing else until signed in.
if not access.gate(common.db_path(), [HOME_URL, *(url for *_, url in (*SPECS, TEAM))]):
    st.stop()
if access.session() is not None and access.can("users"):
    SPECS.append(TEAM)
PAGES = [st.Page(file, title=title, icon=icon, url_path=url) for file, title, icon, url in SPECS]
LOG = PAGES[0]


def _home() -> None:
    st.switch_page(LOG)


# Streamlit serves its default page at "/" whatever its url_path, so "/log" would be
# "page not found": the default is a hidden page that moves on to /log, and every
# visible page keeps its own address.
HOME = st.Page(_home, title="Pourback", url_path=HOME_URL, default=True, visibility="hidden")

page = st.navigation([HOME, *PAGES])
common.style()

with common.guard():
    common.plant_picker()  # before the page: its figures follow the picked plant
    common.unit_switch()  # before the page: its numbers follow the system picked

with common.guard():
    page.run()

# The caution closes every page, whatever the page showed (or failed to show).
common.caution()

# After the page, so the counts include what the page just wrote.
with st.sidebar:
    access.sidebar(common.db_path())
    st.caption("Log")
    st.text(common.db_name())
    with common.guard():
        counts = common.load("start_state")["counts"]
        st.caption(f"{counts['patterns']:,} patterns · {counts['lots']:,} lots · "
                   f"{counts['inspections']:,} inspection records")
