"""Shared fixtures and builders for the POST /v1/plans tests.

The small site: four Bluetooth-like systems on a custom 30 x 1 MHz grid from
2402 MHz (band 2400..2432 MHz), every pair coupled by an explicit entry, wanted
signals and fade margins given. The custom profile has no channel minimum, so
the requirements fix each system's count (min_channels == max_channels).
"""

from __future__ import annotations

import copy
import json

import pytest
from openapi_schema_validator import OAS30Validator

from cohop import samples
from tests import recompute
from tests.problems import problem_body

PLANS = "/v1/plans"
INFEASIBLE = "urn:cohop:problem:no-feasible-plan"
INVALID = "urn:cohop:problem:invalid-request"
SAMPLE_NAMES = ("water_works", "container_terminal", "open_pit_mine")
BASELINE_NAMES = ("whole_band", "random", "contiguous", "interleaved", "greedy")

N_CHANNELS = 30
FIRST_CENTRE_HZ = 2402e6
SPACING_HZ = 1e6
REJECTION = [{"offset_hz": 1e6, "rejection_db": 11.0}, {"offset_hz": 2e6, "rejection_db": 41.0},
             {"offset_hz": 3e6, "rejection_db": 51.0}]
IDS = ("a", "b", "c", "d")
WEIGHTS = {"a": 1.0, "b": 2.0, "c": 1.5, "d": 0.5}
SIZES = {"a": 10, "b": 10, "c": 8, "d": 6}  # 34 channels on 30: some sharing is forced
LOSSES = {("a", "b"): 30.0, ("a", "c"): 40.0, ("a", "d"): 55.0, ("b", "c"): 45.0, ("b", "d"): 35.0,
          ("c", "d"): 50.0}
# Covers channels 0..20 for system d (level -40 dBm: harmful co-channel and one channel off);
# far below every other system's threshold.
INTERFERER_ID = "wifi"
INTERFERER_ACTIVITY = 0.2
INTERFERED_CHANNELS = set(range(0, 21))
FAST = {"time_limit_s": 0.5, "seed": 0}
TOL = 1e-9


def small_system(sid: str, **overrides) -> dict:
    s = {"id": sid, "tx_power_dbm": 0.0, "antenna_gain_dbi": 0.0, "bandwidth_hz": 1e6, "dwell_s": 0.01,
         "packet_airtime_s": 0.004, "activity_fraction": 0.5, "required_sir_db": 11.0,
         "rejection": copy.deepcopy(REJECTION), "wanted_signal_dbm": -60.0, "fade_margin_db": 20.0,
         "retry_limit": 3, "priority_weight": WEIGHTS.get(sid, 1.0)}
    s.update(overrides)
    return s


def small_site(ids=IDS, n_channels: int = N_CHANNELS, losses=None, loss_db: float = 40.0,
               interferers=None) -> dict:
    """Custom-profile site; `losses[(i, j)]` per pair, else `loss_db`."""
    losses = LOSSES if losses is None and tuple(ids) == IDS else (losses or {})
    entries = [{"from_system": a, "to_system": b, "loss_db": losses.get((a, b), loss_db)}
               for i, a in enumerate(ids) for b in ids[i + 1:]]
    return {"name": "plan test site", "profile": "custom",
            "band": {"low_hz": 2400e6, "high_hz": FIRST_CENTRE_HZ + n_channels * SPACING_HZ},
            "grid": {"first_centre_hz": FIRST_CENTRE_HZ, "spacing_hz": SPACING_HZ, "count": n_channels},
            "systems": [small_system(s) for s in ids], "coupling": {"entries": entries},
            "interferers": list(interferers or [])}


def interferer(victim: str = "d", level_dbm: float = -40.0, ids=IDS) -> dict:
    """A wideband interferer over 2401..2421 MHz, heard only by `victim`."""
    return {"id": INTERFERER_ID, "low_hz": 2401e6, "high_hz": 2421e6, "activity_fraction": INTERFERER_ACTIVITY,
            "levels": [{"system": s, "level_dbm": level_dbm if s == victim else -130.0} for s in ids]}


def small_request(sizes=None, site=None, **overrides) -> dict:
    sizes = SIZES if sizes is None else sizes
    body = {"site": site or small_site(),
            "requirements": {"systems": [{"system": s, "min_channels": n, "max_channels": n}
                                         for s, n in sizes.items()]},
            "search": dict(FAST)}
    body.update(overrides)
    return body


def requirement(body: dict, sid: str) -> dict:
    """The (mutable) requirement entry of system `sid` in a request body."""
    for r in body["requirements"]["systems"]:
        if r["system"] == sid:
            return r
    raise KeyError(sid)


def sample_request(name: str, **overrides) -> dict:
    body = samples.load(name)
    body["search"] = dict(FAST)
    body.update(overrides)
    return body


def by_id(rows) -> dict:
    return {r["id"]: r for r in rows}


def without_time(body: dict) -> dict:
    out = copy.deepcopy(body)
    out["solver"].pop("time_s", None)
    return out


def assert_repeats(first: dict, second: dict) -> None:
    """Two answers to the same request and seed: the same answer unless the wall clock stopped a phase
    of either (a busy machine); an answer says so exactly when it happened."""
    for answer in (first, second):
        said = any("wall clock stopped" in n for n in answer["solver"]["notes"])
        assert answer["solver"]["stopped_by_wall_clock"] == said
    if not (first["solver"]["stopped_by_wall_clock"] or second["solver"]["stopped_by_wall_clock"]):
        assert without_time(first) == without_time(second)


