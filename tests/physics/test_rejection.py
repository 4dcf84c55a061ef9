"""Stepped adjacent-channel rejection and the harmful window (common practice)."""

import math

import pytest

from cohop.physics.rejection import harmful_bound_hz, rejection_db, window_channels

# Structure of a receiver C/I table, e.g. the Bluetooth basic-rate receiver (from memory):
# co-channel 11 dB, first adjacent 0 dB, second -30 dB, third -40 dB at 1 MHz spacing. With a
# required SIR of 11 dB, the rejection relative to co-channel is 11, 41 and 51 dB.
OFFSETS = [1e6, 2e6, 3e6]
REJECTIONS = [11.0, 41.0, 51.0]


@pytest.mark.parametrize("offset, expected", [(0.0, 0.0), (0.5e6, 0.0), (1e6, 11.0), (1.5e6, 11.0),
                                              (2e6, 41.0), (2.999e6, 41.0), (3e6, 51.0), (40e6, 51.0)])
def test_stepped_lookup(offset, expected):
    assert rejection_db(OFFSETS, REJECTIONS, offset) == expected


def test_float_noise_at_a_table_offset_counts_as_the_offset():
    # Centre differences can carry float noise far below a hertz; such an offset is the tabulated one.
    assert rejection_db(OFFSETS, REJECTIONS, 2e6 * (1 - 1e-12)) == 41.0
    assert rejection_db(OFFSETS, REJECTIONS, 2e6 * (1 - 1e-6)) == 11.0  # 2 Hz short is not


@pytest.mark.parametrize("excess, bound", [(-3.0, 0.0), (0.0, 0.0), (5.0, 1e6), (11.0, 1e6), (11.5, 2e6),
                                           (45.0, 3e6), (60.0, math.inf)])
def test_harmful_bound(excess, bound):
    # Harmful iff R(df) < E (common practice: a neighbour harms when its excess over the capture threshold exceeds the rejection at its offset): E <= 0 harms nothing; above the
    # table's last value every offset is harmful.
    assert harmful_bound_hz(excess, OFFSETS, REJECTIONS) == bound


@pytest.mark.parametrize("bound, spacing, expected", [(0.0, 1e6, -1), (1e6, 1e6, 0), (2e6, 1e6, 1),
                                                      (2.5e6, 1e6, 2), (0.5e6, 1e6, 0), (1e6, 0.1e6, 9),
                                                      (math.inf, 1e6, 79)])
def test_window_channels(bound, spacing, expected):
    assert window_channels(bound, spacing, 79) == expected


def test_window_agrees_with_pointwise_lookup():
    # Consistency: channel offset d is inside the window exactly when R(d * spacing) < E.
    for spacing in (0.25e6, 0.5e6, 1e6, 0.3e6):
        for excess in (0.5, 11.0, 12.0, 41.0, 50.0):
            w = window_channels(harmful_bound_hz(excess, OFFSETS, REJECTIONS), spacing, 400)
            for d in range(0, 30):
                assert (d <= w) == (rejection_db(OFFSETS, REJECTIONS, d * spacing) < excess), (spacing, excess, d)
