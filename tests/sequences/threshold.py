"""A site with fading "none" and the figures the threshold code gave for it (before soft harm), which the
sequence analysis, the sequence-driven simulation and the traffic figures must keep: with fading "none" the
harm is 1 inside the threshold window and 0 outside (cohop.harm)."""

import numpy as np

from cohop.prepare import prepare_site
from cohop.site import Traffic
from tests import sites

#: s0's traffic requirement in the traffic figures below.
TRAFFIC = Traffic(message_interval_s=0.05, deadline_s=0.03, deadline_probability=0.9, watchdog_s=0.2)


def scenario():
    """Four systems with fading "none": two slot-aligned, two unsynchronised with shorter dwells (K = 3 of the
    fastest at the slowest), two fixed interferers (one continuous, one bursty); 50 dB coupling (window 1)."""
    none = {"model": "none"}
    systems = [sites.system("s0", range(0, 20), dwell_s=0.01, packet_airtime_s=0.002, time_base_group="g",
                            fading=none),
               sites.system("s1", range(10, 30), dwell_s=0.01, packet_airtime_s=0.002, time_base_group="g",
                            activity_fraction=0.6, fading=none),
               sites.system("s2", range(5, 25), dwell_s=0.004, packet_airtime_s=0.004, activity_fraction=0.8,
                            fading=none),
               sites.system("s3", range(0, 30), dwell_s=0.001, packet_airtime_s=0.001, activity_fraction=0.3,
                            fading=none)]
    itf = [{"id": "wall", "low_hz": 2404.5e6, "high_hz": 2406.5e6, "activity_fraction": 0.5,
            "levels": [{"system": s["id"], "level_dbm": -62.0} for s in systems]},
           {"id": "radar", "low_hz": 2418.5e6, "high_hz": 2419.5e6, "activity_fraction": 0.7, "burst_s": 0.003,
            "period_s": 0.02, "levels": [{"system": s["id"], "level_dbm": -55.0} for s in systems]}]
    prep = prepare_site(sites.load(sites.site(systems, coupling_loss_db=50.0, interferers=itf, n_channels=32)))
    rng = np.random.default_rng(11)
    return prep, [rng.permutation(np.asarray(s.hop_set)) for s in prep.site.systems]


#: The threshold code's pair figures for `scenario` (cohop.sequences.analysis at commit 83dbb22,
#: before soft harm): (victim, source, unaligned hit rate, aligned hit rate, longest run, shared channels,
#: most coincidences).
PAIRS = [
    (0, 1, 0.018000000000000016, 0.06, 3, 10, 2), (0, 2, 0.13137894736842104, None, 4, 15, None),
    (0, 3, 0.08670631773399014, None, 2, 20, None), (1, 0, 0.030000000000000027, 0.1, 3, 10, 2),
    (1, 2, 0.13137894736842104, None, 3, 15, None), (1, 3, 0.08670631773399014, None, 2, 20, None),
    (2, 0, 0.06749999999999998, None, 3, 15, None), (2, 1, 0.04049999999999996, None, 3, 15, None),
    (2, 3, 0.14385960591133018, None, 3, 20, None), (3, 0, 0.02950000000000003, None, 2, 20, None),
    (3, 1, 0.017700000000000018, None, 2, 20, None), (3, 2, 0.09842807017543859, None, 2, 20, None)]


#: The threshold code's retry simulation (cohop.sequences.simulate at commit 83dbb22) of `scenario`'s orders:
#: simulate_all(prep, orders, 4000, seed 7, 100 ns, the analysis' reach): (attempt loss, residual loss).
SIMULATED = [(0.357375, 0.02125), (0.30425, 0.01425), (0.3061875, 0.00925), (0.22075, 0.0015)]

#: The threshold code's traffic figures (cohop.traffic.figures at commit 83dbb22) of s0 with `TRAFFIC`,
#: 16 phase samples, seed 3, with the orders of s0, s1, s2 known (s3 not) and of s0, s2, s3 known (s1 not):
#: (undelivered, deadline missed, stops per hour, delivered at attempt 1..4).
TRAFFIC_FIGURES = [
    (0.02119764979271151, 0.06660525226277865, 0.017715905002756396,
     (0.6154117578779201, 0.22546487393508383, 0.11564764490527177, 0.02227807348901279)),
    (0.017321334012929325, 0.08074865857334894, 0.0010427650248593834,
     (0.5755540000000001, 0.23246304811874993, 0.1390428666348764, 0.03561875123344435))]
