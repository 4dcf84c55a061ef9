"""An independent re-implementation that recomputes every figure of an assessment.

It reads the request (site dict) and the response (JSON dict) only, uses
plain Python loops and `math`, and shares no code with the service. Tests
call `check_assessment`, which raises AssertionError on the first figure that
does not follow from the response's own inputs.
"""

from __future__ import annotations

import math

REL = 1e-9
ABS = 1e-12


def _close(a: float, b: float, what: str) -> None:
    assert math.isclose(a, b, rel_tol=REL, abs_tol=ABS), f"{what}: reported {a!r}, recomputed {b!r}"


def overlap_distribution(overlap: dict | None) -> dict[int, float]:
    if overlap is None:
        return {}
    k0, r = overlap["base_count"], overlap["extra_probability"]
    return {k0: 1.0 - r, k0 + 1: r}


def standalone(p: float, overlap: dict | None) -> float:
    """Collision probability of one source: 1 - E[(1 - p)^K]; continuous sources: p itself."""
    if overlap is None:
        return p
    return 1.0 - sum(prob * (1.0 - p) ** k for k, prob in overlap_distribution(overlap).items())


def elementary_symmetric(values: list[float], m: int) -> float:
    """e_m(values) by the textbook recursion e_j <- e_j + y e_{j-1}."""
    e = [1.0] + [0.0] * m
    for y in values:
        for j in range(m, 0, -1):
            e[j] += y * e[j - 1]
    return e[m]


def distinct_standalone(alpha: float, harms: list[float], overlap: dict) -> float:
    """Collision probability of a hopping source whose K overlapped dwells lie on K distinct channels of its hop
    set, a dwell on a channel of harm rho_j (given per channel of the set, 0 where harmless) being survived with
    y_j = 1 - alpha rho_j: 1 - E_K[(prod y)^q e_m(y) / C(N, m)], q, m = divmod(K, N) (each m-subset equally
    likely; the domain reference, "several dwells in one packet"; with rho in {0, 1} the hypergeometric form)."""
    size = len(harms)
    keeps = [1.0 - alpha * h for h in harms]
    product = math.prod(keeps)
    survive = 0.0
    for k, prob in overlap_distribution(overlap).items():
        q, m = divmod(k, size)
        survive += prob * product**q * elementary_symmetric(keeps, m) / math.comb(size, m)
    return 1.0 - survive


def harm_at_offset(harm_by_offset: list[float], d: int) -> float:
    """The reported harm of a source system at channel offset d (the last value holds beyond)."""
    return harm_by_offset[min(abs(d), len(harm_by_offset) - 1)]


def harm_at_distance(harm_by_distance: list[list[float]], distance_hz: float) -> float:
    """The reported harm of an interferer on a channel `distance_hz` off its span (0 inside): the last step
    beginning at or below it (offsets within 1e-9 of a step count as on it, as the rejection table does)."""
    value = 0.0
    for start, rho in harm_by_distance:
        if distance_hz * (1 + 1e-9) >= start:
            value = rho
    return value


def channel_figures(victim: dict, systems_by_id: dict[str, dict]) -> list[dict[str, float]]:
    """Per channel of the victim's hop set: {source id: standalone probability}."""
    out = []
    centres = {ch["channel"]: ch["centre_hz"] for ch in victim.get("channels") or []}
    for c in victim["hop_set"]:
        row = {}
        for src in victim["sources"]:
            if src["kind"] == "system":
                other = systems_by_id[src["id"]]["hop_set"]
                harms = [harm_at_offset(src["harm_by_offset"], c - c2) for c2 in other]
                row[src["id"]] = distinct_standalone(src["activity_fraction"], harms, src["overlap"])
                continue
            low, high = src["span_hz"]
            f = centres[c]
            rho = harm_at_distance(src["harm_by_distance"], max(0.0, low - f, f - high))
            row[src["id"]] = standalone(src["activity_fraction"] * rho, src["overlap"])
        out.append(row)
    return out


