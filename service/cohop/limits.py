"""Every bound on a request, with its reason, in one place.

The request schemas (`cohop.api.schemas`) read their minimums, maximums and
size caps from here, the OpenAPI document states them (minimum / maximum /
maxItems), and README's "Limits" table is `markdown_table()` (a test keeps it
verbatim). Two kinds of bound:

- *physical*: the range any real radio, site or survey lies in, so that
  nonsense (a denormal dwell, a reference distance of 5e-324 m) is refused
  with a pointer instead of turning into infinities, NaN or endless loops;
- *work*: caps on counts and ratios that every loop whose length depends on
  the request is bounded by (overlap counts, survey integration, simulated
  hops, error lists).

Sources marked [mem] are recalled, not checked against the original;
"our choice" is a round figure with headroom.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Bound:
    """An inclusive range [minimum, maximum] for one kind of field."""

    minimum: float
    maximum: float
    unit: str
    reason: str


# --- frequencies and bandwidths ---------------------------------------------
FREQUENCY_HZ = Bound(1e3, 3e11, "Hz", "every radio allocation lies inside (ITU tables start near 9 kHz; the highest "
                                      "ISM band, 244-246 GHz, ends below 300 GHz) [mem]")
CHANNEL_SPACING_HZ = Bound(100.0, 1e10, "Hz", "from the narrowest licence-free channels (ultra-narrowband, 100 Hz) "
                                              "[mem] to wider than any channel raster")
BANDWIDTH_HZ = Bound(100.0, 1e8, "Hz", "occupied bandwidth of a hopping system: ultra-narrowband up to 100 MHz")
INTERFERER_WIDTH_HZ = Bound(0.0, 1e10, "Hz", "0 is a carrier; 10 GHz is wider than any emitter (UWB: 7.5 GHz) [mem]")
REJECTION_OFFSET_HZ = Bound(1.0, 1e10, "Hz", "a rejection table lists offsets of at least 1 Hz, within 10 GHz")
RESOLUTION_BANDWIDTH_HZ = Bound(1.0, 1e9, "Hz", "spectrum analysers resolve from 1 Hz; 1 GHz covers any RBW [mem]")

# --- times --------------------------------------------------------------------
DWELL_S = Bound(1e-4, 10.0, "s", "the fastest common licence-free hoppers dwell 625 us (Bluetooth, 1600 hops/s) "
                                 "[mem]; 10 s is 25 x the FCC's 0.4 s occupancy limit; work that scans a "
                                 "regulatory window grows as window / dwell")
AIRTIME_S = Bound(1e-6, 10.0, "s", "a packet of a few symbols lasts microseconds; at most its dwell (checked)")
BURST_S = Bound(1e-6, 3600.0, "s", "an interferer's burst: a radar pulse lasts about 1 us; at most its period")
PERIOD_S = Bound(1e-6, 3600.0, "s", "an interferer that returns less often than hourly is better given as "
                                    "continuous or left out")
DELAY_SPREAD_S = Bound(10e-9, 10e-6, "s", "factory RMS delay spreads are 30-300 ns (Rappaport, IEEE Trans. "
                                          "Antennas Propag. 37(8), 1989); 10 ns covers small rooms, 10 us hilly outdoor sites [mem]")
SEQUENCE_PERIOD_S = Bound(1e-4, 81920.0, "s", "one period of a hop order: 8192 hops (the sequence cap) of at most "
                                              "10 s dwells")
MESSAGE_INTERVAL_S = Bound(1e-3, 86400.0, "s", "a control message every millisecond (fast machinery remotes) to one a "
                                                "day (slow telemetry)")
DEADLINE_S = Bound(1e-4, 86400.0, "s", "delivery within 100 us (below any hop) to within a day")
WATCHDOG_S = Bound(1e-3, 3600.0, "s", "a link-loss watchdog: milliseconds to an hour (values come from the machine's "
                                      "safety assessment, never from this service)")
STOPS_PER_HOUR = Bound(0.0, 3.6e6, "1/h", "acceptable watchdog stops per hour of operation: none to one a millisecond")
TIME_LIMIT_S = Bound(0.1, 3600.0, "s", "a search budget; the server's COHOP_MAX_SOLVE_S clamps it further")

#: Most bursts of one source that one packet can overlap, (T_v + T_a) / D_a (and (T_v + burst) / period).
MAX_OVERLAPS = 1000
MAX_OVERLAPS_REASON = ("a 0.4 s packet (the FCC dwell limit) against 625 us dwells overlaps 641 bursts; the cap "
                       "bounds the loops over overlapped bursts (Monte Carlo, sequence-driven retries)")

# --- levels, losses and dB quantities ---------------------------------------
TX_POWER_DBM = Bound(-60.0, 60.0, "dBm", "1 nW to 1 kW conducted")
ANTENNA_GAIN_DBI = Bound(-30.0, 40.0, "dBi", "lossy whips to large dishes")
SIGNAL_DBM = Bound(-200.0, 40.0, "dBm", "received levels: far below kTB (-174 dBm/Hz) to a transmitter next door")
EIRP_DBM = Bound(-100.0, 90.0, "dBm", "interferer EIRP: leakage to broadcast transmitters")
SIR_DB = Bound(-30.0, 60.0, "dB", "capture ratios: spread-spectrum processing gain to very fragile demodulators")
REJECTION_DB = Bound(0.0, 200.0, "dB", "adjacent-channel rejection, beyond any measurable figure at the top")
FADE_MARGIN_DB = Bound(-30.0, 100.0, "dB", "negative margins (always fading) to none needed")
NOISE_FIGURE_DB = Bound(0.0, 40.0, "dB", "receiver noise figures")
K_FACTOR_DB = Bound(-30.0, 40.0, "dB", "Rician K: near-Rayleigh to a nearly steady line of sight")
COUPLING_LOSS_DB = Bound(0.0, 300.0, "dB", "transmitter output to receiver input, antennas and cables included")
REFERENCE_LOSS_DB = Bound(0.0, 200.0, "dB", "log-distance loss at the reference distance")
FLOOR_LOSS_DB = Bound(0.0, 100.0, "dB", "loss per floor crossed")
PROPAGATION_MARGIN_DB = Bound(0.0, 60.0, "dB", "pessimistic planning allowance on computed losses")
SURVEY_LEVEL_DBM = Bound(-250.0, 60.0, "dBm", "a trace's reading in the resolution bandwidth")
DETECTION_MARGIN_DB = Bound(0.0, 60.0, "dB", "how far above a trace's floor a channel counts as occupied")
GUARD_EXCESS_DB = Bound(-50.0, 200.0, "dB", "excess from which a pair must keep out of each other's windows")

# --- shares, ratios, coefficients -------------------------------------------
FRACTION = Bound(0.0, 1.0, "", "a share or probability")
NOISE_BANDWIDTH_FACTOR = Bound(0.5, 2.0, "", "equivalent noise bandwidth of the resolution filter / RBW")
PATH_LOSS_EXPONENT = Bound(1.0, 10.0, "", "log-distance n: waveguiding corridors to heavy clutter")
POWER_LOSS_COEFFICIENT = Bound(0.0, 100.0, "", "ITU-R P.1238 N (the tables give 20-33)")
PRIORITY_WEIGHT = Bound(0.0, 1e6, "", "relative weight of a system in the objective")
REPLAN_TOLERANCE = Bound(0.0, 10.0, "", "re-plan objective at most (1 + tolerance) x the fresh plan's")

# --- distances and places ---------------------------------------------------
COORDINATE_M = Bound(-1e6, 1e6, "m", "positions on a site plan, within 1000 km of its origin")
LINK_DISTANCE_M = Bound(0.01, 1e6, "m", "1 cm to 1000 km (the models use at least 1 m)")
REFERENCE_DISTANCE_M = Bound(0.01, 1e4, "m", "log-distance d0: 1 cm to 10 km")
FLOOR_HEIGHT_M = Bound(1.0, 100.0, "m", "storey height: lower than any storey to a tall hall")
SURVEY_RADIUS_M = Bound(0.1, 1e4, "m", "how far from a survey's position its trace still stands for a receiver")
AREA_STEP_M = Bound(0.1, 1e5, "m", "grid step of a moving system's area: finer than a vehicle, coarser than a "
                                   "whole site")
FLOOR = Bound(-50, 200, "", "storeys below and above ground")

# --- counts and sizes ---------------------------------------------------------
MAX_SYSTEMS = 256  # at least 200 must be accepted (a test sends exactly that); headroom above it
MAX_CHANNELS = 8192  # at least 4096 must be accepted; headroom above it
MAX_INTERFERERS = 256  # fixed interferers given by hand
MAX_REJECTION_POINTS = 64  # a rejection table's rows
MAX_COUPLING_ENTRIES = MAX_SYSTEMS * (MAX_SYSTEMS - 1)  # one per ordered pair of systems
MAX_SEQUENCE_HOPS = MAX_CHANNELS  # one period of a given hop order; its analysis is quadratic in it
CHANNEL_INDEX = Bound(0, MAX_CHANNELS - 1, "", "a grid channel index")
MAX_TEXT_CHARS = 200  # names and labels
MAX_BASELINES = 16  # names in a plan's baselines list (there are five, and "all")
MAX_SURVEYS = 64  # spectrum surveys in one site
MAX_SURVEY_POINTS = 200_000  # points of one survey trace
MAX_SURVEY_POINTS_TOTAL = 1_000_000  # points of all traces together
#: Survey integration work: sum over surveys of (distinct bandwidths it is integrated over) x (points + channels).
MAX_SURVEY_WORK = 20_000_000
MAX_DERIVED_INTERFERERS = 256  # interferers the surveys may turn into (as many as may be given by hand)
RETRY_LIMIT = Bound(0, 15, "", "IEEE 802.15.4 allows at most 7 retries, 802.11 defaults to 7 [mem]; 15 leaves room")
HOPS_PER_ATTEMPT = Bound(1, 16, "", "hops one attempt needs (2 for data and acknowledgement)")
TRIALS_PER_SYSTEM = Bound(1000, 1_000_000_000, "", "Monte Carlo attempts per system; the server caps the total "
                                                   "(COHOP_MAX_SIMULATED_ATTEMPTS)")
SEQUENCE_PACKETS = Bound(1000, 1_000_000, "", "packets simulated per system along the real hop orders")
#: Simulated packets x hops per packet ((retry_limit + 1) x hops_per_attempt) for any one system.
MAX_SIMULATED_HOPS = 5_000_000
MAX_CHANGES = Bound(0, 1_000_000, "", "a re-plan's change budget")
SEED = Bound(0, 2**31 - 1, "", "a plan's search seed")
CHANNEL_NUMBER = Bound(0, 1_000_000, "", "the user's number of grid channel 0, for hop tables (radios number "
                                         "channels from 0 or 1 upwards, some by centre frequency in kHz)")
CHANNEL_NUMBER_STEP = Bound(1, 1_000_000, "", "the user's channel numbers per grid channel, for hop tables")
SIMULATION_SEED = Bound(0, 2**63 - 1, "", "the Monte Carlo seed")
#: Messages in a row a watchdog covers (ceil(watchdog_s / message_interval_s)): the run chain steps this many.
MAX_WATCHDOG_MESSAGES = 1000
#: Hop cells (phase samples x messages x hops per message) of one system's traffic chain.
MAX_TRAFFIC_CELLS = 2_000_000
#: Hop cells of all systems' traffic chains together.
MAX_TRAFFIC_CELLS_TOTAL = 20_000_000
#: Per-channel, per-source entries a "source" detail response may carry.
MAX_SOURCE_DETAIL_ENTRIES = 500_000
#: Cells of one evaluation's harm (`cohop.assess.harm_cells`): sum over victims of sources x hop-set channels x
#: the steps of the victim's rejection table where some source's harm varies, times 1 + the joint law's contour
#: points at a Rician victim (`cohop.joint`; a joint cell costs 1 to 2 plain ones, measured).
MAX_HARM_CELLS = 50_000_000
# --- systems that move (positions, area) ---
#: Positions listed for one moving system.
MAX_POSITIONS = 64
#: Grid points of one system's area (x samples x y samples).
MAX_AREA_POINTS = 256
#: Sampled positions of all systems together: each moving system is evaluated once per sampled position.
MAX_SAMPLED_POSITIONS = 512
#: Path losses computed between systems: sum over ordered pairs of (positions of a) x (positions of v).
MAX_POSITION_PAIRS = 2_000_000
#: Field errors listed in one problem-details answer (the rest are counted in `errors_omitted`).
MAX_FIELD_ERRORS = 100

#: The work caps of the README table: (name, value, reason).
CAPS = (
    ("systems", MAX_SYSTEMS, "at least 200 accepted (tested), with headroom"),
    ("grid channels", MAX_CHANNELS, "at least 4096 accepted (tested), with headroom"),
    ("fixed interferers", MAX_INTERFERERS, "given by hand"),
    ("rejection table rows", MAX_REJECTION_POINTS, "per system"),
    ("coupling entries", MAX_COUPLING_ENTRIES, "one per ordered pair of systems"),
    ("hops in a given sequence", MAX_SEQUENCE_HOPS, "one period; pair analysis is quadratic in it"),
    ("characters in a name or label", MAX_TEXT_CHARS, ""),
    ("baseline names", MAX_BASELINES, "five baselines and 'all'"),
    ("surveys", MAX_SURVEYS, "per site"),
    ("points in one survey", MAX_SURVEY_POINTS, ""),
    ("points in all surveys", MAX_SURVEY_POINTS_TOTAL, ""),
    ("survey integration work", MAX_SURVEY_WORK, "sum over surveys of distinct system bandwidths x (points + "
                                                 "channels): about a second of numpy"),
    ("interferers derived from surveys", MAX_DERIVED_INTERFERERS, "raise detection_margin_db if exceeded"),
    ("overlapped bursts per packet", MAX_OVERLAPS, MAX_OVERLAPS_REASON),
    ("simulated hops per system", MAX_SIMULATED_HOPS, "sequence_packets x (retry_limit + 1) x hops_per_attempt"),
    ("messages a watchdog covers", MAX_WATCHDOG_MESSAGES, "ceil(watchdog_s / message_interval_s); the run chain "
                                                           "steps that many messages"),
    ("traffic hop cells per system", MAX_TRAFFIC_CELLS, "phase samples (64, fewer down to 8 to fit) x messages "
                                                        "(one order period and a watchdog's run) x hops per "
                                                        "message: about a second"),
    ("traffic hop cells per site", MAX_TRAFFIC_CELLS_TOTAL, "all systems' traffic chains together: ten times one "
                                                             "system's cap"),
    ("source-detail entries", MAX_SOURCE_DETAIL_ENTRIES, "per-channel breakdown by source (detail=source)"),
    ("harm evaluation cells", MAX_HARM_CELLS, "sum over victims of systems x hop-set channels x rejection-table "
                                              "steps where the harm varies (fading-aware capture), times 1 + the "
                                              "joint law's points at Rician victims (about 28 at K = 6 dB, 180 "
                                              "at 20 dB): 2 to 5 s"),
    ("positions of one system", MAX_POSITIONS, "a rail or route given point by point; use area for more"),
    ("area grid points of one system", MAX_AREA_POINTS, "x samples x y samples (16 x 16): coarsen step_m"),
    ("sampled positions in all", MAX_SAMPLED_POSITIONS, "each is one more evaluation of its system as a victim "
                                                        "(about 3.6 ms on a 79-channel site: 2 s in all)"),
    ("position pairs", MAX_POSITION_PAIRS, "path losses between systems' positions, evaluated in numpy: "
                                           "well under a second"),
    ("field errors listed", MAX_FIELD_ERRORS, "per answer; errors_omitted counts the rest"),
)

#: Which fields each numeric bound applies to, for the README table.
FIELDS = (
    (FREQUENCY_HZ, "band low_hz/high_hz, grid first_centre_hz, interferer low_hz/high_hz/centre_hz, "
                   "survey frequencies_hz"),
    (CHANNEL_SPACING_HZ, "grid spacing_hz"),
    (BANDWIDTH_HZ, "system bandwidth_hz"),
    (INTERFERER_WIDTH_HZ, "interferer width_hz"),
    (REJECTION_OFFSET_HZ, "rejection offset_hz"),
    (RESOLUTION_BANDWIDTH_HZ, "survey resolution_bandwidth_hz"),
    (DWELL_S, "system dwell_s"),
    (AIRTIME_S, "system packet_airtime_s"),
    (BURST_S, "interferer burst_s"),
    (PERIOD_S, "interferer period_s"),
    (DELAY_SPREAD_S, "site rms_delay_spread_s"),
    (TIME_LIMIT_S, "search time_limit_s"),
    (SEQUENCE_PERIOD_S, "hop-table answer sequences period_s"),
    (MESSAGE_INTERVAL_S, "traffic message_interval_s"),
    (DEADLINE_S, "traffic deadline_s"),
    (WATCHDOG_S, "traffic watchdog_s"),
    (STOPS_PER_HOUR, "traffic max_stops_per_hour"),
    (TX_POWER_DBM, "tx_power_dbm"),
    (ANTENNA_GAIN_DBI, "antenna_gain_dbi"),
    (SIGNAL_DBM, "wanted_signal_dbm, sensitivity_dbm, interferer level_dbm"),
    (EIRP_DBM, "interferer eirp_dbm"),
    (SIR_DB, "required_sir_db"),
    (REJECTION_DB, "rejection_db"),
    (FADE_MARGIN_DB, "fade_margin_db"),
    (NOISE_FIGURE_DB, "noise_figure_db"),
    (K_FACTOR_DB, "fading k_factor_db"),
    (COUPLING_LOSS_DB, "coupling loss_db"),
    (REFERENCE_LOSS_DB, "propagation reference_loss_db"),
    (FLOOR_LOSS_DB, "propagation floor_loss_db"),
    (PROPAGATION_MARGIN_DB, "propagation margin_db"),
    (SURVEY_LEVEL_DBM, "survey levels_dbm"),
    (DETECTION_MARGIN_DB, "survey detection_margin_db"),
    (GUARD_EXCESS_DB, "requirements guard_excess_db"),
    (FRACTION, "activity_fraction, occupancy_fraction, max_attempt_loss, max_residual_loss, interferer_threshold, "
               "traffic deadline_probability"),
    (NOISE_BANDWIDTH_FACTOR, "survey noise_bandwidth_factor"),
    (PATH_LOSS_EXPONENT, "propagation exponent"),
    (POWER_LOSS_COEFFICIENT, "propagation power_loss_coefficient"),
    (PRIORITY_WEIGHT, "priority_weight"),
    (REPLAN_TOLERANCE, "re-plan mode tolerance"),
    (COORDINATE_M, "position x_m, y_m; area x_min_m, x_max_m, y_min_m, y_max_m"),
    (LINK_DISTANCE_M, "link_distance_m"),
    (REFERENCE_DISTANCE_M, "propagation reference_distance_m"),
    (FLOOR_HEIGHT_M, "propagation floor_height_m"),
    (SURVEY_RADIUS_M, "survey radius_m"),
    (AREA_STEP_M, "area step_m"),
    (FLOOR, "position floor, area floor"),
    (RETRY_LIMIT, "retry_limit"),
    (HOPS_PER_ATTEMPT, "hops_per_attempt"),
    (TRIALS_PER_SYSTEM, "simulation trials_per_system"),
    (SEQUENCE_PACKETS, "search sequence_packets"),
    (MAX_CHANGES, "re-plan mode max_changes"),
    (CHANNEL_INDEX, "hop_set, sequence, excluded_channels, pinned_channels entries (and below grid count)"),
    (SEED, "search seed"),
    (CHANNEL_NUMBER, "grid first_channel_number"),
    (CHANNEL_NUMBER_STEP, "grid channel_number_step"),
    (SIMULATION_SEED, "simulation seed"),
)


def _fmt(x) -> str:
    if isinstance(x, int):
        return f"{x:,}".replace(",", " ")
    return f"{x:g}"


def markdown_table() -> str:
    """README's table of limits (kept verbatim there by a test)."""
    rows = ["| field | minimum | maximum | unit | why |", "|---|---|---|---|---|"]
    rows += [f"| {fields} | {_fmt(b.minimum)} | {_fmt(b.maximum)} | {b.unit} | {b.reason} |" for b, fields in FIELDS]
    rows += ["", "| cap | value | why |", "|---|---|---|"]
    rows += [f"| {name} | {_fmt(value)} | {reason} |" for name, value, reason in CAPS]
    return "\n".join(rows)
