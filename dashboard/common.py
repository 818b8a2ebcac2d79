"""What every page shares: the log's path, cached loads, the one error display,
the page header with the safety caution, and the start message.

Pages call the library through :func:`load` (cached on the database path and
its data version, so reruns on a big log are fast) and write through
:func:`open_store`. Nothing here computes results; that is ``tracker``'s job.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import math

import streamlit as st

from dashboard import access
from dashboard.format import md_escape
from tracker import limits, units
from tracker.advice import features, fitting, what_if
from tracker.advice import suggest as advise
from tracker.cautions import SAFETY_CAUTION
from tracker.csvsafe import csv_bytes
from tracker.errors import BadFile, PourbackError
from tracker.log import actions as log_actions
from tracker.log import settings
from tracker.log.store import DATABASE_ERRORS, Store, absolute_target, display_name, log_error
from tracker.review import plants as plant_review
from tracker.review import rates
from tracker.review import weekly as review
from tracker.views import casting_3d
from tracker.views import common as views
from tracker.views import design_form as design_form_views
from tracker.views import design_map as map_views
from tracker.views import log_results as log_views
from tracker.views import pack as review_pack
from tracker.views import pattern_file as pattern_views
from tracker.views import suggestions as suggestion_views
from tracker.views import thermal as thermal_views

START_COMMANDS = "pourback demo"

# The library calls a page may load (cached). Each takes an open Store first.
def _registry() -> dict:
    return {
        "start_state": views.start_state,
        "pattern_options": views.pattern_options,
        "alloy_options": views.alloy_options,
        "lot_options": log_views.lot_options,
        "zone_options": log_views.zone_options,
        "latest_records": log_views.latest_records,
        "lot_accounting": log_views.lot_accounting,
        "lot_records": log_views.lot_records,
        "week_options": views.week_options,
        "default_week": review.default_week,
        "current_revisions": map_views.current_revisions,
        "pattern_weekly": pattern_views.pattern_weekly,
        "pattern_summary": pattern_views.pattern_summary,
        "risers_by_revision": pattern_views.risers_by_revision,
        "pattern_track_record": pattern_views.pattern_track_record,
        "pattern_zones": pattern_views.pattern_zones,
        "revision_marks": pattern_views.revision_marks,
        "caine_curve": map_views.caine_curve,
        "riser_options": suggestion_views.riser_options,
        "sleeve_options": suggestion_views.sleeve_options,
        "pour_span": lambda s: s.pour_span(),
        "plant_options": lambda s: s.plants(),
        "compare_plants": plant_review.compare_plants,
        "currency": settings.currency,
        "unit_setting": settings.units,
        "weekly_review": review.weekly_review,
        "weekly_review_in": lambda s, system, **kw: review.in_system(review.weekly_review(s, **kw), system),
        "problem_patterns": review.problem_patterns,
        "design_map": features.design_map,
        "suggest": advise.suggest,
        "model_is_current": fitting.model_is_current,
        "what_if": what_if.what_if,
        "pattern_reject_rate": rates.pattern_reject_rate,
        "pattern_thermal": thermal_views.pattern_thermal,
        "what_if_thermal": thermal_views.what_if_view,
        "actions": log_actions.list_actions,
        "review_pack": review_pack.pack_of,
        "design_start": design_form_views.design_start,
        "sleeve_codes": design_form_views.sleeve_codes,
        "alloy_codes": design_form_views.alloy_codes,
        "has_casting": casting_3d.has_casting,
        "casting_view": casting_3d.casting_view,
    }


def db_path() -> str:
    """The log: $POURBACK_DB (set by ``pourback dashboard``), else ./pourback.db; a
    file path made absolute, or a postgresql:// URL (print :func:`db_name`)."""
    return absolute_target(None)


def db_name() -> str:
    """The log's path or URL fit to show (a URL's password masked)."""
    return display_name(db_path())


def open_store() -> Store:
    """A new connection to the log for a write (close it: use ``with``): made as
    the signed-in user, whose role the library checks on every write. A missing
    log is an error, never created here: only ``pourback init`` and ``demo``
    create one."""
    return access.open_store(db_path())


