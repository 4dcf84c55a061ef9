"""Hop tables to load into radios: each system's hop set and hop order with the user's channel numbers.

The document both the command line's files (`cohop.exports`) and `POST /v1/hop-tables` give (README, "Hop
tables"). Channels appear three ways: the grid index, the user's channel number
(`first_channel_number + index * channel_number_step`) and the centre frequency in MHz to 1 Hz (six decimals),
`first_centre_hz + index * spacing_hz` (the grid's definition). Pure: plain values in, plain values out.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from typing import Iterable

FORMAT = "cohop-hop-tables/1"
CSV_COLUMNS = ("system", "table", "position", "grid_index", "channel_number", "centre_mhz")


class ExportError(ValueError):
    """The answer holds no plan, or the site does not match it; `pointer` is into the answer."""

    def __init__(self, message: str, pointer: str = ""):
        super().__init__(message)
        self.pointer = pointer


@dataclass(frozen=True)
class Numbering:
    """The site's channel grid with the user's channel numbers."""

    first_centre_hz: float
    spacing_hz: float
    first_channel_number: int = 0
    channel_number_step: int = 1

    @classmethod
    def of(cls, grid) -> "Numbering":
        """From a grid given as a dict (the request's form)."""
        return cls(grid["first_centre_hz"], grid["spacing_hz"], int(grid.get("first_channel_number", 0)),
                   int(grid.get("channel_number_step", 1)))

    def row(self, index: int) -> dict:
        centre_hz = round(self.first_centre_hz + index * self.spacing_hz)  # to 1 Hz
        return {"grid_index": index, "channel_number": self.first_channel_number + index * self.channel_number_step,
                "centre_mhz": f"{centre_hz // 1_000_000}.{centre_hz % 1_000_000:06d}"}


@dataclass(frozen=True)
class SystemInfo:
    id: str
    label: str
    dwell_s: float | None


def hop_table_document(name: str, profile: str | None, numbering: Numbering, systems: Iterable[SystemInfo],
                       answer: dict) -> dict:
    """The hop-table document of a plan or re-plan answer (`plan`, `sequences`, `cautions`) on its site."""
    if not isinstance(answer.get("plan"), list):
        raise ExportError("the answer holds no plan (give a plan or re-plan answer)")
    known = {s.id: s for s in systems}
    orders = {s["id"]: s for s in (answer.get("sequences") or {}).get("systems", [])}
    tables = []
    for i, planned in enumerate(answer["plan"]):
        sid = planned["id"]
        if sid not in known:
            raise ExportError(f"the plan names system {sid!r}, which the site does not have", f"/plan/{i}/id")
        order = orders.get(sid)
        tables.append({
            "id": sid, "label": known[sid].label, "dwell_s": known[sid].dwell_s,
            "hop_set": [numbering.row(c) for c in sorted(planned["hop_set"])],
            "hop_order": None if order is None else [dict(position=i, **numbering.row(c))
                                                     for i, c in enumerate(order["channels"])],
            "period_s": None if order is None else order.get("period_s")})
    return {"format": FORMAT, "site": name, "profile": profile,
            "numbering": {"first_channel_number": numbering.first_channel_number,
                          "channel_number_step": numbering.channel_number_step,
                          "first_centre_hz": numbering.first_centre_hz, "spacing_hz": numbering.spacing_hz},
            "systems": tables, "cautions": list(answer.get("cautions", []))}


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


