"""Transitional: the sequence theory moved to `cohop.stats.hopping`. `cohop.api.present` (another change's
file) still imports `coherence_bandwidth_hz` from here; delete this module once it imports from
`cohop.stats.hopping`."""

from cohop.stats.hopping import coherence_bandwidth_hz  # noqa: F401
