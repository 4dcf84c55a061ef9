"""Read a spectrum survey from a plain CSV file (for the command line).

Format: optional comment lines `# key: value` for the survey's fields
(`id`, `applies_to` as a comma-separated list, or `position` as `x_m, y_m`
or `x_m, y_m, floor` with an optional `radius_m`; `resolution_bandwidth_hz`,
`detector`, `detection_margin_db`, `noise_bandwidth_factor`, `label`), then
a header row naming the columns `frequency_hz`, `level_dbm` and, optionally,
`occupancy_fraction`, then one row per trace point. Values are checked by the
service like any request.
"""

from __future__ import annotations

import csv
from pathlib import Path

NUMBERS = {"resolution_bandwidth_hz", "detection_margin_db", "noise_bandwidth_factor", "radius_m"}
COLUMNS = {"frequency_hz": "frequencies_hz", "level_dbm": "levels_dbm", "occupancy_fraction": "occupancy_fraction"}


class SurveyFileError(ValueError):
    pass


def read_survey(path: str | Path) -> dict:
    text = Path(path).read_text(encoding="utf-8")
    meta, rows, line_of = {}, [], []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if stripped.startswith("#"):
            key, _, value = stripped[1:].partition(":")
            if value:
                meta[key.strip()] = value.strip()
        elif stripped:
            rows.append(stripped)
            line_of.append(number)
    if not rows:
        raise SurveyFileError(f"{path}: no header row and no data")
    reader = csv.DictReader(rows)
    missing = {"frequency_hz", "level_dbm"} - set(reader.fieldnames or [])
    if missing:
        raise SurveyFileError(f"{path}: the header must name {', '.join(sorted(missing))}")
    survey: dict = {k: ([] if k != "occupancy_fraction" or "occupancy_fraction" in reader.fieldnames else None)
                    for k in COLUMNS.values()}
    for i, row in enumerate(reader, start=1):
        for col, key in COLUMNS.items():
            if col in row and survey.get(key) is not None:
                try:
                    survey[key].append(float(row[col]))
                except (TypeError, ValueError):
                    raise SurveyFileError(f"{path}: line {line_of[i]}: {col} {row[col]!r} is not a number") from None
    if survey["occupancy_fraction"] is None:
        del survey["occupancy_fraction"]
    for key, value in meta.items():
        if key == "applies_to":
            survey[key] = [s.strip() for s in value.split(",") if s.strip()]
        elif key == "position":
            survey[key] = _position(path, value)
        elif key in NUMBERS:
            try:
                survey[key] = float(value)
            except ValueError:
                raise SurveyFileError(f"{path}: {key} {value!r} is not a number") from None
        else:
            survey[key] = value
    survey.setdefault("id", Path(path).stem.replace(" ", "-"))
    return survey


def _position(path, value: str) -> dict:
    parts = [p.strip() for p in value.split(",")]
    try:
        numbers = [float(p) for p in parts]
    except ValueError:
        numbers = []
    if len(numbers) not in (2, 3) or (len(numbers) == 3 and not numbers[2].is_integer()):
        raise SurveyFileError(f"{path}: position {value!r} must be 'x_m, y_m' or 'x_m, y_m, floor'")
    out = {"x_m": numbers[0], "y_m": numbers[1]}
    if len(numbers) == 3:
        out["floor"] = int(numbers[2])
    return out
