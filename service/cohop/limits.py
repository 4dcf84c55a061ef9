"""Documented size caps on a request. At least 200 systems and 4096 channels
must be accepted; the caps below leave headroom above that."""

MAX_SYSTEMS = 256
MAX_CHANNELS = 8192
MAX_INTERFERERS = 256
MAX_REJECTION_POINTS = 64
MAX_COUPLING_ENTRIES = MAX_SYSTEMS * (MAX_SYSTEMS - 1)
#: Per-channel, per-source entries a "source" detail response may carry.
MAX_SOURCE_DETAIL_ENTRIES = 500_000