@st.cache_data(show_spinner=False, max_entries=256)
def _cached(path: str, version: tuple, plant: str | None, name: str, args: tuple, kwargs: tuple):
    fn = _registry()[name]
    with Store(path, create=False) as store, store.plant_scope(plant):
        return fn(store, *args, **dict(kwargs))


_COMPUTED: set = set()  # the loads this server process has computed (and cached)


def load(name: str, *args, status: str | None = None, every_plant: bool = False, **kwargs):
    """``name``'s result on the log, for the plant picked in the sidebar (every
    plant with ``every_plant``), cached until the log changes.

    ``status``: for a load that can take seconds on a big log, the label of
    a Streamlit status element shown while it is computed (not when the
    result comes from the cache); it is cleared when the result is in.
    """
    path = db_path()
    key = (path, views.db_version(path), None if every_plant else plant(), name, args,
           tuple(sorted(kwargs.items())))
    mark = repr(key)  # hashable where an argument is not (a dict)
    if status is None or mark in _COMPUTED:
        return _cached(*key)
    box = st.empty()
    with box.status(status + " ...", expanded=False):
        result = _cached(*key)
    box.empty()
    _COMPUTED.add(mark)
    return result


# --- plants -------------------------------------------------------------------------------

ALL_PLANTS = "All plants"


def plant_picker() -> None:
    """The sidebar's plant picker (only when the log names plants); every page's
    figures follow it. Default: all plants."""
    plants = load("plant_options", every_plant=True)
    if st.session_state.get("plant") not in (None, ALL_PLANTS, *plants):
        st.session_state["plant"] = ALL_PLANTS  # a plant no longer in the log
    if plants:
        st.sidebar.selectbox("Plant", [ALL_PLANTS, *plants], key="plant",
                             help="Figures on every page cover this plant's patterns only.")


def plant() -> str | None:
    """The plant picked in the sidebar, None for all plants."""
    picked = st.session_state.get("plant")
    return None if picked in (None, ALL_PLANTS) else picked


def forget() -> None:
    """Drop cached results (after this session wrote to the log)."""
    _cached.clear()


# --- text -------------------------------------------------------------------------------

def pct(value, digits: int = 1) -> str:
    """A percentage for display ("-" where undefined)."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return "-"
    return "-" if math.isnan(v) else f"{v:.{digits}f} %"


def money(value) -> str:
    """An amount in whole currency units, thousands separated ("-" where undefined)."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return "-"
    return "-" if math.isnan(v) else f"{v:,.0f}"  # not numbers.money_text: "inf" stays "inf"


# --- the one place errors are shown -------------------------------------------------------

def show_error(exc: PourbackError) -> None:
    """Show a library error as the user should see it: one message, and for a
    refused file every refused row in a table. Never a traceback."""
    if isinstance(exc, BadFile):
        head = str(exc).splitlines()[0]
        st.error(md_escape(head))
        if exc.problems:
            st.dataframe(views.problems_frame(exc.problems), hide_index=True, width="stretch")
    else:
        st.error(md_escape(str(exc)))


@contextlib.contextmanager
def guard():
    """Run a block; a library error is shown with :func:`show_error` instead of
    raised, and so is a failure of the machine (SQLite, a file that cannot be
    written): one line, never a traceback."""
    try:
        yield
    except PourbackError as exc:
        show_error(exc)
    except DATABASE_ERRORS as exc:
        show_error(log_error(exc, db_path()))
    except OSError as exc:
        st.error(md_escape(f"could not read or write {exc.filename or 'a file'}: {exc.strerror or exc}"))


# --- downloads ---------------------------------------------------------------------------

def download_csv(frame, label: str, file_name: str, key: str) -> None:
    """A download of ``frame`` as CSV, every cell through the project's formula
    guard (the tables' built-in download is off: ``client.disableDataExport``)."""
    st.download_button(label, data=csv_bytes(frame), file_name=file_name, mime="text/csv", key=key,
                       icon=":material/download:", disabled=frame is None or len(frame) == 0)


