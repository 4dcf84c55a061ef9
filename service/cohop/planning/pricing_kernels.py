"""Compiled inner loops of the column generation's pricing (`planning.bound._Pricing`).

The pricing problem of a window class is a small quadratic 0-1 problem
min b.y + 1/2 y'Qy over (offset, system) booleans, with Q >= 0 off the
diagonal, forbidden pairs (separation, guards) and forced booleans (pins).
These kernels are the greedy single-flip descent and the depth-first branch
and bound that `_Pricing` ran in Python; they do the same steps and count
the same work (a deterministic stand-in for time), so a budget of pricing
work buys the same columns, faster (medium bench site: the pricing took
2.3 of the column generation's 2.9 s in Python).
"""

from __future__ import annotations

import numpy as np

from cohop.planning.jit import njit

#: Tolerance below which a flip or a completion does not count as an improvement (as in `bound`).
EPS = 1e-15


@njit(cache=True)
def flip_descent(y, b, q, forbidden, forced):
    """Best single flips from `y` (in place) while one improves by more than EPS, keeping forbidden pairs apart
    and forced booleans set: each step adds the free boolean, not blocked by a chosen one, of least marginal
    b + Qy, or removes the unforced chosen one of largest marginal, whichever gains more (ties: adding; the
    first index). Returns the steps taken, the final (non-improving) one included."""
    n = y.size
    steps = 0
    g = np.empty(n)
    while True:
        steps += 1
        for k in range(n):
            s = b[k]
            for j in range(n):
                s += q[k, j] * y[j]
            g[k] = s
        best_add, ka = np.inf, 0
        best_rem, kr = np.inf, 0
        for k in range(n):
            if y[k] == 0.0:
                blocked = False
                for j in range(n):
                    if forbidden[k, j] and y[j] != 0.0:
                        blocked = True
                        break
                if not blocked and g[k] < best_add:
                    best_add, ka = g[k], k
            elif not forced[k] and -g[k] < best_rem:
                best_rem, kr = -g[k], k
        if min(best_add, best_rem) >= -EPS:
            return steps
        if best_add <= best_rem:
            y[ka] = 1.0
        else:
            y[kr] = 0.0


#: The branch and bound's resumable state: a header, then one frame of FRAME slots per depth.
HEADER, FRAME = 5, 4  # header: depth + 1, nodes, work, best found (0/1), best value; frame: i, phase, value, took


@njit(cache=True)
def branch_and_bound(cand, q, forbid, chosen, node_limit, chunk, state, m_stack, blocked_stack, best_y):
    """Depth-first branch and bound over the candidates `cand` (in order): at depth i, take cand[i] (when its
    marginal is < 0 and no chosen boolean forbids it), then leave it. A node is pruned when its value plus the
    negative marginals of the unblocked candidates left is not below the best value by EPS. Every node visited
    counts (also past `node_limit`, where it returns at once), as the recursive form counted them.

    Resumable: it returns after `chunk` more nodes (so that the caller can ask its wall clock), its stack kept
    in `state` (`new_search_state`: the root pushed), `m_stack` (marginals per depth), `blocked_stack` and
    `chosen`; state[0] is 0 once the search is complete. best_y holds the best booleans when state[3] is 1."""
    n_cand = cand.size
    n = chosen.size
    visited = 0
    while state[0] > 0:
        d = int(state[0]) - 1
        f = HEADER + FRAME * d
        i = int(state[f])
        val = state[f + 2]
        if state[f + 1] == 0.0:  # entering the node
            if visited >= chunk:
                return
            visited += 1
            state[1] += 1.0
            state[2] += 4.0 * (n_cand - i) + 2.0 * n
            if state[1] > node_limit:
                state[0] -= 1.0
                continue
            gains = 0.0
            for r in range(i, n_cand):
                k = cand[r]
                if m_stack[d, k] < 0.0 and blocked_stack[d, k] == 0:
                    gains += m_stack[d, k]
            if val + gains >= state[4] - EPS:
                state[0] -= 1.0
                continue
            if val < state[4]:
                state[4] = val
                state[3] = 1.0
                best_y[:] = chosen
            if i >= n_cand:
                state[0] -= 1.0
                continue
            state[f + 1] = 1.0
            k = cand[i]
            if m_stack[d, k] < 0.0 and blocked_stack[d, k] == 0:  # take cand[i]: push the child
                chosen[k] = 1.0
                state[f + 3] = 1.0
                for j in range(n):
                    m_stack[d + 1, j] = m_stack[d, j] + q[k, j]
                    blocked_stack[d + 1, j] = blocked_stack[d, j] + forbid[k, j]
                g = f + FRAME
                state[g] = i + 1
                state[g + 1] = 0.0
                state[g + 2] = val + m_stack[d, k]
                state[g + 3] = 0.0
                state[0] += 1.0
            else:
                state[f + 3] = 0.0
            continue
        # back from the take-branch (or it was not possible): leave cand[i]; the child replaces this frame
        if state[f + 3] == 1.0:
            chosen[cand[i]] = 0.0
        state[f] = i + 1
        state[f + 1] = 0.0
        state[f + 3] = 0.0


def new_search_state(n_cand: int, marginals: np.ndarray, blocked: np.ndarray, value: float, incumbent: float):
    """A branch and bound's state with its root pushed: (state, m_stack, blocked_stack)."""
    depth = n_cand + 2
    state = np.zeros(HEADER + FRAME * depth)
    m_stack = np.zeros((depth, marginals.size))
    blocked_stack = np.zeros((depth, marginals.size), np.int32)
    state[0], state[4] = 1.0, incumbent
    state[HEADER + 2] = value
    m_stack[0] = marginals
    blocked_stack[0] = blocked
    return state, m_stack, blocked_stack


def warm() -> None:
    """Compile (or load from the cache) both kernels on a two-boolean problem."""
    b = np.array([-1.0, -1.0])
    q = np.array([[0.0, 0.5], [0.5, 0.0]])
    flip_descent(np.zeros(2), b, q, np.zeros((2, 2), np.bool_), np.zeros(2, np.bool_))
    state, m_stack, blocked_stack = new_search_state(2, b, np.zeros(2, np.int32), 0.0, np.inf)
    branch_and_bound(np.array([0, 1], np.int64), q, np.zeros((2, 2), np.int32), np.zeros(2), 100, 1024, state,
                     m_stack, blocked_stack, np.zeros(2))