def unfaded(site: dict) -> dict:
    """`site` with every receiver judged on the capture threshold (`fading: none`: harm 1 inside the harmful
    window, 0 outside), for tests whose expectations are the threshold's channel sets or levels."""
    for s in site["systems"]:
        s["fading"] = "none"
    return site


def interfered(threshold: float, d_count: int, pins=()) -> dict:
    """The small request with the interferer on d, d needing `d_count` channels; unfaded, so the interferer
    harms exactly INTERFERED_CHANNELS."""
    body = small_request(site=unfaded(small_site(interferers=[interferer()])))
    body["requirements"]["interferer_threshold"] = threshold
    requirement(body, "d").update(min_channels=d_count, max_channels=d_count, pinned_channels=list(pins))
    return body


# --- invariants of a plan answer ---------------------------------------------------

def check_plan(body: dict, answer: dict) -> None:
    """Shape and internal consistency of a 200 plan answer for request `body`."""
    site, grid = body["site"], body["site"]["grid"]
    ids = [s["id"] for s in site["systems"]]
    assert [p["id"] for p in answer["plan"]] == ids
    assessed = by_id(answer["assessment"]["systems"])
    assert list(assessed) == ids
    for p in answer["plan"]:
        hs = p["hop_set"]
        assert hs and hs == sorted(set(hs)) and 0 <= hs[0] and hs[-1] < grid["count"]
        assert p["channel_count"] == len(hs) == assessed[p["id"]]["channel_count"]
        assert assessed[p["id"]]["hop_set"] == hs
        assert p["centres_hz"] == pytest.approx([grid["first_centre_hz"] + c * grid["spacing_hz"] for c in hs],
                                                rel=1e-12)
    check_solver(answer)
    recompute.check_assessment(answer["assessment"])
    for s in answer["assessment"]["systems"]:
        assert all(f["status"] != "fail" for f in s["compliance"]["findings"]), s["compliance"]


def check_solver(answer: dict) -> None:
    s = answer["solver"]
    assert s["status"] in ("optimal", "feasible")
    assert 0.0 <= s["bound"] <= s["objective"] + TOL
    assert s["bound"] == pytest.approx(min(max(s["bounds"].values()), s["objective"]), abs=1e-12)
    assert all(0.0 <= b <= s["objective"] * (1 + TOL) + TOL for b in s["bounds"].values()), s["bounds"]
    if s["objective"] > 0:
        assert s["gap"] == pytest.approx((s["objective"] - s["bound"]) / s["objective"], rel=TOL, abs=1e-12)
    else:
        assert s["gap"] in (0.0, None)
    if answer["coordination"] == "joint":  # independent: the solver's objective leaves the other systems out
        assert s["linearisation_error"] == pytest.approx(s["objective"] - s["evaluated_objective"], abs=1e-12)
    assert s["linearisation_error"] >= -1e-12
    systems = answer["assessment"]["systems"]
    rates = [x["per_hop"]["collision_probability"] for x in systems]
    expected = max(rates) if s["objective_kind"] == "worst_system" else \
        sum(x["priority_weight"] * r for x, r in zip(systems, rates))
    assert s["evaluated_objective"] == pytest.approx(expected, rel=TOL, abs=1e-12)
    assert s["time_limit_s"] > 0 and s["time_s"] >= 0 and s["method"]


def check_comparison(answer: dict) -> None:
    scored = [b for b in answer["baselines"] if b["objective"] is not None]
    best = min(scored, key=lambda b: b["objective"])
    comp = answer["comparison"]
    assert comp["best_baseline"] == best["name"]
    assert comp["best_baseline_objective"] == pytest.approx(best["objective"], rel=TOL)
    assert comp["plan_objective"] == pytest.approx(answer["solver"]["evaluated_objective"], rel=TOL)
    assert comp["ratio"] == pytest.approx(answer["solver"]["evaluated_objective"] / best["objective"], rel=TOL)




def post_plan(client, body, *, content_type: str = "application/json"):
    return client.post(PLANS, data=json.dumps(body), content_type=content_type)


def plan_ok(client, body) -> dict:
    resp = post_plan(client, body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:3000]
    assert resp.mimetype == "application/json"
    return resp.get_json()


def assert_problem(resp, status: int = 422, type_: str | None = None) -> dict:
    return problem_body(resp, status, PLANS, type_)


@pytest.fixture(scope="session")
def planned(client):
    """planned(key, build) -> (request body, status, JSON answer), each key posted once per session."""
    cache: dict = {}

    def get(key, build):
        if key not in cache:
            body = build()
            resp = post_plan(client, body)
            cache[key] = (body, resp.status_code, resp.get_json(force=True))
        return copy.deepcopy(cache[key])

    return get


def proven_conflicts(client, body) -> list[dict]:
    """The conflicts of a proven no-feasible-plan answer to `body`, checked for shape."""
    problem = assert_problem(post_plan(client, body), 422, INFEASIBLE)
    assert problem["proven"] is True and problem["conflicts"]
    for c in problem["conflicts"]:
        assert set(c) == {"requirement", "systems", "detail", "citation", "channels", "relax"}
        assert c["detail"] and c["relax"] and c["detail"] in problem["detail"]
    return problem["conflicts"]


@pytest.fixture(scope="session")
def spec(client):
    return client.get("/openapi.json").get_json()


def schema_validator(spec, name):
    """Validator for components/schemas/`name` of the OpenAPI document (refs resolved in it)."""
    return OAS30Validator({"$ref": f"#/components/schemas/{name}", "components": spec["components"]})