# --- tables ----------------------------------------------------------------------------

def pinned(config: dict, *columns: str) -> dict:
    """``config`` (a dataframe's column_config) with ``columns`` pinned: they stay in view,
    on the left, when a narrow screen (800 px) scrolls the table sideways."""
    out = dict(config)
    for c in columns:
        out[c] = {**(out.get(c) or st.column_config.Column()), "pinned": True}
    return out


# --- unit system --------------------------------------------------------------------------

_UNITS = "unit_system"  # this browser session's choice (the sidebar switch's key)
UNIT_WORDS = {units.METRIC: "metric", units.US: "US customary"}
_UNIT_LIST = {units.METRIC: "mm, cm, cm², cm³, kg, °C", units.US: "in, in², in³, lb, °F"}


def unit_system() -> str:
    """The unit system this browser session reads and types numbers in: the
    sidebar switch, else the log's setting (``pourback settings --units``)."""
    picked = st.session_state.get(_UNITS)
    return picked if picked in units.SYSTEMS else load("unit_setting")


def unit_switch() -> None:
    """The sidebar's unit-system switch. It changes what this browser session shows
    and takes, never the log (everything is stored in metric); where the user may
    change the log's settings, a button makes the choice the log's default."""
    log_default = load("unit_setting")
    if st.session_state.get(_UNITS) not in units.SYSTEMS:
        st.session_state[_UNITS] = log_default
    with st.sidebar:
        chosen = st.radio("Units shown and typed", units.SYSTEMS, format_func=UNIT_WORDS.get, key=_UNITS,
                          help="For this browser session only: every page shows and takes numbers in these "
                               f"units (metric: {_UNIT_LIST[units.METRIC]}; US customary: {_UNIT_LIST[units.US]}). "
                               "The log stores every figure in metric and keeps its own default, "
                               f"{UNIT_WORDS[log_default]} (`pourback settings --units`).")
        if chosen != log_default and access.can("settings"):
            st.button("Make this the log's default", key="units_make_default", on_click=_make_default,
                      args=(chosen,), help="Every browser and command then opens in these units. "
                                           "No figure in the log changes.")


def _make_default(system: str) -> None:
    with guard(), open_store() as store:
        settings.set_units(store, system)
        forget()


def unit(metric_name: str) -> str:
    """The unit symbol of a metric quantity in this session's system: unit("diameter_mm") is "in" in us."""
    return units.symbol(metric_name, unit_system())


def shown(metric_name: str, value):
    """A metric value of ``metric_name`` in this session's unit system (for display)."""
    return units.to_system(metric_name, value, unit_system())


# Before a source quoted as published (its own units, whatever the session's system).
PUBLISHED_FORM = "source, in its published units:"


def length_format() -> str:
    """A table's number format for lengths: whole millimetres; inches to 2 decimals (6.50)."""
    return "%.2f" if unit_system() == units.US else "%.0f"


# --- page furniture -----------------------------------------------------------------------

def flagged_patterns() -> list[str]:
    """The patterns the default review (default week, weeks and target) flags, worst
    first ([] for a log without pours): its problem list alone, not the whole review."""
    if not load("start_state")["ready"]:
        return []
    week = load("default_week", today=dt.date.today().isoformat())
    return load("problem_patterns", week=week, weeks=limits.WEEKS_DEFAULT, target=limits.TARGET_DEFAULT,
                status=f"Finding the patterns the review of {week} flags")


_GOTO = "pourback_open_pattern"


def open_pattern_later(code: str) -> None:
    """From a widget callback: open ``code``'s pattern file on the rerun that follows."""
    st.session_state[_GOTO] = code


def follow_pattern_link() -> None:
    """Switch to the pattern file asked for by :func:`open_pattern_later`, if any."""
    code = st.session_state.pop(_GOTO, None)
    if code:
        st.switch_page("pattern_file.py", query_params={"pattern": code})


