"""Hop tables to load into radios: each system's hop set and hop order as CSV and JSON (our own formats).

Built from the request's site and a plan or re-plan answer (the JSON documents, so the command line needs no
solver to write them). Channels appear three ways: the grid index the service uses, the user's own channel
number (`grid.first_channel_number + index * grid.channel_number_step`, defaults 0 and 1) and the centre
frequency in MHz to 1 Hz (six decimals), computed from the grid as `first_centre_hz + index * spacing_hz`.
README, "Hop tables", documents both formats.
"""

from __future__ import annotations

import csv
import io
import json
import re
from dataclasses import dataclass
from pathlib import Path

FORMAT = "cohop-hop-tables/1"
CSV_COLUMNS = ("system", "table", "position", "grid_index", "channel_number", "centre_mhz")
SAFE_NAME = re.compile(r"[^A-Za-z0-9._-]")


class ExportError(ValueError):
    """The answer holds no plan, or the site does not match it."""


@dataclass(frozen=True)
class Numbering:
    """The site's channel grid with the user's channel numbers."""

    first_centre_hz: float
    spacing_hz: float
    first_channel_number: int = 0
    channel_number_step: int = 1

    @classmethod
    def of(cls, grid: dict) -> "Numbering":
        return cls(grid["first_centre_hz"], grid["spacing_hz"], int(grid.get("first_channel_number", 0)),
                   int(grid.get("channel_number_step", 1)))

    def row(self, index: int) -> dict:
        centre_hz = round(self.first_centre_hz + index * self.spacing_hz)  # to 1 Hz
        return {"grid_index": index, "channel_number": self.first_channel_number + index * self.channel_number_step,
                "centre_mhz": f"{centre_hz // 1_000_000}.{centre_hz % 1_000_000:06d}"}


def hop_tables(site: dict, answer: dict) -> dict:
    """The JSON hop-table document of a plan or re-plan answer on its site."""
    if not isinstance(answer.get("plan"), list):
        raise ExportError("the answer holds no plan (give a plan or re-plan answer)")
    numbering = Numbering.of(site["grid"])
    known = {s["id"]: s for s in site.get("systems", [])}
    orders = {s["id"]: s for s in (answer.get("sequences") or {}).get("systems", [])}
    systems = []
    for planned in answer["plan"]:
        sid = planned["id"]
        if sid not in known:
            raise ExportError(f"the plan names system {sid!r}, which the site does not have")
        order = orders.get(sid)
        systems.append({
            "id": sid, "label": known[sid].get("label", ""), "dwell_s": known[sid].get("dwell_s"),
            "hop_set": [numbering.row(c) for c in sorted(planned["hop_set"])],
            "hop_order": None if order is None else [dict(position=i, **numbering.row(c))
                                                     for i, c in enumerate(order["channels"])],
            "period_s": None if order is None else order.get("period_s")})
    return {"format": FORMAT, "site": site.get("name", ""), "profile": site.get("profile"),
            "numbering": {"first_channel_number": numbering.first_channel_number,
                          "channel_number_step": numbering.channel_number_step,
                          "first_centre_hz": numbering.first_centre_hz, "spacing_hz": numbering.spacing_hz},
            "systems": systems, "cautions": list(answer.get("cautions", []))}


def tables_csv(systems: list[dict]) -> str:
    """CSV of the hop sets (table `hop_set`, position empty) and hop orders (`hop_order`) of the systems."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for s in systems:
        for r in s["hop_set"]:
            writer.writerow((s["id"], "hop_set", "", r["grid_index"], r["channel_number"], r["centre_mhz"]))
        for r in s["hop_order"] or []:
            writer.writerow((s["id"], "hop_order", r["position"], r["grid_index"], r["channel_number"],
                             r["centre_mhz"]))
    return buf.getvalue()


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