def combine(probabilities) -> float:
    survive = 1.0
    for p in probabilities:
        survive *= 1.0 - p
    return 1.0 - survive


def check_system(victim: dict, systems_by_id: dict[str, dict]) -> None:
    joint = victim["link"]["capture"]["combination"] == "joint"
    if joint:
        rows, totals = RicianJoint(victim).channel_figures(systems_by_id)
        close = _close_joint
    else:
        rows = channel_figures(victim, systems_by_id)
        totals = [combine(r.values()) for r in rows]
        close = _close
    fade = victim["per_hop"]["fade_probability"]
    if victim["channels"]:
        for reported, total, c in zip(victim["channels"], totals, victim["hop_set"]):
            assert reported["channel"] == c
            close(reported["collision_probability"], total, f"{victim['id']} channel {c} collision")
            _close(reported["hop_loss_probability"], combine([reported["collision_probability"], fade]),
                   f"{victim['id']} channel {c} loss")
            if "by_source" in reported:
                expected = rows[victim["hop_set"].index(c)]
                assert set(reported["by_source"]) <= set(expected)  # the nonzero ones (rounding aside) are listed
                for k, v in expected.items():
                    close(reported["by_source"].get(k, 0.0), v, f"{victim['id']} channel {c} from {k}")
    if joint and victim["channels"]:  # the reported channel figures, recomputed above, make the mean
        totals = [ch["collision_probability"] for ch in victim["channels"]]
    mean = sum(totals) / len(totals)
    close(victim["per_hop"]["collision_probability"], mean, f"{victim['id']} per-hop collision")
    for src in victim["sources"]:
        m = sum(r[src["id"]] for r in rows) / len(rows)
        close(src["collision_probability"], m, f"{victim['id']} from {src['id']}")
    if joint:  # the joint figure is at least the product of the standalone ones (the Rician survival is log-concave)
        for row, total in zip(rows, totals):
            assert total >= combine(row.values()) - 1e-9, (victim["id"], total, row)
    mean = victim["per_hop"]["collision_probability"]
    hops = victim["per_attempt"]["hops"]
    coll_attempt = 1 - (1 - mean) ** hops
    fade_attempt = 1 - (1 - fade) ** hops
    loss = combine([coll_attempt, fade_attempt])
    _close(victim["per_attempt"]["collision_probability"], coll_attempt, f"{victim['id']} attempt collision")
    _close(victim["per_attempt"]["fade_probability"], fade_attempt, f"{victim['id']} attempt fade")
    _close(victim["per_attempt"]["loss_probability"], loss, f"{victim['id']} attempt loss")
    k = victim["retries"]["retry_limit"]
    _close(victim["retries"]["residual_loss_probability"], loss ** (k + 1), f"{victim['id']} residual")
    _close(victim["retries"]["expected_attempts"], sum(loss**j for j in range(k + 1)), f"{victim['id']} attempts")


def check_assessment(response: dict) -> None:
    systems = response["systems"]
    by_id = {s["id"]: s for s in systems}
    for s in systems:
        check_system(s, by_id)
    weighted = sum(s["priority_weight"] * s["per_hop"]["collision_probability"] for s in systems)
    _close(response["summary"]["weighted_collision_probability"], weighted, "weighted collision")
    worst = max(systems, key=lambda s: s["per_hop"]["collision_probability"])
    _close(response["summary"]["worst_collision_probability"], worst["per_hop"]["collision_probability"], "worst")


# --- the inputs of the figures, from the request --------------------------------

def stepped_rejection(table: list[dict], offset_hz: float) -> float:
    value = 0.0
    for row in table:
        if offset_hz >= row["offset_hz"] * (1 - 1e-9):
            value = row["rejection_db"]
    return value


