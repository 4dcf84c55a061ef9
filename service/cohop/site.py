"""A validated site description as frozen dataclasses.

`cohop.site_rules.load_site` builds these from a request's plain dict (the request schemas
(`cohop.api.schemas`) delegate to it); the domain reads them. Defaults are defined here once.
Units are SI and are part of every field name. Nothing here computes physics (an area's sample points are
geometry: `cohop.physics.geometry`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

from cohop.physics.geometry import rectangle_samples


@dataclass(frozen=True)
class Band:
    low_hz: float
    high_hz: float


@dataclass(frozen=True)
class Grid:
    """Channel k has centre ``first_centre_hz + k * spacing_hz``."""

    first_centre_hz: float
    spacing_hz: float
    count: int
    first_channel_number: int = 0  # the user's number of channel 0 (hop tables only)
    channel_number_step: int = 1  # the user's numbers per grid channel (hop tables only)

    def centre_hz(self, k: int) -> float:
        return self.first_centre_hz + k * self.spacing_hz

    @property
    def last_centre_hz(self) -> float:
        return self.centre_hz(self.count - 1)


@dataclass(frozen=True)
class RejectionPoint:
    """Adjacent-channel rejection: `rejection_db` applies from `offset_hz` up
    to the next tabulated offset (co-channel, below the first entry, is 0 dB)."""

    offset_hz: float
    rejection_db: float


@dataclass(frozen=True)
class Fading:
    """How the wanted signal fades (`model`) and how the interference this receiver hears fades
    (`interference`: "steady", the conservative default, or "rayleigh"; `cohop.physics.capture`)."""

    model: str = "rayleigh"  # "rayleigh" | "rician" | "none"
    k_factor_db: float | None = None
    interference: str = "steady"  # "steady" | "rayleigh"


@dataclass(frozen=True)
class Position:
    x_m: float
    y_m: float
    floor: int = 0


# --- systems that move: several positions, or a sampled rectangle -------------

#: How coupling is taken across a moving system's positions (`Site.mobility_policy`).
MOBILITY_POLICIES = ("worst", "mean")


@dataclass(frozen=True)
class Area:
    """Where a system may be: a rectangle on one floor, sampled every `step_m` along x and y, both edges
    included (`cohop.physics.geometry.axis_samples`)."""

    x_min_m: float
    x_max_m: float
    y_min_m: float
    y_max_m: float
    step_m: float
    floor: int = 0

    def points(self) -> tuple[Position, ...]:
        return _area_points(self)


@lru_cache(maxsize=64)  # sampled by the rules and by prepare_site; small: it outlives the request
def _area_points(area: Area) -> tuple[Position, ...]:
    xs, ys = rectangle_samples(area.x_min_m, area.x_max_m, area.y_min_m, area.y_max_m, area.step_m)
    return tuple(Position(float(x), float(y), area.floor) for x, y in zip(xs, ys))


@dataclass(frozen=True)
class Traffic:
    """A system's traffic and what it needs (all optional but the interval): a message every
    `message_interval_s`; `deadline_probability` of messages delivered within `deadline_s`; the machine
    stops when no valid message arrives for `watchdog_s`, at most `max_stops_per_hour` such stops per hour
    of operation. Planning figures only: the machine's safety assessment governs (`cohop.traffic`)."""

    message_interval_s: float
    deadline_s: float | None = None
    deadline_probability: float | None = None
    watchdog_s: float | None = None
    max_stops_per_hour: float | None = None


@dataclass(frozen=True)
class System:
    id: str
    tx_power_dbm: float
    bandwidth_hz: float
    dwell_s: float
    packet_airtime_s: float
    activity_fraction: float
    required_sir_db: float
    rejection: tuple[RejectionPoint, ...]
    retry_limit: int
    antenna_gain_dbi: float = 0.0
    label: str = ""
    wanted_signal_dbm: float | None = None
    link_distance_m: float | None = None
    fade_margin_db: float | None = None
    sensitivity_dbm: float | None = None
    noise_figure_db: float | None = None
    fading: Fading = field(default_factory=Fading)
    hops_per_attempt: int = 1
    priority_weight: float = 1.0
    position: Position | None = None
    positions: tuple[Position, ...] | None = None  # a system that moves: where it may be (instead of position)
    area: Area | None = None  # ... or a rectangle it moves over, sampled (instead of position)
    time_base_group: str | None = None
    hop_set: tuple[int, ...] | None = None
    sequence: tuple[int, ...] | None = None  # hop order over the hop set (one period), if known
    fixed_point_to_point: bool = False  # used exclusively for fixed point-to-point links (47 CFR 15.247(c)(1))
    traffic: Traffic | None = None  # message interval, deadline and watchdog (issue 13)

    @property
    def eirp_dbm(self) -> float:
        return self.tx_power_dbm + self.antenna_gain_dbi

    def sampled_positions(self) -> tuple[Position, ...]:
        """Every place the system is evaluated at: its position, its positions, or its area's grid points;
        empty when it gives none (its coupling is then given explicitly)."""
        if self.area is not None:
            return self.area.points()
        if self.positions is not None:
            return self.positions
        return () if self.position is None else (self.position,)

    @property
    def moves(self) -> bool:
        return self.area is not None or (self.positions is not None and len(self.positions) > 1)


