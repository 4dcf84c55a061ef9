"""Messages along the hop order as products of 2 x 2 fade-state matrices (exact for the stated model).

State: whether the victim's last hop faded (a Gilbert-Elliott chain whose transitions follow the
correlation of consecutive hops' fades, `cohop.stats.runs.fade_transitions`). Row vectors, matrices
[from, to]. For hop i of a message, A_i is the fade transition into it; the hop is lost when it fades or
an interference hit lands (probability q_i, independent of the fade and of other hops given the phases).
Then [der, the forward algorithm of a hidden Markov chain]:

    ok matrix  O_i = A_i diag(1 - q_i, 0),   attempt k (hops_per_attempt hops):  P_k = prod A_i,
    S_k = prod O_i (every hop good),  F_k = P_k - S_k (the attempt lost);
    delivered:  Dl = sum_k F_1 ... F_(k-1) S_k P_(k+1) ... P_R G,   lost:  Ls = F_1 ... F_R G,

R = retry_limit + 1 attempts, G the fade transition over the idle hops up to the next message. A message
delivered at attempt k has probability pi F_1 ... F_(k-1) S_k 1, pi = (1 - f, f) the stationary fade
state (the fade chain is stationary whatever is sent). A run of j lost messages ending at message e,
counted once (it starts after a delivered message):

    pi Dl_(e-j) Ls_(e-j+1) ... Ls_e 1.

No simulation enters: probabilities far below anything a simulation could count are computed as they are.
"""

from __future__ import annotations

import numpy as np


def _eye(shape) -> np.ndarray:
    return np.broadcast_to(np.eye(2), tuple(shape) + (2, 2)).copy()


def mm(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Stacked 2 x 2 products, written out (several times faster than matmul on stacks of 2 x 2)."""
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    out[..., 0, 0] = a[..., 0, 0] * b[..., 0, 0] + a[..., 0, 1] * b[..., 1, 0]
    out[..., 0, 1] = a[..., 0, 0] * b[..., 0, 1] + a[..., 0, 1] * b[..., 1, 1]
    out[..., 1, 0] = a[..., 1, 0] * b[..., 0, 0] + a[..., 1, 1] * b[..., 1, 0]
    out[..., 1, 1] = a[..., 1, 0] * b[..., 0, 1] + a[..., 1, 1] * b[..., 1, 1]
    return out


def vm(pi: np.ndarray, a: np.ndarray) -> np.ndarray:
    """Row vector pi (2,) times stacked matrices: (..., 2)."""
    return pi[0] * a[..., 0, :] + pi[1] * a[..., 1, :]


def mv(a: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Stacked matrices times stacked column vectors (..., 2)."""
    return np.stack([a[..., 0, 0] * x[..., 0] + a[..., 0, 1] * x[..., 1],
                     a[..., 1, 0] * x[..., 0] + a[..., 1, 1] * x[..., 1]], axis=-1)


def message_matrices(q: np.ndarray, a: np.ndarray, gap: np.ndarray, hops_per_attempt: int):
    """From per-hop interference loss q (..., M, H) (H = attempts x hops_per_attempt), fade transitions
    into each hop a (..., M, H, 2, 2) and over the idle hops after each message gap (..., M, 2, 2), the
    leading axes broadcast: (Fp, S, Dl, Ls) with Fp (..., M, R + 1, 2, 2) the prefix products of lost
    attempts (Fp[..., 0, :, :] = I), S (..., M, R, 2, 2) the attempts' all-good products, Dl and Ls
    (..., M, 2, 2) the delivered and lost message matrices."""
    h = q.shape[-1]
    attempts = h // hops_per_attempt
    ok = np.zeros(np.broadcast_shapes(q.shape + (2, 2), a.shape))  # O_i = A_i diag(1 - q_i, 0)
    ok[..., :, 0] = a[..., :, 0] * (1.0 - q)[..., None]
    eye = np.eye(2)
    p_att, s_att = [], []
    for k in range(attempts):
        p, s = eye, eye
        for i in range(k * hops_per_attempt, (k + 1) * hops_per_attempt):
            p = mm(p, a[..., i, :, :])
            s = mm(s, ok[..., i, :, :])
        p_att.append(p)
        s_att.append(s)
    fp = [np.broadcast_to(eye, s_att[0].shape)]
    for k in range(attempts):
        fp.append(mm(fp[-1], p_att[k] - s_att[k]))
    suffix = [gap]
    for k in range(attempts - 1, 0, -1):
        suffix.append(mm(p_att[k], suffix[-1]))
    suffix = suffix[::-1]  # suffix[k] = P_(k+2) ... P_R G (0-based attempt k delivered)
    dl = sum(mm(mm(fp[k], s_att[k]), suffix[k]) for k in range(attempts))
    ls = mm(fp[attempts], gap)
    shape = np.broadcast_shapes(dl.shape, ls.shape)
    return (np.stack([np.broadcast_to(f, shape) for f in fp], axis=-3), np.stack(s_att, axis=-3),
            np.broadcast_to(dl, shape), np.broadcast_to(ls, shape))


def stationary(fade_probability: float) -> np.ndarray:
    return np.array([1.0 - fade_probability, fade_probability])


def attempt_figures(fp: np.ndarray, s: np.ndarray, pi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per sample (..., M, R + 1 or R, 2, 2 in): P(delivered at attempt k) (..., R), and P(the first n
    attempts all lost) (..., R), averaged over the messages."""
    delivered = vm(pi, mm(fp[..., :-1, :, :], s)).sum(axis=-1).mean(axis=-2)
    lost_runs = vm(pi, fp[..., 1:, :, :]).sum(axis=-1).mean(axis=-2)
    return delivered, lost_runs


def run_rates(dl: np.ndarray, ls: np.ndarray, pi: np.ndarray, longest: int) -> np.ndarray:
    """(..., longest) from (..., M, 2, 2): per message, the probability that a run of lost messages
    reaches length n there (n = 1..longest, each run counted once), averaged over the messages
    longest..M-1 (those with `longest` messages before them)."""
    m = dl.shape[-3]
    ends = np.arange(longest, m)
    if ends.size == 0:
        raise ValueError("need more messages than the longest run")
    right = np.ones(dl.shape[:-3] + (ends.size, 2))
    out = np.empty(dl.shape[:-3] + (longest,))
    for n in range(1, longest + 1):
        right = mv(ls[..., ends - n + 1, :, :], right)
        out[..., n - 1] = (vm(pi, dl[..., ends - n, :, :]) * right).sum(axis=-1).mean(axis=-1)
    return out