def expected_window(excess_db: float, table: list[dict], spacing_hz: float, count: int) -> int:
    """Largest grid offset d with R(d spacing) < excess, by direct search; -1 if none."""
    w = -1
    for d in range(count + 1):
        if stepped_rejection(table, d * spacing_hz) < excess_db:
            w = d
        else:
            break
    return w


def expected_overlap(victim_airtime_s: float, burst_s: float, period_s: float) -> tuple[dict[int, float], float]:
    """Distribution of the number of overlapped bursts, and the tolerance it is known to.

    A uniformly random relative phase (geometric probability, derived) gives P0, P1, P2 for (Tv + Ta) <= 2 D; longer
    packets are counted by brute force over 20000 phases (tolerance 1e-4).
    """
    w = (victim_airtime_s + burst_s) / period_s
    if w <= 1:
        return {0: 1 - w, 1: w}, REL
    if w <= 2:
        return {1: 2 - w, 2: w - 1}, REL
    steps = 20000
    counts: dict[int, float] = {}
    for i in range(steps):
        phi = (i + 0.5) / steps * period_s
        k = sum(1 for m in range(-int(w) - 2, int(w) + 3)
                if phi + m * period_s < victim_airtime_s and phi + m * period_s + burst_s > 0)
        counts[k] = counts.get(k, 0.0) + 1.0 / steps
    return counts, 1e-4


def check_inputs_from_request(site: dict, response: dict) -> None:
    """For a site whose coupling is all explicit and wanted signals given: levels, windows, overlaps."""
    req = {s["id"]: s for s in site["systems"]}
    loss = {}
    for e in site["coupling"]["entries"]:
        loss[(e["from_system"], e["to_system"])] = e["loss_db"]
    for e in site["coupling"]["entries"]:
        loss.setdefault((e["to_system"], e["from_system"]), e["loss_db"])
    grid = site["grid"]
    for v in response["systems"]:
        victim = req[v["id"]]
        for src in v["sources"]:
            if src["kind"] != "system":
                continue
            a = req[src["id"]]
            level = a["tx_power_dbm"] - loss[(a["id"], victim["id"])]
            excess = level - (victim["wanted_signal_dbm"] - victim["required_sir_db"])
            _close(src["level_dbm"], level, f"level {a['id']}->{victim['id']}")
            _close(src["excess_db"], excess, f"excess {a['id']}->{victim['id']}")
            assert src["window_channels"] == min(expected_window(excess, victim["rejection"], grid["spacing_hz"],
                                                                 grid["count"]), grid["count"])
            check_harm(victim, src, excess, grid)
            same_group = victim.get("time_base_group") and victim.get("time_base_group") == a.get("time_base_group")
            got = overlap_distribution(src["overlap"])
            want, tol = ({1: 1.0}, REL) if same_group else expected_overlap(
                victim["packet_airtime_s"], a["packet_airtime_s"], a["dwell_s"])
            for k in set(got) | set(want):
                assert math.isclose(got.get(k, 0.0), want.get(k, 0.0), abs_tol=tol), \
                    f"P(K={k}) {a['id']}->{victim['id']}: {got} vs {want}"


# --- the harm of one transmission, from the request -------------------------------

HARM_FLOOR = 1e-3  # the service's documented truncation (DEVELOPERS.md, model)


def expected_harm(excess_db: float, fading) -> float | None:
    """Closed forms of the harm of one transmission at `excess_db` over the capture threshold: threshold
    (fading none); Rayleigh-faded wanted signal: 1 - exp(-x) with steady interference (Kahlon, Szyszkowicz,
    Periyalwar and Yanikomeroglu, IEEE WCL 1(5), 2012), x / (1 + x) with Rayleigh-faded interference (Linnartz,
    Narrowband Land-Mobile Radio Networks, 1993), x = 10^(E/10); truncated below HARM_FLOOR. None for Rician
    signals (checked against scipy in tests/physics and by the Monte Carlo instead)."""
    if isinstance(fading, str) or fading is None:
        fading = {"model": fading or "rayleigh"}
    model, link = fading["model"], fading.get("interference", "steady")
    if model == "none":
        return 1.0 if excess_db > 0 else 0.0
    if model != "rayleigh":
        return None
    x = 10 ** (excess_db / 10)
    rho = 1 - math.exp(-x) if link == "steady" else x / (1 + x)
    return 0.0 if rho < HARM_FLOOR else rho


