"""The import kinds, their columns and the codes a column allows.

A new import column: name it in :data:`COLUMNS` here, then check it in the
kind's validator (``tracker/log/ingest/kinds/<kind>.py``), which returns the
row tuples in the order of the table's columns (``tracker.log.store.TABLE_COLUMNS``).
"""

from __future__ import annotations

from tracker import units

KINDS = ("patterns", "zones", "sleeves", "risers", "lots", "inspections")  # dependency order

DEFECTS = ("shrinkage", "gas", "sand", "slag", "misrun", "cold_shut", "hot_tear", "crack",
           "dimensional", "other")
METHODS = ("visual", "xray", "ut", "mt", "pt", "dimensional")
RESULTS = ("accept", "reject", "rework")
XRAY_CATEGORIES = ("A", "B", "CA", "CB", "CC", "CD", "D", "E", "F", "G")
GRADED_CATEGORIES = ("A", "B", "CA", "CB", "CC", "CD")  # graded in severity levels 1-5
NEVER_ACCEPTABLE = ("D", "E")  # cracks and hot tears: not acceptable at any level
SLEEVE_KINDS = ("insulating", "exothermic")
MOULDS = ("green_sand", "rigid")  # tracker.design.rules.MOULDS; empty = green sand

COLUMNS = {  # (required, optional)
    "patterns": (["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                  "metal_cost_per_kg"], ["processing_cost_per_casting", "mould", "plant"]),
    "zones": (["pattern", "zone", "volume_cm3", "cooling_area_cm2"],
              ["thickness_mm", "length_mm", "required_xray_level", "width_mm", "joined_faces", "x_mm", "y_mm",
               "z_mm", "modulus_cm"]),
    "sleeves": (["sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                 "feeding_efficiency"], ["unit_cost"]),
    "risers": (["pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
                "diameter_mm", "height_mm"], ["sleeve", "neck_diameter_mm", "removed_risers", "x_mm", "y_mm",
                                              "z_mm", "axis"]),
    "lots": (["lot", "pattern", "poured_on", "heat", "molds"], ["pour_temp_c"]),
    "inspections": (["lot", "inspected_on", "method", "quantity", "result"],
                    ["defect", "zone", "xray_category", "severity", "serial", "inspector", "notes",
                     "record_id"]),
}
# The US customary twin a file may give in place of a metric column (diameter_in for
# diameter_mm, casting_weight_lb, metal_cost_per_lb, pour_temp_f ...): {kind: {us: metric}}.
US_COLUMNS = {kind: units.us_names(required + optional) for kind, (required, optional) in COLUMNS.items()}

PLANT_CODE = r"[A-Za-z0-9][A-Za-z0-9._-]{0,31}"

# Spelling variants of the trade, written either way: matched to the log's own spelling.
ALIASES = {"aluminium": "aluminum", "aluminium_bronze": "aluminum_bronze", "grey_iron": "gray_iron",
           "brass": "cast_iron_brass", "grey_cast_iron": "gray_iron", "gray_cast_iron": "gray_iron",
           "cast_steel": "steel",
           "nodular_iron": "ductile_iron", "sg_iron": "ductile_iron", "coldshut": "cold_shut",
           "hottear": "hot_tear", "x_ray": "xray", "rt": "xray"}
