"""The log's tables as the code names them: each import kind's columns and keys,
the order a copy fills the tables in, and which inspection records count.

A leaf of :mod:`tracker.log`: plain names and one SQL fragment, no connection.
"""

from __future__ import annotations

DEFAULT_PLANT_KEY = "default_plant"  # meta key set by `pourback init --plant`

# Column order of each import kind's table, as stored.
TABLE_COLUMNS = {
    "patterns": ["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                 "metal_cost_per_kg", "processing_cost_per_casting", "mould", "plant"],
    "zones": ["pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
              "required_xray_level", "width_mm", "joined_faces", "x_mm", "y_mm", "z_mm", "modulus_cm"],
    "sleeves": ["sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                "feeding_efficiency", "unit_cost"],
    "revisions": ["pattern", "revision", "effective_from"],
    "risers": ["pattern", "revision", "riser", "zone", "placement", "top", "diameter_mm",
               "height_mm", "sleeve", "neck_diameter_mm", "x_mm", "y_mm", "z_mm", "axis"],
    "lots": ["lot", "pattern", "poured_on", "heat", "molds", "pour_temp_c"],
    "inspections": ["id", "lot", "inspected_on", "method", "quantity", "result", "defect", "zone",
                    "xray_category", "severity", "serial", "inspector", "notes", "record_key",
                    "recorded_at", "recorded_by", "source", "supersedes", "void",
                    "correction_reason"],
}
# Where each column sits in a record's row as written (TABLE_COLUMNS without ``id``).
RECORD = {c: i for i, c in enumerate(c for c in TABLE_COLUMNS["inspections"] if c != "id")}
KEYS = {
    "patterns": ["pattern"],
    "zones": ["pattern", "zone"],
    "sleeves": ["sleeve"],
    "revisions": ["pattern", "revision"],
    "risers": ["pattern", "revision", "riser"],
    "lots": ["lot"],
    "inspections": ["record_key"],
}


# Tables in an order that inserts parents before children (copy-log); a table not
# named here is copied after these, in name order.
COPY_ORDER = ["alloys", "meta", "patterns", "zones", "sleeves", "revisions", "risers", "lots",
              "inspections", "models", "imports", "users", "sessions", "audit", "actions", "castings"]


# The *current* inspection records, the ones every figure counts: not voided, and not
# superseded by a correction (no other record names them in ``supersedes``). Written for
# a record aliased ``i`` (the correction looked for is aliased ``n``); every statement
# that reads current records puts this in its WHERE clause.
CURRENT = "i.void = 0 AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
