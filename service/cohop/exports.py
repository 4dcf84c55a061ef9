"""Hop-table files for the command line: `<system>.csv`/`.json` or `hop_tables.csv`/`.json`, and CAUTIONS.txt.

The document itself is `cohop.jobs.hop_tables` (also what `POST /v1/hop-tables` answers); this module builds
it from the request's site as a dict and a saved plan or re-plan answer, and writes the files. README,
"Hop tables", documents both formats.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

from cohop.jobs.hop_tables import (CSV_COLUMNS, FORMAT, ExportError, Numbering, SystemInfo, hop_table_document,
                                   tables_csv)

__all__ = ["CSV_COLUMNS", "FORMAT", "ExportError", "hop_tables", "tables_csv", "write_hop_tables"]
SAFE_NAME = re.compile(r"[^A-Za-z0-9._-]")


def hop_tables(site: dict, answer: dict) -> dict:
    """The hop-table document of a plan or re-plan answer on its site (both as JSON dicts)."""
    systems = [SystemInfo(s["id"], s.get("label", ""), s.get("dwell_s")) for s in site.get("systems", [])]
    return hop_table_document(site.get("name", ""), site.get("profile"), Numbering.of(site["grid"]), systems, answer)


def _file_stem(system_id: str) -> str:
    return SAFE_NAME.sub("_", system_id)


def write_hop_tables(directory: str, site: dict, answer: dict, per: str = "system") -> list[Path]:
    """Write `<system>.csv` and `<system>.json` for each system (per="system"), or `hop_tables.csv` and
    `hop_tables.json` for the site (per="site"), plus CAUTIONS.txt; returns the paths written."""
    doc = hop_tables(site, answer)
    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    groups = [("hop_tables", doc["systems"])] if per == "site" else [(_file_stem(s["id"]), [s]) for s in doc["systems"]]
    paths = []
    for stem, systems in groups:
        csv_path, json_path = out / f"{stem}.csv", out / f"{stem}.json"
        csv_path.write_text(tables_csv(systems), encoding="utf-8")
        json_path.write_text(json.dumps({**doc, "systems": systems}, indent=2) + "\n", encoding="utf-8")
        paths += [csv_path, json_path]
    cautions = out / "CAUTIONS.txt"
    cautions.write_text("\n\n".join(doc["cautions"]) + "\n", encoding="utf-8")
    return paths + [cautions]
