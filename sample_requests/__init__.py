"""Example site requests, shipped inside the package as ``cohop.samples``."""

from __future__ import annotations

import json
from importlib import resources

DEFAULT = "water_works_us915"


def names() -> list[str]:
    return sorted(p.name[:-5] for p in resources.files(__name__).iterdir() if p.name.endswith(".json"))


def load(name: str = DEFAULT) -> dict:
    """The sample request body `name` (file name without .json)."""
    if name not in names():
        raise KeyError(f"no sample {name!r}; samples: {', '.join(names())}")
    return json.loads(resources.files(__name__).joinpath(name + ".json").read_text(encoding="utf-8"))
