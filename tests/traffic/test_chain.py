"""cohop.traffic.chain: the independent limit (Feller), the Gilbert-Elliott form, and brute force over every
fade path of small cases."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from cohop.stats import runs
from cohop.traffic import chain


def _no_fading(shape):
    a = np.zeros(shape + (2, 2))
    a[..., :, 0] = 1.0
    return a


def _constant(q: float, messages: int, attempts: int, per: int):
    hops = attempts * per
    return (np.full((1, messages, hops), q), _no_fading((1, messages, hops)), _no_fading((1, messages)))


@pytest.mark.parametrize("q,attempts,per", [(0.2, 3, 1), (0.1, 2, 2), (0.4, 1, 1)])
def test_independent_limit_attempts(q, attempts, per):
    # independent hops: an attempt of n hops is lost with 1 - (1 - q)^n and delivery at attempt k has
    # probability (1 - a) a^(k - 1) (geometric; domain reference section 5, retries)
    fp, s, dl, ls = chain.message_matrices(*_constant(q, 6, attempts, per), per)
    delivered, lost_runs = chain.attempt_figures(fp, s, chain.stationary(0.0))
    a = 1 - (1 - q) ** per
    assert delivered[0] == pytest.approx([(1 - a) * a**k for k in range(attempts)])
    assert lost_runs[0] == pytest.approx([a ** (k + 1) for k in range(attempts)])


@pytest.mark.parametrize("q,attempts,m", [(0.3, 2, 3), (0.5, 1, 2), (0.6, 1, 4)])
def test_independent_limit_runs_reproduce_feller(q, attempts, m):
    # a message is lost with P = q^R; runs reaching n, once per run: (1 - P) P^n per message [der]. Counted
    # afresh after every m losses (Feller's recurrent event), the rate is sum_j (1 - P) P^(j m) =
    # 1 / mean trials to a run of m, Feller vol. 1 XIII.7: (1 - P^m) / ((1 - P) P^m).
    longest = 6 * m
    fp, s, dl, ls = chain.message_matrices(*_constant(q, longest + 5, attempts, 1), 1)
    rates = chain.run_rates(dl, ls, chain.stationary(0.0), longest)[0]
    big_p = q**attempts
    assert rates == pytest.approx([(1 - big_p) * big_p**n for n in range(1, longest + 1)], rel=1e-12)
    renewal = sum(rates[j * m - 1] for j in range(1, 7))
    # terms j > 6 are left out of the sum
    assert renewal == pytest.approx(1 / runs.mean_trials_to_run(big_p, m), rel=2 * big_p ** (6 * m) + 1e-12)


@pytest.mark.parametrize("pi,rho,attempts", [(0.1, 0.5, 3), (0.3, 0.8, 2), (0.05, 0.0, 4)])
def test_gilbert_elliott_retries(pi, rho, attempts):
    # losses from a Gilbert-Elliott chain alone, one hop per attempt on consecutive hops: every attempt lost
    # with pi (pi + rho (1 - pi))^k after k retries (domain reference section 5 [der]; Gilbert 1960)
    t = runs.gilbert_elliott(pi, rho)
    a = np.broadcast_to(t, (1, 3, attempts, 2, 2))
    gap = np.broadcast_to(np.eye(2), (1, 3, 2, 2))
    fp, s, dl, ls = chain.message_matrices(np.zeros((1, 3, attempts)), a, gap, 1)
    delivered, lost_runs = chain.attempt_figures(fp, s, chain.stationary(pi))
    assert 1 - delivered[0].sum() == pytest.approx(pi * (pi + rho * (1 - pi)) ** (attempts - 1))


def test_gilbert_elliott_burst_lengths():
    # one attempt per message, a message every hop: runs of losses are the chain's bad bursts, which reach n
    # with (1 - pi) P(good -> bad) P(bad -> bad)^(n - 1) per message (geometric burst lengths, Gilbert 1960)
    pi, rho, longest = 0.2, 0.7, 5
    t = runs.gilbert_elliott(pi, rho)
    a = np.broadcast_to(t, (1, longest + 4, 1, 2, 2))
    gap = np.broadcast_to(np.eye(2), (1, longest + 4, 2, 2))
    fp, s, dl, ls = chain.message_matrices(np.zeros((1, longest + 4, 1)), a, gap, 1)
    rates = chain.run_rates(dl, ls, chain.stationary(pi), longest)[0]
    assert rates == pytest.approx([(1 - pi) * t[0, 1] * t[1, 1] ** (n - 1) for n in range(1, longest + 1)])


def _brute_force(q, a_hops, idle_a, messages, attempts, per, pi, longest):
    """Every fade path over all hops (message hops and idle hops), the probability of each message's outcome
    given the path (interference independent per hop), then delivery per attempt and runs by definition."""
    hops = attempts * per
    layout = []  # (message, hop in message) or None for an idle hop, in time order
    for n in range(messages):
        layout += [(n, i) for i in range(hops)] + [None] * len(idle_a[n])
    mats = []
    for n in range(messages):
        mats += [a_hops[n, i] for i in range(hops)] + list(idle_a[n])
    delivered = np.zeros(attempts)
    run_hit = np.zeros((longest, messages))
    for path in itertools.product((0, 1), repeat=len(layout)):
        prob, prev = 1.0, None
        for t, f in enumerate(path):
            prob *= (pi @ mats[t])[f] if prev is None else mats[t][prev, f]
            prev = f
        if prob == 0.0:
            continue
        # per message: probability delivered at attempt k given the path
        outcome = np.zeros((messages, attempts + 1))  # last column: lost
        for n in range(messages):
            reach = 1.0
            for k in range(attempts):
                ok = 1.0
                for i in range(k * per, (k + 1) * per):
                    t = layout.index((n, i))
                    ok *= 0.0 if path[t] else 1.0 - q[n, i]
                outcome[n, k] = reach * ok
                reach *= 1.0 - ok
            outcome[n, attempts] = reach
        delivered += prob * outcome[:, :attempts].mean(axis=0)
        for length in range(1, longest + 1):
            for e in range(length, messages):
                run_hit[length - 1, e] += prob * (1 - outcome[e - length, attempts]) * np.prod(
                    outcome[e - length + 1:e + 1, attempts])
    return delivered, run_hit[:, longest:].mean(axis=1)


def test_brute_force_small_periodic_case():
    # correlated fading with a different correlation on every hop (each keeps the stationary fade share), an
    # idle hop between messages, and random interference per hop: the chain's figures equal those summed
    # over all 2^12 fade paths
    rng = np.random.default_rng(3)
    messages, attempts, per, longest, f = 4, 2, 1, 2, 0.3
    hops = attempts * per
    q = rng.uniform(0.05, 0.5, (messages, hops))
    a_hops = runs.fade_transitions(f, rng.uniform(0, 0.95, (messages, hops)))
    idle = [runs.fade_transitions(f, rng.uniform(0, 0.95, 1)) for _ in range(messages)]
    gap = np.stack([m[0] for m in idle])
    pi = chain.stationary(f)
    fp, s, dl, ls = chain.message_matrices(q[None], a_hops[None], gap[None], per)
    delivered, _ = chain.attempt_figures(fp, s, pi)
    rates = chain.run_rates(dl, ls, pi, longest)[0]
    want_delivered, want_rates = _brute_force(q, a_hops, idle, messages, attempts, per, pi, longest)
    assert delivered[0] == pytest.approx(want_delivered, rel=1e-10)
    assert rates == pytest.approx(want_rates, rel=1e-10)
