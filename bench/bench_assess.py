"""Benchmark: analytic evaluation of the large generated site (50 systems, 1040 channels).

Target: under 50 ms. Baselines in the same run: the plain-Python reference
evaluator of the test suite (tests/recompute.py) on the same hop sets, and the
same site with `fading: none` (the threshold model the kernel replaced: harm
0/1 inside the window, so the fading-aware kernel's cost shows as the ratio).
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


def _without_fading(body: dict) -> dict:
    for s in body["systems"]:
        s["fading"] = "none"
    return body


if __name__ == "__main__":
    main()
