"""Traffic figures of one system along its real hop order: latency, deadline, runs, watchdog stops.

The model, step by step (each module holds its sources):

1. Messages. A message every I = g D_v, g = max(ceil(message_interval_s / D_v), R n) whole dwells (R =
   retry_limit + 1 attempts of n = hops_per_attempt hops; when retries outlast the interval the next
   message waits, so the interval is at least R n dwells). Message k starts on hop s0 + k g of the order.
2. Per hop of a message (`hits`, `pieces`): a neighbour whose order is known hits according to its fixed
   phase (its dwells overlapping the hop, each active independently with its activity and then
   destroying the hop with its harm rho at its channel offset, `cohop.harm`: the hop survives with
   prod (1 - alpha rho)); a neighbour without a known order hits independently per hop with its
   uniform-hopping figure from the assessment (`pieces.channel_losses`); a continuous fixed interferer
   is on or off for the whole stretch (its activity is the share of phase samples in which it is on)
   and, while on, destroys each hop with its harm at the hop's channel (the assessment's figure over its
   activity); a bursty one hits independently per hop with its assessment figure.
3. Fading: a two-state chain between consecutive hops whose joint fade probability is, for Rayleigh,
   Kibble's for the power correlation of the two channels (Jakes' form with the site's delay spread;
   `cohop.stats.runs.fade_transitions`) and, for Rician, the same diffuse correlation under a fixed line
   of sight, by quadrature (`cohop.stats.runs.rician_fade_transitions`); fades more than GAP_HOPS idle
   hops apart are taken as independent; "none" never fades.
4. Given the phases, the chain of 2 x 2 matrices (`chain`) gives exactly: the probability of delivery at
   each attempt, of n lost attempts in a row, and of a run of lost messages reaching n (once per run).
5. Phases: the victim's order offset s0 and every sampled neighbour's phase are uniform; the figures are
   averaged over them. With no unaligned neighbour and no part-time continuous interferer in reach,
   every offset is enumerated (exact); with one unaligned neighbour of the victim's dwell, every phase
   class is enumerated with its weight when there are at most MAX_LATTICE (`_lattice`: exact);
   otherwise PHASE_SAMPLES stratified samples (Latin hypercube) give the mean and a 95 % interval,
   mean +- 1.96 s / sqrt(J) (conservative for stratified sampling).
6. Watchdog: a stop when m = ceil(watchdog_s / I) messages in a row are lost (no valid message for the
   watchdog time); stops per hour = (runs reaching m per message) x 3600 / I.
7. Dominant source: the one whose removal lowers the figure most (fading counts as one source), tried
   among fading and the DOMINANT_CANDIDATES sources that hit the most hops of the order.

Assumed independent: interference hits on different hops given the phases (a neighbour's activity per
dwell, even when one of its dwells spans several of the victim's hops), interference and fading, the
neighbours' phases of one another, and fades more than GAP_HOPS idle hops apart. The fade chain is of first
order: a fade depends on the previous hop's fade state only (not on its depth).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from cohop import limits
from cohop.prepare import PreparedSite
from cohop.sequences.bands import system_bands
from cohop.sequences.report import delay_spread
from cohop.site import Traffic
from cohop.stats import hopping
from cohop.stats.runs import fade_transitions, rician_fade_transitions
from cohop.traffic import chain, latency
from cohop.traffic.ceiling import collision_ceiling
from cohop.traffic.hits import band_counts, survival_given_phase
from cohop.traffic.messages import message_hops, watchdog_messages
from cohop.traffic.pieces import ChannelLosses, channel_losses

#: Stratified phase samples when the phases cannot be enumerated (fewer, down to MIN_PHASE_SAMPLES, where the
#: work cap `limits.MAX_TRAFFIC_CELLS` calls for it).
PHASE_SAMPLES = 64
MIN_PHASE_SAMPLES = 8
#: Idle hops after which a message's fade state is taken as forgotten.
GAP_HOPS = 64
#: Normal quantile of the reported intervals (two-sided 95 %).
Z95 = 1.959963984540054
#: Phase configurations enumerated at most (a single neighbour with the victim's dwell), else sampling.
MAX_LATTICE = 512
#: Sources tried for the dominant one: those that hit most along the order (with fading).
DOMINANT_CANDIDATES = 3
#: Runs of lost messages reported when no watchdog is given.
DEFAULT_RUNS = 4

MODEL = ("exact two-state fade chain along the system's hop order, neighbours' hits fixed by their phase "
         "and averaged over phases; messages every interval, attempts on consecutive hops up to the retry "
         "limit (cohop.traffic.figures)")
CAUTION = ("planning estimate, not a safety figure: the machine's safety assessment and the standards that "
           "govern cableless control of machinery decide what is acceptable; this service encodes no values "
           "from them")
ASSUMPTIONS = ("independent given the phases: interference hits on different hops, interference and fading",
               "a neighbour's activity is drawn per hop of the victim, even when one of its dwells spans several",
               f"fades more than {GAP_HOPS} idle hops apart are independent; the fade chain is of first order",
               "continuous fixed interferers are on or off for whole stretches; bursty ones hit per hop",
               "at a Rician-faded victim the overlapped transmissions are combined one by one (a product), which "
               "understates the loss where several overlap; the assessment's per-hop figures combine them "
               "together (link.capture)")


@dataclass(frozen=True)
class Estimate:
    """A figure averaged over phases; `interval` equals (value, value) when every phase was enumerated."""

    value: float
    interval: tuple[float, float]
    dominant_source: str | None


@dataclass(frozen=True)
class Quantile:
    level: float
    latency_s: float | None  # None: less than `level` of the messages is ever delivered


@dataclass(frozen=True)
class TrafficFigures:
    system_id: str
    order_origin: str  # "request" (given) or "planned" (built for the hop set)
    order_length: int
    message_interval_s: float  # as modelled: whole dwells, at least the retries' span
    dwell_s: float  # the wait for the next dwell is uniform over one dwell
    attempt_latency_s: tuple[float, ...]  # latency of delivery at attempt k, arriving as a dwell starts
    delivered_at_attempt: tuple[float, ...]  # P(delivered at attempt k), k = 1..R
    undelivered: Estimate  # P(every attempt lost)
    latency_quantiles: tuple[Quantile, ...]
    lost_attempt_runs: tuple[float, ...]  # P(the first n attempts of a message lost), n = 1..R
    lost_message_runs_per_hour: tuple[float, ...]  # runs of lost messages reaching n, per hour, n = 1..
    deadline: Estimate | None  # P(delivered within deadline_s)
    deadline_missed: Estimate | None  # its complement, computed as such (small figures keep their digits)
    meets_deadline: bool | None
    watchdog_messages: int | None  # m: messages lost in a row that make a stop
    stops_per_hour: Estimate | None
    meets_stops: bool | None
    phase_samples: int
    exact: bool
    requirement: Traffic
    #: clearance: allowed / predicted (the interval's worse end); >= 1 clears the requirement, None: no
    #: requirement, inf: nothing predicted
    deadline_clearance: float | None = None
    stops_clearance: float | None = None
    #: the planner's per-hop collision ceiling for this requirement (`cohop.traffic.ceiling`; inf: none,
    #: -1: fading alone fails it), the hop set's mean per-hop collision, and whether the ceiling binds
    collision_ceiling: float = math.inf
    collision_probability: float = 0.0
    ceiling_binds: bool = False
    model: str = MODEL
    caution: str = CAUTION
    assumptions: tuple[str, ...] = ASSUMPTIONS


@dataclass(frozen=True)
class _Layout:
    """Where the messages of each phase sample fall, and what the samples fix."""

    hops: np.ndarray  # (J, M, H) absolute hop of hop i of message k
    phase: np.ndarray  # (J, S) each source system's phase as a share of its period (0 where not sampled)
    interferer_on: np.ndarray  # (J, K) bool
    exact: bool
    weights: np.ndarray  # (J,) summing to one


def _sampled_sources(prep: PreparedSite, v: int, orders, losses: ChannelLosses) -> tuple[list[int], list[int]]:
    """Neighbours whose phase is sampled (unaligned, known order, can reach v) and part-time continuous
    interferers that reach v."""
    systems = [a for a, link in enumerate(prep.links[v])
               if link is not None and not link.aligned and orders[a] is not None and losses.systems[a].any()]
    itf = [k for k, link in enumerate(prep.interferer_links[v])
           if link.overlap is None and 0.0 < link.activity_fraction < 1.0 and losses.interferers[k].any()]
    return systems, itf


def _lattice(prep: PreparedSite, v: int, order_len: int, g: int, systems: list[int], itf: list[int], orders,
             most: int):
    """Every phase of a single sampled neighbour with the victim's dwell, when there are few enough
    (MAX_LATTICE, and within the work cap): its dwell offset j (whole dwells) and, within a dwell, the
    fraction u, which only matters through whether a's dwell one earlier still overlaps (u > 1 - T_a / D)
    and whether its dwell j starts inside the packet (u < T_v / D) [der, from the overlap window in
    `hits`], so u takes one value per stretch between those breakpoints, weighted by its length. (starts, phase (J, S) as shares of a's period, weights)."""
    if len(systems) != 1 or itf:
        return None
    a = systems[0]
    sv, sa = prep.site.systems[v], prep.site.systems[a]
    if not math.isclose(sv.dwell_s, sa.dwell_s, rel_tol=1e-12) or orders[a] is None:
        return None
    size_a = int(np.asarray(orders[a]).size)
    cuts = sorted({0.0, 1.0, *(x for x in (1.0 - sa.packet_airtime_s / sa.dwell_s, sv.packet_airtime_s / sv.dwell_s)
                              if 0.0 < x < 1.0)})
    pieces = [(lo, hi) for lo, hi in zip(cuts, cuts[1:]) if hi > lo]
    n_starts = math.gcd(order_len, g)
    if n_starts * size_a * len(pieces) > most:
        return None
    starts, phase, weights = [], [], []
    for s0 in range(n_starts):
        for j in range(size_a):
            for lo, hi in pieces:
                starts.append(s0)
                phase.append((j + 0.5 * (lo + hi)) / size_a)
                weights.append((hi - lo) / (n_starts * size_a))
    ph = np.zeros((len(starts), prep.n_systems))
    ph[:, a] = phase
    return np.array(starts, dtype=np.int64), ph, np.array(weights)


def _layout(prep: PreparedSite, v: int, order_len: int, g: int, messages: int, hops: int, sampled, seed: int,
            samples: int, orders=None) -> _Layout:
    systems, itf = sampled
    n_sys, n_itf = prep.n_systems, len(prep.site.interferers)
    base = np.arange(messages)[:, None] * g + np.arange(hops)[None, :]
    if not systems and not itf:
        starts = np.arange(math.gcd(order_len, g))
        return _Layout(starts[:, None, None] + base[None], np.zeros((starts.size, n_sys)),
                       np.ones((starts.size, n_itf), dtype=bool), True, np.full(starts.size, 1.0 / starts.size))
    most = min(MAX_LATTICE, limits.MAX_TRAFFIC_CELLS // (messages * hops))
    if orders is not None and (lattice := _lattice(prep, v, order_len, g, systems, itf, orders, most)) is not None:
        starts, phase, weights = lattice
        return _Layout(starts[:, None, None] + base[None], phase, np.ones((starts.size, n_itf), dtype=bool), True,
                       weights)
    rng = np.random.Generator(np.random.PCG64([seed, v, 13]))

    def strata() -> np.ndarray:
        return (rng.permutation(samples) + rng.random(samples)) / samples

    starts = np.floor(strata() * order_len).astype(np.int64)
    phase = np.zeros((samples, n_sys))
    for a in systems:
        phase[:, a] = strata()
    on = np.ones((samples, n_itf), dtype=bool)
    for k in itf:
        on[:, k] = strata() < prep.interferer_links[v][k].activity_fraction
    return _Layout(starts[:, None, None] + base[None], phase, on, False, np.full(samples, 1.0 / samples))


def _pieces(prep: PreparedSite, v: int, orders, losses: ChannelLosses,
            lay: _Layout) -> list[tuple[str, np.ndarray]]:
    """(source id, loss probability (J, M, H)) of every source that can hit v along the order."""
    site = prep.site
    system = site.systems[v]
    order_v = np.asarray(orders[v])
    col = losses.column(order_v[lay.hops % order_v.size])
    shape = lay.hops.shape
    flat = lay.hops.reshape(shape[0], -1)
    out = []
    for a, link in enumerate(prep.links[v]):
        if link is None or not losses.systems[a].any():
            continue
        src = site.systems[a]
        if orders[a] is None:
            x = losses.systems[a][col]
        else:
            order_a = np.asarray(orders[a])
            phase = np.zeros(shape[0]) if link.aligned else lay.phase[:, a] * order_a.size * src.dwell_s
            pair = system_bands(prep, v, [a])
            within = band_counts(order_v, order_a, pair.widths[0], flat, phase, system.dwell_s,
                                 system.packet_airtime_s, src.dwell_s, src.packet_airtime_s,
                                 rows=(losses.channels, col.reshape(flat.shape)))
            x = 1.0 - survival_given_phase(within, pair.hit([prep.activity[a]])[0]).reshape(shape)
        if x.any():
            out.append((src.id, x))
    for k, link in enumerate(prep.interferer_links[v]):
        if not losses.interferers[k].any():
            continue
        x = losses.interferers[k][col]
        if link.overlap is None and link.activity_fraction > 0:
            x = np.where(lay.interferer_on[:, k][:, None, None], x / link.activity_fraction, 0.0)
        if x.any():
            out.append((site.interferers[k].id, np.minimum(x, 1.0)))
    return out


def _fade_matrices(prep: PreparedSite, v: int, order_v: np.ndarray, hops: np.ndarray, g: int, fade: float,
                   sigma_tau: float) -> tuple[np.ndarray, np.ndarray]:
    """(A (J, M, H, 2, 2) into each message hop, G (J, M, 2, 2) over the idle hops after each message), read
    from one transition per position of the order (they depend on the two channels only)."""
    fading = prep.site.systems[v].fading
    size = order_v.size
    df = np.abs(order_v - np.roll(order_v, 1)) * prep.spacing_hz  # into position t from t - 1
    rho = hopping.envelope_correlation(df, sigma_tau)
    if fading.model == "rayleigh":
        into = fade_transitions(fade, rho)
    elif fading.model == "rician" and 0.0 < fade < 1.0:
        threshold = 10.0 ** (-float(prep.fade_margin_db[v]) / 10.0)
        into = rician_fade_transitions(fade, threshold, 10.0 ** (fading.k_factor_db / 10.0), rho)
    else:
        into = np.empty((size, 2, 2))
        into[:, :, 0], into[:, :, 1] = 1.0 - fade, fade
    idle = g - hops.shape[2]
    if idle > GAP_HOPS:
        gap_at = np.broadcast_to(np.array([[1.0 - fade, fade], [1.0 - fade, fade]]), (size, 2, 2))
    else:
        gap_at = np.broadcast_to(np.eye(2), (size, 2, 2)).copy()  # after a message ending at position p
        positions = np.arange(size)
        for i in range(1, idle + 1):
            gap_at = chain.mm(gap_at, into[(positions + i) % size])
    return into[hops % size], gap_at[hops[:, :, -1] % size]


@dataclass(frozen=True)
class _Run:
    delivered: np.ndarray  # (J, R)
    lost_attempts: np.ndarray  # (J, R)
    rates: np.ndarray  # (J, N) runs reaching n per message


def _survival(pieces, skip: str | None = None) -> np.ndarray:
    survive = np.ones(pieces[0][1].shape) if pieces else 1.0
    for name, x in pieces:
        if name != skip:
            survive = survive * (1.0 - x)
    return survive


def _runs(pieces, a, gap, fade: float, hops_per_attempt: int, longest: int,
          skips: list[str | None]) -> dict[str | None, _Run]:
    """The chain with each of `skips` removed (None: nothing removed; "fading": no fading); the source
    removals share one stacked call."""
    out: dict[str | None, _Run] = {}
    if "fading" in skips:
        a0 = np.zeros_like(a)
        a0[..., :, 0] = 1.0
        g0 = np.zeros_like(gap)
        g0[..., :, 0] = 1.0
        q = 1.0 - np.broadcast_to(_survival(pieces), a.shape[:3])
        out["fading"] = _chain_run(q[None], a0, g0, 0.0, hops_per_attempt, longest)[0]
    names = [n for n in skips if n != "fading"]
    if names:
        q = 1.0 - np.stack([np.broadcast_to(_survival(pieces, n), a.shape[:3]) for n in names])
        out.update(zip(names, _chain_run(q, a, gap, fade, hops_per_attempt, longest)))
    return out


def _chain_run(q: np.ndarray, a, gap, fade: float, hops_per_attempt: int, longest: int) -> list[_Run]:
    """One chain call over C stacked configurations q (C, J, M, H) sharing a, gap and the fade."""
    pi = chain.stationary(fade)
    fp, s, dl, ls = chain.message_matrices(q, a, gap, hops_per_attempt)
    # the last M - longest messages are the ones whose positions cover the order evenly (the runs end there)
    delivered, lost = chain.attempt_figures(fp[..., longest:, :, :, :], s[..., longest:, :, :, :], pi)
    rates = chain.run_rates(dl, ls, pi, longest)
    return [_Run(delivered[i], lost[i], rates[i]) for i in range(q.shape[0])]


def _estimate(per_sample: np.ndarray, lay: _Layout, dominant: str | None) -> Estimate:
    value = float(lay.weights @ per_sample)
    if lay.exact or per_sample.size < 2:
        return Estimate(value, (value, value), dominant)
    half = Z95 * float(per_sample.std(ddof=1)) / math.sqrt(per_sample.size)
    return Estimate(value, (max(0.0, value - half), value + half), dominant)


def _candidates(pieces) -> list[str]:
    """The DOMINANT_CANDIDATES sources that hit most along the order (the others cannot dominate unless
    the figure is driven by something other than how often they hit; stated in the model)."""
    ranked = sorted(pieces, key=lambda p: -float(p[1].mean()))
    return [n for n, _ in ranked[:DOMINANT_CANDIDATES]]


def _dominant(values: dict[str, float], base: float) -> str | None:
    """The source whose removal lowers the figure most (None when nothing lowers it)."""
    if not values:
        return None
    name = max(values, key=lambda k: base - values[k])
    return name if base - values[name] > 0 else None


def system_traffic(prep: PreparedSite, hop_sets: list[np.ndarray], orders, v: int, origin: str,
                   samples: int = PHASE_SAMPLES, seed: int = 0) -> TrafficFigures:
    """The traffic figures of system v (which must carry `traffic`), along `orders[v]`; `orders` holds one
    hop order per system (None where unknown: that neighbour hits independently per hop)."""
    system = prep.site.systems[v]
    traffic = system.traffic
    order_v = np.asarray(orders[v], dtype=np.int64)
    losses = channel_losses(prep, hop_sets, v)
    attempts, per = system.retry_limit + 1, system.hops_per_attempt
    g = message_hops(system, traffic)
    interval = g * system.dwell_s
    m = watchdog_messages(system, traffic)
    longest = max(m or 0, DEFAULT_RUNS)
    cover = order_v.size // math.gcd(order_v.size, g)
    sampled = _sampled_sources(prep, v, orders, losses)
    lay = _layout(prep, v, order_v.size, g, cover + longest, attempts * per, sampled, seed, samples, orders)
    pieces = _pieces(prep, v, orders, losses, lay)
    a, gap = _fade_matrices(prep, v, order_v, lay.hops, g, losses.fade_probability, delay_spread(prep))
    names = _candidates(pieces) + (["fading"] if losses.fade_probability > 0 else [])
    runs = _runs(pieces, a, gap, losses.fade_probability, per, longest, [None] + names)
    base = runs.pop(None)
    offsets = latency.attempt_offsets_s(attempts, per, system.dwell_s, system.packet_airtime_s)
    per_hour = 3600.0 / interval

    def avg(x: np.ndarray):
        """Weighted mean over the phase samples (first axis)."""
        out = np.tensordot(lay.weights, x, axes=(0, 0))
        return float(out) if np.ndim(out) == 0 else out

    def missed(run: _Run) -> np.ndarray:
        """P(not delivered within the deadline): every attempt lost, plus late deliveries (summed, not
        1 - P(met), so that small figures keep their digits)."""
        return run.lost_attempts[:, -1] + latency.late(traffic.deadline_s, run.delivered, offsets, system.dwell_s)

    removed = runs
    undelivered = base.lost_attempts[:, -1]  # pi F_1 ... F_R 1: no cancellation
    und_dom = _dominant({n: avg(r.lost_attempts[:, -1]) for n, r in removed.items()}, avg(undelivered))
    deadline = deadline_missed = meets_deadline = None
    if traffic.deadline_s is not None:
        miss = missed(base)
        dom = _dominant({n: avg(missed(r)) for n, r in removed.items()}, avg(miss))
        deadline_missed = _estimate(miss, lay, dom)
        lo, hi = deadline_missed.interval
        deadline = Estimate(1.0 - deadline_missed.value, (1.0 - hi, 1.0 - lo), dom)
        if traffic.deadline_probability is not None:
            meets_deadline = hi <= 1.0 - traffic.deadline_probability
    stops = meets_stops = None
    if m is not None:
        stop = base.rates[:, m - 1] * per_hour
        dom = _dominant({n: avg(r.rates[:, m - 1]) * per_hour for n, r in removed.items()}, avg(stop))
        stops = _estimate(stop, lay, dom)
        if traffic.max_stops_per_hour is not None:
            meets_stops = stops.interval[1] <= traffic.max_stops_per_hour
    weights = avg(base.delivered)
    deadline_clearance = stops_clearance = None
    if deadline is not None and traffic.deadline_probability is not None:
        deadline_clearance = _ratio(1.0 - traffic.deadline_probability, deadline_missed.interval[1])
    if stops is not None and traffic.max_stops_per_hour is not None:
        stops_clearance = _ratio(traffic.max_stops_per_hour, stops.interval[1])
    ceiling = collision_ceiling(system, losses.fade_probability)
    collision = float((1.0 - np.prod(1.0 - np.vstack([np.delete(losses.systems, v, axis=0), losses.interferers]),
                                     axis=0)).mean())
    return TrafficFigures(
        system_id=system.id, order_origin=origin, order_length=int(order_v.size), message_interval_s=interval,
        dwell_s=system.dwell_s, attempt_latency_s=tuple(float(x) for x in offsets),
        delivered_at_attempt=tuple(float(x) for x in weights),
        undelivered=_estimate(undelivered, lay, und_dom),
        latency_quantiles=tuple(Quantile(q, latency.quantile(q, weights, offsets, system.dwell_s))
                                for q in latency.LEVELS),
        lost_attempt_runs=tuple(float(x) for x in avg(base.lost_attempts)),
        lost_message_runs_per_hour=tuple(float(x) * per_hour for x in avg(base.rates)),
        deadline=deadline, deadline_missed=deadline_missed, meets_deadline=meets_deadline, watchdog_messages=m,
        stops_per_hour=stops,
        meets_stops=meets_stops, phase_samples=int(lay.hops.shape[0]), exact=lay.exact, requirement=traffic,
        deadline_clearance=deadline_clearance, stops_clearance=stops_clearance, collision_ceiling=ceiling,
        collision_probability=collision, ceiling_binds=bool(math.isfinite(ceiling) and collision >= 0.99 * ceiling))


def _ratio(allowed: float, predicted: float) -> float:
    return math.inf if predicted <= 0.0 else allowed / predicted


def work_cells(prep: PreparedSite, orders, v: int, samples: int = PHASE_SAMPLES) -> int:
    """Hop cells the chain of system v holds per configuration: samples x messages x hops per message."""
    system = prep.site.systems[v]
    g = message_hops(system, system.traffic)
    size = np.asarray(orders[v]).size
    messages = size // math.gcd(size, g) + max(watchdog_messages(system, system.traffic) or 0, DEFAULT_RUNS)
    return samples * messages * (system.retry_limit + 1) * system.hops_per_attempt


def samples_within_cap(prep: PreparedSite, orders, v: int, samples: int = PHASE_SAMPLES) -> int | None:
    """Phase samples for system v: `samples`, fewer where the chain would exceed `limits.MAX_TRAFFIC_CELLS`,
    None where even MIN_PHASE_SAMPLES would."""
    fit = limits.MAX_TRAFFIC_CELLS // work_cells(prep, orders, v, 1)
    return min(samples, fit) if fit >= MIN_PHASE_SAMPLES else None


def _planned_cells(prep: PreparedSite, orders, samples: int) -> list[tuple[int, int | None, int]]:
    """(system, phase samples it will get or None, the most hop cells it may take) for every system that gives
    traffic."""
    out = []
    for v, s in enumerate(prep.site.systems):
        if s.traffic is not None:
            n = samples_within_cap(prep, orders, v, samples)
            one = work_cells(prep, orders, v, 1)
            # counted at the most a phase lattice (`_lattice`) may take, which may exceed `samples`
            most = max(n or MIN_PHASE_SAMPLES, min(MAX_LATTICE, limits.MAX_TRAFFIC_CELLS // one))
            out.append((v, n, one * most))
    return out


def work_problems(prep: PreparedSite, orders, samples: int = PHASE_SAMPLES) -> list[tuple[tuple, str]]:
    """Systems whose traffic chain would exceed `limits.MAX_TRAFFIC_CELLS` even with MIN_PHASE_SAMPLES, and
    a site whose systems together exceed `limits.MAX_TRAFFIC_CELLS_TOTAL` (path under the site, message)."""
    out = []
    planned = _planned_cells(prep, orders, samples)
    for v, n, cells in planned:
        if n is None:
            out.append((("systems", v, "traffic"), f"its figures would need {cells} hop cells, above the cap of "
                        f"{limits.MAX_TRAFFIC_CELLS}; a shorter hop order, watchdog or retry limit lowers it"))
    total = sum(cells for _, n, cells in planned if n is not None)
    if total > limits.MAX_TRAFFIC_CELLS_TOTAL:
        out.append((("systems",), f"the traffic figures of all systems would need {total} hop cells, above the "
                    f"cap of {limits.MAX_TRAFFIC_CELLS_TOTAL}; give traffic for fewer systems"))
    return out


def site_traffic(prep: PreparedSite, hop_sets: list[np.ndarray], orders, origins,
                 samples: int = PHASE_SAMPLES, seed: int = 0) -> tuple[TrafficFigures, ...]:
    """`system_traffic` for every system that carries `traffic` (`origins[v]`: where its order came from), with
    fewer phase samples where the work cap calls for it; a system whose chain exceeds the cap even then, or
    that would take the site past `limits.MAX_TRAFFIC_CELLS_TOTAL`, is left out (an assessment refuses such a
    site beforehand with `work_problems`; a plan answers without those figures)."""
    out, spent = [], 0
    for v, n, cells in _planned_cells(prep, orders, samples):
        if n is not None and spent + cells <= limits.MAX_TRAFFIC_CELLS_TOTAL:
            out.append(system_traffic(prep, hop_sets, orders, v, origins[v], n, seed))
            spent += cells
    return tuple(out)
