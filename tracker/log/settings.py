"""Settings kept in the log itself (its ``meta`` table), set once for the log and
changeable later: the currency money is counted in, and the unit system
(``metric`` or ``us``) numbers are typed and shown in.

The currency is an ISO 4217 three-letter code ("EUR", "USD", "GBP"); every
cost the log holds (metal cost per kg, processing cost, sleeve cost) is in
it, and every figure of money the tool shows names it.
"""

from __future__ import annotations

import re

from tracker import units as _units
from tracker.errors import BadInput
from tracker.log.store import Store

CURRENCY_KEY = "currency"
DEFAULT_CURRENCY = "EUR"
_CODE = re.compile(r"^[A-Za-z]{3}$")


def check_currency(code) -> str:
    """A currency code in capitals, or ``BadInput`` saying how to write it."""
    text = code.strip() if isinstance(code, str) else code
    if not isinstance(text, str) or not _CODE.match(text):
        raise BadInput("currency", code, "give the three-letter ISO 4217 code of the currency the log's "
                                         "costs are in, e.g. EUR, USD or GBP")
    return text.upper()


def currency(store: Store) -> str:
    """The log's currency code (``DEFAULT_CURRENCY`` until one is set)."""
    return store.get_meta(CURRENCY_KEY) or DEFAULT_CURRENCY


def set_currency(store: Store, code) -> str:
    """Set the log's currency; returns the stored code. The costs already logged
    are not converted: they are taken to be in the new currency."""
    value = check_currency(code)
    store.set_meta(CURRENCY_KEY, value)
    return value


UNITS_KEY = "units"


def units(store: Store) -> str:
    """The log's unit system, ``metric`` (the default) or ``us``."""
    return store.get_meta(UNITS_KEY) or _units.DEFAULT_SYSTEM


def set_units(store: Store, system) -> str:
    """Set the log's unit system; returns it. Only the edges change: the log
    keeps every figure in metric, so nothing stored is converted."""
    value = _units.check_system(system)
    store.set_meta(UNITS_KEY, value)
    return value


def resolve_units(store: Store | None, override=None) -> str:
    """The unit system a command works in: ``override`` (a command's
    ``--units``) when given, else the log's setting, else metric (a command
    run without a log)."""
    if override is not None:
        return _units.check_system(override)
    if store is not None:
        return units(store)
    return _units.DEFAULT_SYSTEM


def settings(store: Store) -> dict:
    """Every setting of the log with its value."""
    return {"currency": currency(store), "units": units(store)}