@dataclass(frozen=True)
class Propagation:
    """How coupling losses are computed from positions.

    model: "free_space" (ITU-R P.525), "log_distance", or "p1238"
    (ITU-R P.1238 site-general). `margin_db` is subtracted from every computed
    loss (a planning allowance for shadowing; explicit losses are not changed).
    """

    model: str
    exponent: float | None = None
    reference_loss_db: float | None = None
    reference_distance_m: float = 1.0
    environment: str | None = None
    power_loss_coefficient: float | None = None
    floor_loss_db: float | None = None
    floor_height_m: float = 4.0
    margin_db: float = 0.0


@dataclass(frozen=True)
class CouplingEntry:
    """Loss from `from_system`'s transmitter output to `to_system`'s receiver
    input, antennas and cables included. It holds in both directions unless an
    entry for the reverse direction is also given."""

    from_system: str
    to_system: str
    loss_db: float


@dataclass(frozen=True)
class Coupling:
    propagation: Propagation | None = None
    entries: tuple[CouplingEntry, ...] = ()


@dataclass(frozen=True)
class InterfererLevel:
    system: str
    level_dbm: float


@dataclass(frozen=True)
class Interferer:
    """A fixed (non-hopping) emitter occupying [low_hz, high_hz].

    Its level at a system's receiver input is given (`levels`, total power
    over its width) or computed from `eirp_dbm` and `position`. Without
    `burst_s`/`period_s` it is on for `activity_fraction` of the time in
    stretches long against a packet; with them it sends bursts of `burst_s`
    every `period_s` (random phase), in `activity_fraction` of its periods.
    """

    id: str
    low_hz: float
    high_hz: float
    label: str = ""
    levels: tuple[InterfererLevel, ...] = ()
    eirp_dbm: float | None = None
    position: Position | None = None
    activity_fraction: float = 1.0
    burst_s: float | None = None
    period_s: float | None = None

    @property
    def width_hz(self) -> float:
        return self.high_hz - self.low_hz


@dataclass(frozen=True)
class Survey:
    """A measured spectrum trace at the receivers of `applies_to`, or at a
    `position` standing for every system whose receivers lie within
    `radius_m` of it on the same floor.

    Each point is the power the analyser read in its resolution bandwidth at
    that frequency; `occupancy_fraction`, if given, is the share of sweeps
    in which the point was above the analyser's threshold.
    """

    id: str
    frequencies_hz: tuple[float, ...]
    levels_dbm: tuple[float, ...]
    resolution_bandwidth_hz: float
    applies_to: tuple[str, ...] = ()
    position: Position | None = None
    radius_m: float = 10.0
    detector: str = "rms"
    occupancy_fraction: tuple[float, ...] | None = None
    label: str = ""
    detection_margin_db: float = 6.0  # above the trace's own floor for a channel to count as occupied
    noise_bandwidth_factor: float = 1.0  # equivalent noise bandwidth of the RBW filter / RBW


@dataclass(frozen=True)
class Site:
    profile: str
    grid: Grid
    systems: tuple[System, ...]
    band: Band | None = None
    coupling: Coupling = field(default_factory=Coupling)
    interferers: tuple[Interferer, ...] = ()
    name: str = ""
    rms_delay_spread_s: float | None = None  # multipath delay spread; None: the industrial default
    surveys: tuple[Survey, ...] = ()
    mobility_policy: str = "worst"  # MOBILITY_POLICIES: coupling across a moving system's positions

    @property
    def has_moving_systems(self) -> bool:
        return any(s.moves for s in self.systems)

    def system_index(self) -> dict[str, int]:
        return {s.id: i for i, s in enumerate(self.systems)}