def review_controls() -> tuple[str, int, float]:
    """Review week, weeks in the window and target reject rate (%), the same on every page:
    the week opens on the last complete week with pours; limits from ``tracker.limits``."""
    weeks_available = load("week_options")
    default = load("default_week", today=dt.date.today().isoformat())
    c1, c2, c3 = st.columns([2, 1, 1])
    week = c1.selectbox("Review week (ISO week of pour)", weeks_available, key="week",
                        index=weeks_available.index(default) if default in weeks_available else 0,
                        help="Opens on the last complete week with pours; a week still running is "
                             "never the default.")
    weeks = c2.number_input("Weeks in the window", min_value=limits.WEEKS_MIN, max_value=limits.WEEKS_MAX,
                            value=limits.WEEKS_DEFAULT, step=1, key="weeks", help=limits.WEEKS_HELP)
    target = c3.number_input("Target reject rate (%)", min_value=100 * limits.TARGET_MIN,
                             max_value=100 * limits.TARGET_MAX, value=100 * limits.TARGET_DEFAULT, step=0.5,
                             format="%.1f", key="target", help=limits.TARGET_HELP.replace("a fraction", "%"))
    return week, int(weeks), float(target)


# Below this window width (px) the sidebar starts collapsed: a tablet's 800 px then
# gives the page its whole width (the menu stays one tap away, top left).
NARROW_PX = 1000

_STYLE = """
<style>
/* metric labels and values wrap instead of being cut off with an ellipsis */
[data-testid="stMetricLabel"], [data-testid="stMetricLabel"] * ,
[data-testid="stMetricValue"], [data-testid="stMetricValue"] * {
  white-space: normal !important; overflow: visible !important; text-overflow: clip !important;
}
[data-testid="stMetricValue"] > div { overflow-wrap: anywhere; }
@media (max-width: %(narrow)dpx) {
  [data-testid="stMetricValue"] { font-size: 1.6rem !important; }
  [data-testid="stMainBlockContainer"] { padding-left: 1.5rem !important; padding-right: 1.5rem !important; }
}
</style>
"""

_COLLAPSE = """
<script>
(function () {
  // once per browser tab: a reader who opens the menu again keeps it open
  const KEY = "pourback-sidebar-collapsed";
  if (window.innerWidth >= %(narrow)d || window.sessionStorage.getItem(KEY)) { return; }
  let tries = 0;
  const timer = window.setInterval(function () {
    const button = document.querySelector('[data-testid="stSidebarCollapseButton"] button');
    if (button && button.getAttribute("aria-expanded") === "true") {
      button.click();
      window.sessionStorage.setItem(KEY, "1");
      window.clearInterval(timer);
    } else if (++tries > 50) {
      window.clearInterval(timer);
    }
  }, 100);
})();
</script>
"""


def style() -> None:
    """The dashboard's layout rules: wrapping metrics, and the sidebar collapsed below NARROW_PX."""
    st.html(_STYLE % {"narrow": NARROW_PX})
    with st.sidebar:
        st.html(_COLLAPSE % {"narrow": NARROW_PX}, unsafe_allow_javascript=True)


def header(title: str, intro: str) -> None:
    st.title(title)
    st.caption(intro)


def caution() -> None:
    """The safety caution, shown on every page."""
    st.warning("**Caution.** " + SAFETY_CAUTION, icon=":material/engineering:")


def start_message(state: dict, needs: str = "results") -> None:
    """A helpful first step for an empty (or half-filled) log instead of an error."""
    counts = state["counts"]
    if not any(counts.values()):
        st.info(
            "**The log is empty.** To start, import your files on the **Log results** page "
            "in this order: patterns, zones, sleeves, risers, lots, inspections (CSV or xlsx). "
            f"To look around first, run `{START_COMMANDS}` in a terminal: it builds an invented "
            "demo foundry and opens this dashboard on it.", icon=":material/start:")
        return
    missing = ", ".join(state["missing"]) or "nothing"
    st.info(f"**Not enough in the log yet for {needs}.** Still empty: {missing}. Import those "
            "on the **Log results** page.", icon=":material/info:")
