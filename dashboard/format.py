"""Text made fit for the page: shared by every page and by the sign-in gate
(``access``), which ``common`` itself imports."""

from __future__ import annotations

import re

_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]()#+\-.!|<>~$:=])")


def md_escape(text) -> str:
    """User text made inert for Streamlit's markdown (no links, images, colours, HTML)."""
    return _MD_SPECIAL.sub(r"\\\1", str(text))
