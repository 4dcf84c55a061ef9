"""Benchmark: Monte Carlo throughput on a 20-system site, one core.

Target: at least 10 million simulated packet attempts per second. Baseline in
the same run: a straightforward numpy simulation of the same model for one
system (draw the victim channel, its wanted power, the phase and each
source's channel per trial, and add each active transmission's power at its
offset), which shows what the vectorisation buys.
Prints figures; asserts nothing.
"""

from __future__ import annotations

import math
import os
import time

import _common  # noqa: F401
from _common import machine

import numpy as np

from bench import sitegen
from cohop.site_rules import load_site
from cohop.assess import resolve_hop_sets
from cohop.harm import rejection_steps, step_of
from cohop.montecarlo import simulate_site
from cohop.prepare import prepare_site


def straightforward(prep, hop_sets, trials: int, seed: int) -> float:
    """Per-hop collision of system 0 (Rayleigh-faded wanted signal, steady interference: the bench site's),
    drawing everything per trial (float64 draws, gathers): the victim's channel, its wanted power given that it
    clears the noise (m + Exp(1)), each source's phase and, per overlapped dwell, its activity and channel; each
    active dwell inside the window adds 10^((E - R_v(offset)) / 10)."""
    rng = np.random.default_rng(seed)
    v = 0
    victim = prep.site.systems[v]
    _, rejection = rejection_steps(victim)
    chans = hop_sets[v][rng.integers(0, hop_sets[v].size, trials)]
    slack = rng.standard_exponential(trials)  # s - m given s > m
    interference = np.zeros(trials)
    for a, link in enumerate(prep.links[v]):
        reach = prep.harm.reach[v, a]
        if link is None or reach < 0:
            continue
        src = prep.site.systems[a]
        phi = rng.random(trials) * src.dwell_s
        k = np.ceil((victim.packet_airtime_s - phi) / src.dwell_s) - np.floor(
            (-src.packet_airtime_s - phi) / src.dwell_s) - 1
        kmax = math.ceil((victim.packet_airtime_s + src.packet_airtime_s) / src.dwell_s)
        for j in range(kmax):
            active = rng.random(trials) < link.activity_fraction
            other = hop_sets[a][rng.integers(0, hop_sets[a].size, trials)]
            d = np.abs(other - chans)
            excess = link.excess_db - rejection[step_of(victim, d * prep.spacing_hz)]
            on = active & (k > j) & (d <= reach)
            interference += np.where(on, np.power(10.0, excess / 10.0), 0.0)
    return float(np.mean(slack < interference))


def main() -> None:
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {sorted(os.sched_getaffinity(0))[0]})  # one core
    print(f"machine: {machine()}; pinned to one core")
    site = load_site(sitegen.scaled(20, 260, seed=2, per_system=50))
    prep = prepare_site(site)
    sets, _ = resolve_hop_sets(prep)
    trials = 500_000
    simulate_site(prep, 20_000, seed=0)  # warm-up
    best = math.inf
    for seed in range(3):
        t = time.perf_counter()
        sim = simulate_site(prep, trials, seed=seed)
        best = min(best, time.perf_counter() - t)
    attempts = sum(s.collision.trials for s in sim.systems)
    rate = attempts / best
    t = time.perf_counter()
    straightforward(prep, sets, trials, seed=0)
    base_rate = trials / (time.perf_counter() - t)
    print(f"20 systems x 260 channels, {attempts} attempts: {rate / 1e6:.1f} M attempts/s "
          f"(target >= 10 M/s); straightforward numpy {base_rate / 1e6:.2f} M attempts/s; "
          f"ratio x{rate / base_rate:.1f}")


if __name__ == "__main__":
    main()
