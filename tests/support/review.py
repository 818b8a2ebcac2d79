"""Small logs for the review tests, written as import files."""

import csv
import datetime as dt
import pathlib

TODAY = dt.date(2027, 1, 31)  # after every pour of the test logs


def write_log(folder: pathlib.Path, patterns, lots, inspections, risers=None, zones=None):
    """Write a small log as import CSV files (lists of dicts) and return the folder."""
    folder.mkdir(parents=True, exist_ok=True)
    tables = {"patterns": patterns, "lots": lots, "inspections": inspections}
    if risers:
        tables["risers"] = risers
        tables["zones"] = zones
    for name, rows in tables.items():
        cols = list(dict.fromkeys(k for r in rows for k in r))
        with open(folder / f"{name}.csv", "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=cols)
            w.writeheader()
            w.writerows(rows)
    return folder