def check_harm(victim: dict, src: dict, excess_db: float, grid: dict) -> None:
    """The reported harm at each channel offset (and one beyond the list) against the closed forms."""
    for d in range(len(src["harm_by_offset"]) + 1):
        want = expected_harm(excess_db - stepped_rejection(victim["rejection"], d * grid["spacing_hz"]),
                             victim.get("fading"))
        if want is not None:
            _close(harm_at_offset(src["harm_by_offset"], d), want, f"harm {src['id']}->{victim['id']} at {d}")


# --- several transmissions at a Rician-faded victim: the joint law, by direct convolution -----------------------

JOINT_REL, JOINT_ABS = 1e-7, 1e-9  # the service's transform is exact to about 1e-10 (cohop.physics.capture)


def _close_joint(a: float, b: float, what: str) -> None:
    assert math.isclose(a, b, rel_tol=JOINT_REL, abs_tol=JOINT_ABS), f"{what}: reported {a!r}, recomputed {b!r}"


def _poisson_pmf(mean: float, size: int) -> list[float]:
    out, p = [], math.exp(-mean)
    for k in range(size):
        out.append(p)
        p *= mean / (k + 1)
    return out


class RicianJoint:
    """The hop's survival at a Rician-faded victim with every overlapped transmission together, computed here by
    direct convolution of integer counts (the service uses a transform on a contour instead).

    The unit-mean Rician power s of K-factor K is Gamma(N_K + 1, 1 / (K + 1)) with N_K ~ Poisson(K) (a Poisson
    mixture of Gammas, Goldsmith, "Wireless Communications", ch. 3), so P(s > t) = P(N_K >= N_t) with N_t ~
    Poisson((K + 1) t) [Gamma-Poisson duality]. The noise m and the transmissions add to t: the noise gives a
    Poisson((K + 1) m) count, a steady transmission of excess x a Poisson((K + 1) x) count, a Rayleigh-faded one
    an exponentially mixed Poisson count, i.e. geometric with P(k) = (1 - p) p^k, p = b / (1 + b), b = (K + 1) x.
    The success is sum_k P(total count = k) P(N_K >= k): the counts are convolved (truncated where P(N_K > k)
    < 1e-14, which is exact for the success). Each source's harm rho (reported) is turned back into its x by
    bisection on this same law with one transmission."""

    def __init__(self, victim: dict):
        cap = victim["link"]["capture"]
        self.k = 10 ** (cap["k_factor_db"] / 10)
        self.gain = self.k + 1.0
        self.link = cap["interference_fading"]
        size = 1
        while sum(_poisson_pmf(self.k, size)) < 1 - 1e-14:
            size += 1
        self.size = size + 1
        pmf = _poisson_pmf(self.k, self.size)
        self.tail = [1.0 - sum(pmf[:k]) for k in range(self.size)]  # P(N_K >= k)
        self.noise = _poisson_pmf(self.gain * 10 ** (-victim["link"]["fade_margin_db"] / 10), self.size)
        self.base = self.success(self.noise)
        self.victim = victim
        self._x: dict[float, float] = {}

    def conv(self, a, b):
        import numpy as np
        return np.convolve(a, b)[:self.size]

    def success(self, counts) -> float:
        return float(sum(p * q for p, q in zip(counts, self.tail)))

    def transmission(self, x: float):
        """The count of one transmission of excess x (linear): Poisson or geometric."""
        b = self.gain * x
        if self.link == "steady":
            return _poisson_pmf(b, self.size)
        p = b / (1.0 + b)
        return [(1.0 - p) * p**k for k in range(self.size)]

    def harm(self, x: float) -> float:
        return 1.0 - self.success(self.conv(self.noise, self.transmission(x))) / self.base

    def excess(self, rho: float) -> float | None:
        """x (linear) whose harm is rho, by bisection on log x; None for rho = 1 (every hop lost), 0 for 0."""
        if rho <= 0.0:
            return 0.0
        if rho >= 1.0:
            return None
        if rho not in self._x:
            lo, hi = -80.0, 80.0  # dB
            for _ in range(200):
                mid = 0.5 * (lo + hi)
                lo, hi = (mid, hi) if self.harm(10 ** (mid / 10)) < rho else (lo, mid)
            self._x[rho] = 10 ** (0.5 * (lo + hi) / 10)
        return self._x[rho]

    def factor(self, alpha: float, rho: float):
        """The count of one dwell: no transmission with 1 - alpha, a transmission of harm rho with alpha."""
        out = [0.0] * self.size
        out[0] = 1.0 - alpha
        x = self.excess(rho)
        if x is None:  # a certain loss: the count is beyond every N_K (mass outside the truncated range)
            return out
        return [o + alpha * t for o, t in zip(out, self.transmission(x))]

    def power(self, y, n: int):
        out = [1.0] + [0.0] * (self.size - 1)
        for _ in range(n):
            out = self.conv(out, y)
        return out

    def hopping(self, alpha: float, harms: list[float], overlap: dict):
        """The count of a hopping source whose K overlapped dwells lie on K distinct channels of its set: E over K
        of (prod over all)^q * e_m / C(N, m) (the several-dwell law, in the ring of counts)."""
        import numpy as np
        ys = [self.factor(alpha, h) for h in harms]
        total = np.zeros(self.size)
        for k, prob in overlap_distribution(overlap).items():
            q, m = divmod(k, len(ys))
            e = [np.eye(1, self.size)[0]] + [np.zeros(self.size) for _ in range(m)]
            for y in ys:
                for j in range(m, 0, -1):
                    e[j] = e[j] + self.conv(y, e[j - 1])
            whole = self.power(np.eye(1, self.size)[0], 0)
            for y in ys if q else []:
                whole = self.conv(whole, y)
            total = total + prob * self.conv(self.power(whole, q), e[m] / math.comb(len(ys), m))
        return total

    def interferer(self, alpha: float, rho: float, overlap: dict | None):
        y = self.factor(alpha, rho)
        if overlap is None:
            return y
        import numpy as np
        return sum(prob * np.asarray(self.power(y, k)) for k, prob in overlap_distribution(overlap).items())

    def channel_figures(self, systems_by_id: dict[str, dict]):
        """Per channel of the hop set: ({source: standalone collision}, the channel's collision)."""
        victim = self.victim
        centres = {ch["channel"]: ch["centre_hz"] for ch in victim.get("channels") or []}
        rows, totals = [], []
        for c in victim["hop_set"]:
            row, every = {}, self.noise
            for src in victim["sources"]:
                if src["kind"] == "system":
                    other = systems_by_id[src["id"]]["hop_set"]
                    counts = self.hopping(src["activity_fraction"],
                                          [harm_at_offset(src["harm_by_offset"], c - c2) for c2 in other], src["overlap"])
                else:
                    low, high = src["span_hz"]
                    rho = harm_at_distance(src["harm_by_distance"], max(0.0, low - centres[c], centres[c] - high))
                    counts = self.interferer(src["activity_fraction"], rho, src["overlap"])
                row[src["id"]] = 1.0 - self.success(self.conv(self.noise, counts)) / self.base
                every = self.conv(every, counts)
            rows.append(row)
            totals.append(1.0 - self.success(every) / self.base)
        return rows, totals
