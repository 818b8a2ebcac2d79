"""Text cells: characters that do not print, and codes spelled as the log spells them."""

from __future__ import annotations

import re
import unicodedata

import pandas as pd

from tracker.log.ingest.columns import ALIASES

# Characters that print as nothing or reorder the text around them (Unicode category Cf:
# zero-width spaces and joiners, bidirectional marks and overrides, soft hyphen, word
# joiner, byte-order mark), and line or paragraph separators. A code holding one looks
# like another code but is not equal to it.
_INVISIBLE_CHARS = [chr(c) for c in range(0x110000)
                    if unicodedata.category(chr(c)) in ("Cf", "Zl", "Zp")]
INVISIBLE = "[" + "".join(re.escape(ch) for ch in _INVISIBLE_CHARS) + "]"
_INVISIBLE_RE = re.compile(INVISIBLE)
# Control characters other than tab, line feed and carriage return.
CONTROL = r"[\x00-\x08\x0b\x0c\x0e-\x1f]"
LINE_BREAK = r"[\t\n\r\x85]"  # allowed in free text only


def prints(values: list) -> bool:
    """Whether every character of ``values`` prints (``str.isprintable``: no control
    character, none of Unicode's categories Cf, Zl, Zp, nor any other that prints as
    nothing); False for a missing value."""
    try:
        return "".join(values).isprintable()
    except TypeError:
        return False


def code_spelling(value: str, lower: bool) -> str:
    """A code as the fixed lists spell it: lower case, spaces and hyphens as
    underscores, the spelling variants of ALIASES (``lower``); or upper case.
    A missing value (NaN) stays missing."""
    if not isinstance(value, str):
        return value
    if not lower:
        return value.upper()
    value = value.lower().replace(" ", "_").replace("-", "_")
    return ALIASES.get(value, value)


def invisible_text(name: str, value: str) -> str:
    """The problem of a value holding an invisible character: which one, and where."""
    m = _INVISIBLE_RE.search(value)
    assert m is not None, "called only for a value that holds one"
    ch = m.group(0)
    label = unicodedata.name(ch, "an unnamed format character")
    return (f"{name} holds an invisible character (U+{ord(ch):04X} {label}) at character {m.start() + 1}; "
            "retype the value without it")


def log_spelling(values: pd.Series, patterns: list, known: dict) -> pd.Series:
    """Zone codes as the log spells them: a code that matches a stored zone of
    its pattern only when case is ignored ("Boss" for "boss") takes the stored
    spelling; an exact match always wins."""
    folded: dict = {}

    def stored(p: str, z: str) -> str:
        if not folded:  # built only when a code is not spelled as stored (rare)
            for q, y in known:
                folded.setdefault((q, fold(y)), y)
        return folded.get((p, fold(z)), z)

    out = [z if not z or (p, z) in known else stored(p, z) for p, z in zip(patterns, values.tolist(), strict=False)]
    return pd.Series(out, index=values.index, dtype=object)


def zones_text(known: dict, pattern: str) -> str:
    """A pattern's stored zones, as a problem names them."""
    zones = sorted(z for p, z in known if p == pattern)
    return f"its zones are {', '.join(zones)}" if zones else "it has no zones yet"


def fold(code: str) -> str:
    """A code as compared for look-alikes: Unicode compatibility form, case folded."""
    return unicodedata.normalize("NFKC", str(code)).casefold()
