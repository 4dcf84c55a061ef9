"""Example site requests, shipped inside the package as ``cohop.samples``."""

from __future__ import annotations

import json
from importlib import resources

DEFAULT = "water_works"


def all_names() -> list[str]:
    return sorted(p.name[:-5] for p in resources.files(__name__).iterdir() if p.name.endswith(".json"))


def names() -> list[str]:
    """Samples that are site (assessment or plan) requests."""
    return [n for n in all_names() if not n.endswith("_replan")]


def replan_names() -> list[str]:
    """Samples that are re-plan requests (site, current plan and mode)."""
    return [n for n in all_names() if n.endswith("_replan")]


def load(name: str = DEFAULT) -> dict:
    """The sample request body `name` (file name without .json)."""
    if name not in all_names():
        raise KeyError(f"no sample {name!r}; samples: {', '.join(all_names())}")
    return json.loads(resources.files(__name__).joinpath(name + ".json").read_text(encoding="utf-8"))
