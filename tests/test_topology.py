"""The topology table agrees with itself and with the schedules it builds.

Check values follow from the definition of the HS duty share (HS on-time over the switching
period) and of the analysis period (one switching period, or one line period for a leg that
switches at line frequency); Erickson & Maksimović, *Fundamentals of Power Electronics*, 3rd ed.,
Springer 2020, ch. 2 (volt-second balance of the buck and the boost).
"""

import numpy as np
import pytest

from explorer import demo_design
from explorer.design import TOPOLOGIES, replace_fields
from explorer.schedule import period_schedule
from explorer.sweep import duty_field
from explorer.topology import TOPOLOGY, analysis_period

#: Changes that put the demo (an invented scenario) on each topology.
VARIANTS = {
    "sync_buck": {},
    "sync_boost": {"bridge.topology": "sync_boost", "bridge.v_in": 36.0, "bridge.v_out": None},
    "half_bridge": {"bridge.topology": "half_bridge", "bridge.v_out": None},
    "full_bridge": {"bridge.topology": "full_bridge", "bridge.duty": 0.6, "bridge.v_out": None},
    "three_phase": {"bridge.topology": "three_phase", "bridge.m": 0.5, "bridge.f_o": 0.0, "bridge.v_out": None,
                    "bridge.dead_time": 0.0},
    "line_leg": {"bridge.topology": "line_leg", "bridge.f_line": 50.0, "bridge.v_out": None},
}


def test_every_topology_has_one_table_entry():
    assert tuple(TOPOLOGY) == TOPOLOGIES and set(VARIANTS) == set(TOPOLOGIES)


@pytest.mark.parametrize("name", sorted(VARIANTS))
def test_duty_setting_gives_that_hs_share(name):
    # the sweep's "duty" alias sets the topology's own field; the schedule built from the table's
    # slots must then have exactly that HS on-time share of the period (three_phase: the crest duty
    # at standstill, taken without dead time)
    d = replace_fields(demo_design(), VARIANTS[name])
    for h in (0.55, 0.8):
        field, value = duty_field(d, h)
        s = period_schedule(replace_fields(d, {field: value}))
        share = float(s.dt[s.hs_on].sum() / s.period)
        assert share == pytest.approx(h, rel=1e-12)


@pytest.mark.parametrize("name", sorted(VARIANTS))
def test_analysis_period_is_the_schedule_period(name):
    d = replace_fields(demo_design(), VARIANTS[name])
    b = d.bridge
    want = 1.0 / (b.f_line if name == "line_leg" else b.f_sw)
    assert b.period == analysis_period(b) == want
    assert np.isclose(period_schedule(d).period, want, rtol=1e-12, atol=0)
