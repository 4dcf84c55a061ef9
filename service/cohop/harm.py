"""The interference kernel: how much one overlapped transmission harms a hop, per victim, source and offset.

For victim v and a source (a hopping system a, or a fixed interferer k) at
channel offset d, the harm rho is the probability that one overlapped
transmission destroys v's hop (`cohop.physics.capture`): from the source's
excess over v's capture threshold (coupling, bandwidth share: `cohop.prepare`),
v's stepped rejection at the offset (`cohop.physics.rejection`) and the
fading of v's wanted signal and of the interference it hears. Harm below
`capture.HARM_FLOOR` is 0 (the documented truncation).

Because v's rejection is a step function of the offset, rho takes one value
per step of v's table: the tables here hold those values (`levels`) and, per
victim, which step each grid offset falls in (`steps`). Everything that
needs a harm reads it here: the evaluator (`cohop.assess`), the Monte Carlo
(`cohop.montecarlo`, for its windows only: it draws the physics itself), the
planner's instance (`cohop.planning.instance`), the sequence analysis and
the traffic figures. With `fading: none` the harm is 1 inside today's
harmful window and 0 outside.

Index conventions as `cohop.prepare`: [victim, source], offsets in grid channels.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from cohop.physics import capture
from cohop.physics.rejection import OFFSET_TOLERANCE
from cohop.site import System


@dataclass(frozen=True)
class HarmTables:
    """Harm of every source at every victim, by step of the victim's rejection table."""

    system_levels: np.ndarray  # (S, S, L) [v, a, t]: rho of a transmission of system a in step t of v's table
    interferer_levels: np.ndarray  # (S, K, L) [v, k, t]: the same for fixed interferer k
    steps: np.ndarray  # (S, C) int [v, d]: the step of v's table that grid offset d falls in
    reach: np.ndarray  # (S, S) int [v, a]: largest offset with harm (-1 none; C: every offset on the grid)
    system_excess: np.ndarray | None = None  # (S, S, L) [v, a, t]: the excess (dB) the levels come from (-inf none)
    interferer_excess: np.ndarray | None = None  # (S, K, L): the same for fixed interferers

    def transforms(self, victim: System, v: int, contour) -> tuple[np.ndarray, np.ndarray]:
        """(systems (P, S, L), interferers (P, K, L)): 1 - ell(u) of victim v's sources by step at each point u of
        a Rician victim's contour, the joint law's stand-in for rho (`capture.transmission_transform`); 0 where
        rho is 0 (the same truncation)."""
        link = victim.fading.interference
        u = contour.points[:, None, None]
        out = []
        for levels, excess in ((self.system_levels[v], self.system_excess[v]),
                               (self.interferer_levels[v], self.interferer_excess[v])):
            with np.errstate(over="ignore", invalid="ignore"):
                t = capture.transmission_transform(np.where(levels > 0, excess, -np.inf)[None], link, contour.gain, u)
            out.append(np.where(levels[None] > 0, t, 0.0))
        return out[0], out[1]

    def system_harm(self, v: int, offsets) -> np.ndarray:
        """rho[a, j] of every source system at offsets[j] (grid channels, >= 0) from victim v's channel."""
        return self.system_levels[v][:, self.steps[v, np.asarray(offsets, dtype=int)]]

    def offset_harm(self, max_offset: int) -> np.ndarray:
        """H[v, a, d] for d = 0 .. max_offset (clipped to the grid): the whole site's harm by offset."""
        d = np.arange(min(max_offset, self.steps.shape[1] - 1) + 1)
        idx = self.steps[:, d]  # (S, D)
        return np.take_along_axis(self.system_levels, np.broadcast_to(idx[:, None, :], (
            self.system_levels.shape[0], self.system_levels.shape[1], d.size)), axis=2)

    def tail(self) -> np.ndarray:
        """T[v, a]: the harm at the grid's largest offset, the least at any offset (harm never rises with the
        offset): paid on every pair of channel uses whatever the channels."""
        last = self.steps[:, -1]
        return np.take_along_axis(self.system_levels, last[:, None, None].repeat(self.system_levels.shape[1], 1),
                                  axis=2)[:, :, 0]


    def varying(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(reach, constant, harm): the constant harm T[v, a] (`tail`), the largest offset where the harm is
        above it (reach, -1 where it never is) and the harm at offsets 0 .. W (S, S, W + 1), W the largest reach:
        harm(d) = harm[v, a, d] for d <= reach[v, a], T[v, a] beyond."""
        reach, constant = self.varying_reach()
        return reach, constant, self.offset_harm(max(int(reach.max(initial=-1)), 0))

    def varying_reach(self) -> tuple[np.ndarray, np.ndarray]:
        """(reach, constant) of `varying`, without the (S, S, W + 1) table; computed once per tables (read-only
        arrays: every evaluation of the site asks for them)."""
        return self._reach_and_constant

    @cached_property
    def _reach_and_constant(self) -> tuple[np.ndarray, np.ndarray]:
        constant = self.tail()
        n = self.system_levels.shape[0]
        last = self.steps[:, -1]
        step_no = np.arange(self.system_levels.shape[2])[None, None, :]
        is_const = (self.system_levels <= constant[:, :, None]) | (step_no > last[:, None, None])
        first_const = np.argmax(is_const, axis=2)  # the first step at the constant harm (found by step `last`)
        reach = np.stack([np.searchsorted(self.steps[v], first_const[v], side="left") for v in range(n)]) - 1
        reach.flags.writeable = False
        constant.flags.writeable = False
        return reach, constant


def rejection_steps(victim: System) -> tuple[np.ndarray, np.ndarray]:
    """(offsets [Hz], rejection [dB] per step): step 0 is co-channel (0 dB, below the first tabulated offset),
    step t >= 1 the t-th table row onwards (`cohop.physics.rejection.rejection_db`)."""
    offsets = np.array([p.offset_hz for p in victim.rejection], dtype=float)
    levels = np.concatenate([[0.0], [p.rejection_db for p in victim.rejection]])
    return offsets, levels


def step_of(victim: System, offsets_hz) -> np.ndarray:
    """The step of `victim`'s rejection table that each offset (Hz, >= 0) falls in."""
    table, _ = rejection_steps(victim)
    return np.searchsorted(table, np.abs(np.asarray(offsets_hz, dtype=float)) * (1 + OFFSET_TOLERANCE),
                           side="right")


def harm_of_excess(victim: System, margin_db: float, excess_db) -> np.ndarray:
    """rho (truncated) for transmissions of the given excess at victim `victim` (its fading, capture.py)."""
    f = victim.fading
    rho = capture.harm_probability(excess_db, wanted=f.model, link=f.interference, margin_db=margin_db,
                                   k_factor_db=f.k_factor_db)
    return capture.truncated(rho)


def step_excess(victim: System, excess_db: np.ndarray, width: int) -> np.ndarray:
    """(n, width) excess (dB) of sources of the given co-channel excess (n,) in each step of the victim's table,
    padded to `width` steps with the last."""
    _, rejection = rejection_steps(victim)
    out = np.asarray(excess_db, dtype=float)[:, None] - rejection[None, :]
    if out.shape[1] < width:
        out = np.concatenate([out, np.repeat(out[:, -1:], width - out.shape[1], axis=1)], axis=1)
    return out


def step_harm(victim: System, margin_db: float, excess_db: np.ndarray, width: int) -> np.ndarray:
    """(n, width) rho of sources of the given excess (n,) in each step of the victim's table, padded to
    `width` steps with the last."""
    return harm_of_excess(victim, margin_db, step_excess(victim, excess_db, width))


def reach_of(levels: np.ndarray, steps: np.ndarray) -> np.ndarray:
    """Largest grid offset with harm for each row of `levels` (n, L), given the step of each offset (C,): -1
    none, C when the largest offset on the grid has harm (harm never rises with the offset)."""
    c = steps.size
    harmed = levels[:, steps] > 0  # (n, C), a prefix of True
    count = harmed.sum(axis=1)
    return np.where(count >= c, c, count - 1)


def interferer_harm(tables: HarmTables, victim: System, v: int, spans: np.ndarray, centres_hz: np.ndarray,
                    channels, levels: np.ndarray | None = None) -> np.ndarray:
    """rho[k, j] of every fixed interferer (spans (K, 2) [low, high] Hz) on victim v's channels[j]; `levels`
    (K, L), complex allowed, replaces the tables' values by step (the joint law's transforms)."""
    ch = np.asarray(channels, dtype=int)
    if spans.shape[0] == 0:
        return np.zeros((0, ch.size))
    f = centres_hz[ch]
    offsets = np.maximum(0.0, np.maximum(spans[:, :1] - f[None, :], f[None, :] - spans[:, 1:]))
    idx = step_of(victim, offsets)  # (K, n)
    return np.take_along_axis(tables.interferer_levels[v] if levels is None else levels, idx, axis=1)


_CAPTURE_TEXT = {
    ("rayleigh", "steady"): "a Rayleigh-faded wanted signal and steady interference: one overlapped transmission "
                            "at excess E dB destroys a hop with 1 - exp(-10^(E/10)) (Kahlon et al. 2012)",
    ("rayleigh", "rayleigh"): "a Rayleigh-faded wanted signal and Rayleigh-faded interference: one overlapped "
                              "transmission at excess E dB destroys a hop with x / (1 + x), x = 10^(E/10) "
                              "(Linnartz 1993)",
    ("rician", "steady"): "a Rician-faded wanted signal and steady interference: the overlapped transmissions' "
                          "powers add before they meet the wanted signal, and a hop's survival is computed with "
                          "all of them together (Zorzi 1997; cohop.joint), so a channel's collision is at least "
                          "the product of its sources' standalone figures",
    ("rician", "rayleigh"): "a Rician-faded wanted signal and Rayleigh-faded interference: the overlapped "
                            "transmissions' powers add before they meet the wanted signal, and a hop's survival is "
                            "computed with all of them together (Zorzi 1997; cohop.joint), so a channel's collision "
                            "is at least the product of its sources' standalone figures",
}


def capture_assumptions(systems) -> tuple[str, ...]:
    """The answer's lines on how each system's capture is modelled (grouped by fading of the wanted signal and
    of the interference)."""
    groups: dict[tuple[str, str], list[str]] = {}
    for s in systems:
        key = (s.fading.model, "-" if s.fading.model == "none" else s.fading.interference)
        groups.setdefault(key, []).append(s.id)
    out = []
    product = [s.id for s in systems if s.fading.model == "rician" and not _joint_applies(s)]
    for key, ids in groups.items():
        names = ", ".join(repr(i) for i in ids)
        if key[0] == "none":
            out.append(f"Capture at {names} (fading none): a hop is lost when one interferer's median level at its "
                       "offset exceeds the capture threshold (each judged alone), never below it.")
        else:
            out.append(f"Capture at {names}: {_CAPTURE_TEXT[key]}; the noise enters as the fade probability; "
                       f"a harm below {capture.HARM_FLOOR:g} per transmission is taken as 0.")
    if product:
        out.append(f"Capture at {', '.join(repr(i) for i in product)}: the K-factor is above about 20 dB, so "
                   "several transmissions are combined as a product over them (their link.capture.combination "
                   "says so), which understates the loss of a Rician-faded signal.")
    return tuple(out)


def _joint_applies(system) -> bool:
    """Whether the joint law's series is short enough for this Rician system (`capture.JOINT_MAX_TERMS`; the
    noise-only limit is per margin and shows in link.capture.combination)."""
    return capture.joint_terms(system.fading.k_factor_db) <= capture.JOINT_MAX_TERMS
