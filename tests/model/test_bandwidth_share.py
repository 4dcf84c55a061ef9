"""One emitter, entered as a hopping system or as a fixed interferer, hurts a narrower victim the same way.

Closed form (the reference's "bandwidth share", common practice): a flat-spectrum source of width B_a puts
10 log10(B_v / B_a) dB of its power inside a victim receiver of width B_v < B_a; 2 MHz into 200 kHz: -10 dB."""

from __future__ import annotations

import math

import pytest

from cohop.physics.rejection import bandwidth_share_db
from cohop.prepare import prepare_site
from tests import sites

VICTIM_BW, SOURCE_BW = 200e3, 2e6
LEVEL_DBM = -66.0  # wanted -60 dBm, SIR 11 dB: +5 dB above the threshold before the share


def test_the_share_is_the_bandwidth_ratio_in_db():
    assert bandwidth_share_db(VICTIM_BW, SOURCE_BW) == pytest.approx(-10.0, abs=1e-12)
    assert bandwidth_share_db(SOURCE_BW, VICTIM_BW) == 0.0  # a narrower source puts all its power inside
    assert bandwidth_share_db(VICTIM_BW, 0.0) == 0.0


def _victim():
    return sites.system("victim", range(10, 30), bandwidth_hz=VICTIM_BW)


@pytest.mark.parametrize("level_dbm, harmful", [(LEVEL_DBM, False), (LEVEL_DBM + 12.0, True)])
def test_a_wide_emitter_as_system_or_interferer_gives_one_level(level_dbm, harmful):
    as_system = sites.site([_victim(), sites.system("wide", range(10, 30), bandwidth_hz=SOURCE_BW,
                                                    tx_power_dbm=level_dbm + 60.0)], coupling_loss_db=60.0)
    centre = 2402e6 + 20 * 1e6
    as_interferer = sites.site([_victim()], interferers=[
        {"id": "wide", "low_hz": centre - SOURCE_BW / 2, "high_hz": centre + SOURCE_BW / 2,
         "activity_fraction": 1.0, "levels": [{"system": "victim", "level_dbm": level_dbm}]}])
    system_link = prepare_site(sites.load(as_system)).links[0][1]
    interferer_link = prepare_site(sites.load(as_interferer)).interferer_links[0][0]
    expected = level_dbm + 10 * math.log10(VICTIM_BW / SOURCE_BW)
    assert system_link.level_dbm == pytest.approx(expected, abs=1e-9)
    assert interferer_link.level_dbm == pytest.approx(expected, abs=1e-9)
    assert system_link.excess_db == pytest.approx(interferer_link.excess_db, abs=1e-9)
    assert (system_link.excess_db > 0) == harmful
