"""Below 1 GHz gases are left out of the total, and every such link says so (ITU-R P.676-12 Annex 1: 1-1000 GHz)."""

import pytest

from profiler.budget import Radio
from profiler.link import Settings, Site, analyse_link
from profiler.link_engine import GASES_BELOW_RANGE_NOTE
from profiler.terrain import ElevationModel
from tests.conftest import DEMO_DEM

A = Site("a", -30.426077, -20.973967, 20)
B = Site("b", -30.403493, -20.916715, 15)


@pytest.mark.parametrize("freq_ghz, noted", [(0.9, True), (0.45, True), (1.0, False), (5.8, False)])
def test_gases_note_below_one_gigahertz(freq_ghz, noted):
    model = ElevationModel([DEMO_DEM])
    rec = analyse_link(model, A, B, Radio(freq_ghz, gain_a_dbi=10, gain_b_dbi=10), Settings()).record(0)
    model.close()
    assert (GASES_BELOW_RANGE_NOTE in rec.get("warnings", [])) is noted
    # the note appears once, not again for the worst-case k
    assert sum("gases not included" in w for w in rec.get("warnings", [])) == int(noted)
    if noted:
        assert rec["loss_db"]["gases"] == 0.0
    else:
        assert rec["loss_db"]["gases"] > 0.0
