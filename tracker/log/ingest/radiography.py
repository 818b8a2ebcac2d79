"""Reference-radiograph categories and the defect each one shows: the one mapping
that the import, the bench form and corrections check a record against.

The categories are those of the ASTM reference radiographs for steel castings
(E446, E186, E280): A gas porosity, B sand and slag inclusions, C shrinkage
(types CA, CB, CC, CD), D cracks, E hot tears, F inserts, G mottling. The log
has no defect of its own for an insert (an unfused chaplet or chill) or for
mottling (a diffraction pattern, not a discontinuity): both are ``other``.
"""

from __future__ import annotations

# category -> (its name, the log's defects it shows)
CATEGORIES: dict[str, tuple[str, tuple[str, ...]]] = {
    "A": ("gas porosity", ("gas",)),
    "B": ("sand and slag inclusions", ("sand", "slag")),
    "CA": ("shrinkage", ("shrinkage",)),
    "CB": ("shrinkage", ("shrinkage",)),
    "CC": ("shrinkage", ("shrinkage",)),
    "CD": ("shrinkage", ("shrinkage",)),
    "D": ("cracks", ("crack",)),
    "E": ("hot tears", ("hot_tear",)),
    "F": ("inserts", ("other",)),
    "G": ("mottling", ("other",)),
}
STANDARDS = "ASTM E446/E186/E280"


def categories_of(defect: str) -> list[str]:
    """The categories a radiograph of ``defect`` falls in ([] for one no radiograph shows)."""
    return [cat for cat, (_, defects) in CATEGORIES.items() if defect in defects]


def conflict(defect: str, category: str) -> str | None:
    """Why ``defect`` contradicts radiograph ``category`` (None when they agree or one
    is blank): both named, with the mapping's entries for each."""
    if not defect or not category or category not in CATEGORIES:
        return None
    name, defects = CATEGORIES[category]
    if defect in defects:
        return None
    cats = categories_of(defect)
    shows = f"is category {_either(cats)}" if cats else "has no radiograph category"
    return (f"defect {defect} contradicts radiograph category {category}: by the {STANDARDS} categories, "
            f"{category} ({name}) is defect {_either(defects)}, and {defect} {shows}")


def _either(words) -> str:
    words = list(words)
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]


def mapping_rows() -> list[dict]:
    """The mapping as a table (for the docs and the form's help), one row per category."""
    return [{"category": cat, "name": name, "defects": ", ".join(defects)}
            for cat, (name, defects) in CATEGORIES.items()]
