"""Strict JSON: what RFC 8259 allows, nothing more (no NaN, Infinity or -Infinity tokens)."""

from __future__ import annotations

import json


def _refuse(token: str):
    raise ValueError(f"not JSON: {token}")


def strict_loads(text: str | bytes):
    """json.loads that refuses the NaN / Infinity extensions Python's json accepts."""
    return json.loads(text, parse_constant=_refuse)
