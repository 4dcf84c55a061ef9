"""Benchmark: analytic evaluation of the large generated site (50 systems, 1040 channels).

Target: under 50 ms. Baselines in the same run: the plain-Python reference
evaluator of the test suite (tests/recompute.py) on the same hop sets, and the
same site with `fading: none` (the threshold model the kernel replaced: harm
0/1 inside the window, so the fading-aware kernel's cost shows as the ratio);
and the same site with every system Rician-faded (K = 6 dB), whose
transmissions are combined jointly (`cohop.joint`: about 28 evaluations of
each victim's row), as the price of the joint law.
Prints figures; asserts nothing.
"""

from __future__ import annotations

import _common  # noqa: F401  (sets sys.path)
from _common import machine, median_time

from bench import sitegen
from cohop.api.schemas.assessment import AssessmentResponseSchema
from cohop.assess import assess_site
from cohop.jobs.answers import assessment_answer
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from tests import recompute


def main() -> None:
    print(f"machine: {machine()}")
    for size in ("medium", "large"):
        site = load_site(sitegen.generate(size, seed=1))
        prep = prepare_site(site)
        t_prepare = median_time(lambda: prepare_site(site), 5)
        t_assess = median_time(lambda: assess_site(prep, detail="channel"), 7)
        response = AssessmentResponseSchema().dump(assessment_answer(assess_site(prep, detail="channel"), False))
        t_reference = median_time(lambda: recompute.check_assessment(response), 1)
        threshold = prepare_site(load_site(_without_fading(sitegen.generate(size, seed=1))))
        t_threshold = median_time(lambda: assess_site(threshold, detail="channel"), 7)
        n_sys, n_ch = len(site.systems), site.grid.count
        print(f"{size:6s} {n_sys} systems x {n_ch} channels: prepare {t_prepare * 1e3:.1f} ms + evaluate "
              f"{t_assess * 1e3:.1f} ms = {(t_prepare + t_assess) * 1e3:.1f} ms (target < 50 ms for large); "
              f"plain-Python reference evaluation {t_reference * 1e3:.0f} ms, speed-up x{t_reference / t_assess:.0f}")
        print(f"{'':6s} the same site with fading none (threshold harm): evaluate {t_threshold * 1e3:.1f} ms; "
              f"fading-aware / threshold x{t_assess / t_threshold:.2f}")
        rician = prepare_site(load_site(_with_fading(sitegen.generate(size, seed=1),
                                                     {"model": "rician", "k_factor_db": 6.0})))
        t_rician = median_time(lambda: assess_site(rician, detail="channel"), 3)
        print(f"{'':6s} the same site all Rician (K = 6 dB, joint law): evaluate {t_rician * 1e3:.1f} ms; "
              f"joint / Rayleigh product x{t_rician / t_assess:.1f}")


def _without_fading(body: dict) -> dict:
    return _with_fading(body, "none")


def _with_fading(body: dict, fading) -> dict:
    for s in body["systems"]:
        s["fading"] = fading
    return body


if __name__ == "__main__":
    main()
