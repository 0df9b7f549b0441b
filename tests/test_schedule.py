"""Switching schedules against textbook relations.

Sources named beside each check:
[EM] Erickson & Maksimović, Fundamentals of Power Electronics, 3rd ed., Springer 2020, ch. 2
     (volt-second balance: buck D = V/Vg, boost M = 1/(1 − D)).
[MUR] Mohan, Undeland & Robbins, Power Electronics, 3rd ed., Wiley 2003, ch. 8 (sinusoidal PWM:
     leg duty ½(1 + m·sin θ)).
[HL] Holmes & Lipo, Pulse Width Modulation for Power Converters, 2003 (third-harmonic injection
     of 1/6 extends the linear range to m = 2/√3).
"""

import copy

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer import DEMO, load_design
from explorer.schedule import nominal_duty, period_schedule, startup_schedule


def design(**bridge):
    d = copy.deepcopy(DEMO)
    base = {"v_bus": 48, "f_sw": 100e3, "dead_time": 50e-9, "t_edge": 10e-9}
    d["bridge"] = base | bridge
    d["driver"]["t_on_min"] = 0
    return load_design(d)


def test_buck_duty_em():
    d = design(topology="sync_buck", v_out=12, v_undershoot=0.7)
    s = period_schedule(d)
    T = 1 / 100e3
    # [EM] D = V_out / V_in for the ideal buck in CCM
    assert s.dt[s.hs_on].sum() / T == pytest.approx(12 / 48, rel=1e-12)
    # LS conducts (1 − D)·T − 2·t_dead; SW sits at the LS body diode in both dead times
    ls = s.dt[(~s.hs_on) & (s.v_sw == 0.0)]
    assert ls.sum() == pytest.approx((1 - 0.25) * T - 2 * 50e-9, rel=1e-12)
    assert s.period == pytest.approx(T, rel=1e-15)
    assert s.hs_turn_on.sum() == 1 and s.sw_rise.sum() == 1 and s.sw_fall.sum() == 1


def test_buck_loss_corrected_duty():
    d = design(topology="sync_buck", v_out=12, eta=0.9)
    # [EM] ch. 3: with efficiency η, V_out·I_out = η·V_in·I_in gives D = V_out/(η·V_in) for a buck
    assert nominal_duty(d.bridge) == pytest.approx(12 / (0.9 * 48), rel=1e-15)


def test_boost_duty_em():
    d = design(topology="sync_boost", v_in=12)
    s = period_schedule(d)
    T = 1 / 100e3
    D = 1 - 12 / 48  # [EM] M = 1/(1 − D)  ⇒  D = 1 − V_in/V_out
    ls = s.dt[s.v_sw < 24].sum()
    assert ls / T == pytest.approx(D, rel=1e-12)
    assert s.dt[s.hs_on].sum() == pytest.approx((1 - D) * T - 2 * 50e-9, rel=1e-12)
    # the rectifier's dead times keep SW at the bus: SW rises before the HS turns on
    i_rise = np.flatnonzero(s.sw_rise)[0]
    assert not s.hs_on[i_rise]


def test_half_bridge_duty():
    d = design(topology="half_bridge")
    s = period_schedule(d)
    T = 1 / 100e3
    # DOMAIN table: HS duty 0.5 − t_dead/T
    assert s.dt[s.hs_on].sum() / T == pytest.approx(0.5 - 50e-9 / T, rel=1e-12)


@pytest.mark.parametrize("m", [0.3, 0.8, 1.0])
def test_sine_pwm_mur(m):
    f_sw, f_o = 20e3, 50.0
    d = design(topology="three_phase", m=m, f_o=f_o, f_sw=f_sw, dead_time=0.0)
    s = period_schedule(d)
    N = 400
    T = 1 / f_sw
    assert s.n_cycles == N
    k = np.arange(N)
    # [MUR] leg duty ½(1 + m·sin θ), regular-sampled
    assert np.allclose(s.duty, 0.5 * (1 + m * np.sin(2 * np.pi * k / N)), rtol=0, atol=1e-12)
    # [MUR] shortest LS interval (1 − m)/(2 f_sw), longest HS interval (1 + m)/(2 f_sw)
    ls = s.dt[~s.hs_on]
    if m < 1:
        assert ls.min() == pytest.approx((1 - m) / (2 * f_sw), rel=1e-9)
    assert s.dt[s.hs_on].max() == pytest.approx((1 + m) / (2 * f_sw), rel=1e-9)
    # total high time equals the integral of the duty over the fundamental: ∫½(1 + m sin) = T_o/2
    assert s.dt[s.hs_on].sum() == pytest.approx(0.5 / f_o, rel=1e-12)
    # intervals sum to the fundamental period exactly
    assert s.period == pytest.approx(N * T, rel=1e-13)


def test_third_harmonic_extends_linear_range_hl():
    # [HL] with 1/6 third harmonic, m = 2/√3 just reaches d = 1 at θ = 60°
    m = 2 / np.sqrt(3)
    d = design(topology="three_phase", m=m, f_o=50.0, third_harmonic=True, dead_time=0.0, f_sw=60e3)
    s = period_schedule(d)
    assert s.duty.max() == pytest.approx(1.0, abs=1e-12)
    assert s.duty.min() == pytest.approx(0.0, abs=1e-12)


def test_overmodulation_clips_and_holds_hs_on():
    d = design(topology="three_phase", m=1.2, f_o=50.0, f_sw=20e3, dead_time=0.0)
    s = period_schedule(d)
    assert s.duty.max() == 1.0 and s.duty.min() == 0.0
    # during the clipped stretch the HS stays on: a period starts with a turn-on only if it has HS
    # on-time and the period before did not end with the HS on
    prev_full = np.roll(s.duty, 1) >= 1.0
    assert s.hs_turn_on.sum() == np.count_nonzero((s.duty > 0) & ~prev_full)
    assert s.hs_turn_on.sum() < s.n_cycles - 10
    # the longest unbroken HS conduction (no turn-off between intervals) spans the clipped stretch:
    # d ≥ 1 where 1.2·sin θ ≥ 1, i.e. θ within asin(1/1.2) of 90°
    run = longest = 0.0
    for dt, on, start in zip(s.dt, s.hs_on, s.hs_turn_on):
        run = (run + dt if not start else dt) if on else 0.0
        longest = max(longest, run)
    clipped = (np.pi - 2 * np.arcsin(1 / 1.2)) / (2 * np.pi) / 50.0
    assert longest == pytest.approx(clipped, abs=2 / 20e3)


def test_standstill_holds_worst_angle():
    d = design(topology="three_phase", m=0.9, f_o=0.0, dead_time=100e-9)
    s = period_schedule(d)
    assert s.n_cycles == 1
    assert s.duty[0] == pytest.approx(0.5 * (1 + 0.9) - 100e-9 * 100e3, rel=1e-12)


def test_full_bridge_100_percent():
    d = design(topology="full_bridge", duty=1.0)
    s = period_schedule(d)
    assert len(s) == 1 and s.hs_on.all() and not s.hs_turn_on.any()


def test_light_load_rest_level():
    d = design(topology="sync_buck", v_out=5, mode="light_load", ls_pulse=500e-9, skip_cycles=3,
               v_undershoot=0.7)
    s = period_schedule(d)
    assert s.period == pytest.approx(4 / 100e3, rel=1e-12)
    assert s.v_sw[-1] == 5.0  # rests at V_out while both switches are off
    assert s.dt[s.v_sw == 0.0].sum() == pytest.approx(500e-9)


def test_light_load_pulse_too_long():
    # refused when the design is loaded: at D = 40/48 the low-side slot is (1 − D)·T − 2·t_dead ≈ 1.57 µs
    from explorer import DesignError
    with pytest.raises(DesignError, match="bridge.ls_pulse: must be shorter than the low-side slot"):
        design(topology="sync_buck", v_out=40, mode="light_load", ls_pulse=5e-6)
    ok = design(topology="sync_buck", v_out=40, mode="light_load", ls_pulse=1.5e-6, v_undershoot=0.7)
    assert period_schedule(ok).dt[period_schedule(ok).v_sw == 0.0].sum() == pytest.approx(1.5e-6)


def test_line_leg_one_edge_per_line_period():
    d = design(topology="line_leg", f_line=50.0)
    s = period_schedule(d)
    assert s.period == pytest.approx(1 / 50, rel=1e-15)
    assert s.sw_rise.sum() == 1 and len(s) == 4


def test_startup_precharge_and_ramp():
    d = design(topology="sync_buck", v_out=12, soft_start=1e-3, precharge=2e-6, startup_cycles=300)
    s = startup_schedule(d)
    assert not s.periodic
    assert s.dt[0] == 2e-6 and not s.hs_on[0] and s.cycle[0] == -1
    # the duty rises linearly to D over the soft-start time (100 periods at 100 kHz)
    assert s.duty[50] == pytest.approx(0.25 * 50 / 100, rel=1e-12)
    assert s.duty[150] == pytest.approx(0.25, rel=1e-12)
    assert s.period == pytest.approx(2e-6 + 300 / 100e3, rel=1e-12)


def test_min_pulse_drops_short_hs_pulses():
    d = design(topology="sync_buck", v_out=12, soft_start=1e-3, startup_cycles=50)
    dd = load_design(d.to_dict() | {"driver": d.to_dict()["driver"] | {"t_on_min": 200e-9}})
    s = startup_schedule(dd)
    # 0.25·k/100·10 µs < 200 ns for k < 8: those pulses are dropped
    assert np.all(s.duty[:8] == 0) and s.duty[8] > 0


@settings(max_examples=200, deadline=None)
@given(topology=st.sampled_from(["sync_buck", "sync_boost", "half_bridge", "full_bridge", "three_phase",
                                 "line_leg"]),
       x=st.floats(0.05, 0.95), f_sw=st.floats(1e3, 5e6), dead=st.floats(0, 0.2))
def test_intervals_sum_to_period(topology, x, f_sw, dead):
    kw = {"topology": topology, "f_sw": f_sw, "dead_time": dead / f_sw}
    kw |= {"sync_buck": {"v_out": 48 * x}, "sync_boost": {"v_in": 48 * x}, "half_bridge": {"duty": x},
           "full_bridge": {"duty": x}, "three_phase": {"m": x, "f_o": f_sw / 60},
           "line_leg": {"f_line": 50.0 if f_sw > 100 else f_sw / 3}}[topology]
    d = design(**kw)
    s = period_schedule(d)
    T = 1 / (kw.get("f_line") or f_sw) if topology == "line_leg" else 1 / f_sw
    n = s.n_cycles
    assert s.period == pytest.approx(n * T, rel=1e-12)
    assert np.all(s.dt > 0)
    # HS turn-ons never exceed one per switching period; a leg that switches at all has one
    assert s.hs_turn_on.sum() <= n
    if s.hs_on.any() and not s.hs_on.all():
        assert s.hs_turn_on.sum() >= 1 and s.sw_rise.sum() >= 1


def test_very_low_output_frequency_is_analysed_as_standstill():
    from explorer.schedule import QUASI_STATIC_PERIODS, schedule_validity
    f_sw = 100e3
    slow = design(topology="three_phase", m=0.9, f_o=f_sw / (3 * QUASI_STATIC_PERIODS), f_sw=f_sw)
    still = design(topology="three_phase", m=0.9, f_o=0.0, f_sw=f_sw)
    s, s0 = period_schedule(slow), period_schedule(still)
    assert s.n_cycles == 1 and np.array_equal(s.dt, s0.dt) and np.array_equal(s.v_sw, s0.v_sw)
    assert any("analysed as standstill" in w for w in schedule_validity(slow))
    assert not any("standstill" in w for w in schedule_validity(still))
    ok = design(topology="three_phase", m=0.9, f_o=f_sw / QUASI_STATIC_PERIODS, f_sw=f_sw)
    assert period_schedule(ok).n_cycles == QUASI_STATIC_PERIODS


def test_standstill_bounds_a_slow_fundamental_from_the_safe_side():
    # comparison principle for the rail recurrence: holding the highest duty for ever can only take
    # more charge per period than passing through it, so the standstill minimum is the lower one
    from explorer.options.bootstrap import evaluate_option
    for f_o in (50.0, 5.0):
        slow = design(topology="three_phase", m=0.95, f_o=f_o, f_sw=20e3)
        still = design(topology="three_phase", m=0.95, f_o=0.0, f_sw=20e3)
        a = evaluate_option(slow, slow.options[0]).v_rail.min
        b = evaluate_option(still, still.options[0]).v_rail.min
        assert b <= a + 1e-12


@pytest.mark.parametrize("bridge, driver", [
    ({}, {}),
    ({"v_out": 0.1}, {"t_on_min": 100e-9}),            # the HS pulse shorter than t_on_min: not given
    ({"v_out": 47.9}, {}),                               # the LS slot gone: HS on for the whole period
    ({"dead_time": 0.0}, {}),
    ({"mode": "light_load", "ls_pulse": 200e-9, "skip_cycles": 2}, {}),
    ({"topology": "half_bridge", "v_out": None}, {"t_on_min_ls": 2e-6}),  # LS pulses not given either
])
def test_slot_layout_with_zero_slots_gives_the_schedule(bridge, driver):
    # the four-slot layout of one period with its zero-length slots kept (what the vectorised maps use)
    # is the schedule's own period once those slots are dropped: the same intervals, levels, HS state,
    # turn-ons and turn-offs (the schedule's rules are the module notes' [EM] slot times)
    from explorer.design import replace_fields
    from explorer.schedule import hs_duty_per_period, slot_edges, slot_layout
    d = design(topology="sync_buck", v_out=12)
    d = replace_fields(d, {**{f"bridge.{k}": v for k, v in bridge.items()},
                           **{f"driver.{k}": v for k, v in driver.items()}})
    s = period_schedule(d)
    b = d.bridge
    t_hs, t_ls, la, lb = hs_duty_per_period(b, np.zeros(1, dtype=int), np.ones(1))
    dt, v, _, _, _ = slot_layout(b, d.driver, t_hs, t_ls, la, lb, 1.0 / b.f_sw)
    dt, v = dt[0], v[0]
    hs = np.array([True, False, False, False])
    on, turn_on, turn_off = slot_edges(dt, hs)
    keep = dt > 0
    np.testing.assert_array_equal(dt[keep], s.dt)
    np.testing.assert_array_equal(v[keep], s.v_sw)
    np.testing.assert_array_equal(on[keep], s.hs_on)
    # a transition that falls on a zero-length slot happens at the next slot's start, the same instant
    t0 = np.concatenate([[0.0], np.cumsum(dt)[:-1]])
    for mask, ref in ((turn_on, s.hs_turn_on), (turn_off, s.hs_turn_off)):
        np.testing.assert_allclose(np.sort(t0[mask]), np.sort(s.t_start[ref] - s.t_start[0]), atol=1e-18)
        assert mask.sum() == ref.sum()


def test_slot_edges_fills_zero_length_slots_from_the_last_real_one():
    # cyclically: a zero-length first slot takes the period's last real state
    from explorer.schedule import slot_edges
    dt = np.array([[0.0, 1.0, 0.0, 2.0], [3.0, 0.0, 0.0, 0.0], [1.0, 0.0, 1.0, 1.0]])
    hs = np.array([True, False, False, False])
    on, up, down = slot_edges(dt, hs)
    np.testing.assert_array_equal(on, [[False] * 4, [True] * 4, [True, True, False, False]])
    np.testing.assert_array_equal(up, [[False] * 4, [False] * 4, [True, False, False, False]])
    np.testing.assert_array_equal(down, [[False] * 4, [False] * 4, [False, False, True, False]])


@pytest.mark.parametrize("pwm, third", [("sine", False), ("sine", True), ("svpwm", False), ("dpwm120_bottom", False)])
@pytest.mark.parametrize("f_sw", [20e3, 1e6])
def test_duty_alias_sets_the_three_phase_hs_share_at_standstill(pwm, third, f_sw):
    # the sweep's "duty" axis means the HS on-time share of the period for every topology; for a
    # three-phase leg at standstill that is the crest period, HS on d·T − t_dead with d = ½(1 + u) [MUR],
    # u = m at the crest of sine PWM and m·√3/2 with a sixth third harmonic [HL] or space-vector PWM
    # (Holmes & Lipo 2003, ch. 6), so the alias must count the dead time (t_dead·f = 4 % at 1 MHz) and
    # the crest factor
    from explorer.design import replace_fields
    from explorer.sweep import duty_field
    from explorer.topology import operating_share
    d = replace_fields(design(topology="three_phase", m=0.5, f_o=0.0, f_sw=f_sw, v_out=None),
                       {"bridge.pwm": pwm, "bridge.third_harmonic": third, "bridge.dead_time": 40e-9})
    for h in (0.6, 0.75, 0.9):  # a crest duty above ½ (m ≥ 0)
        path, value = duty_field(d, h)
        dh = replace_fields(d, {path: value})
        s = period_schedule(dh)
        assert float(s.dt[s.hs_on].sum() / s.period) == pytest.approx(h, rel=1e-12)
        assert operating_share(dh.bridge) == pytest.approx(h, rel=1e-12)
    if third or pwm == "svpwm":  # the crest factor √3/2 [HL]: m = 1 puts the crest duty at ½(1 + √3/2)
        path, value = duty_field(d, 0.5 * (1 + np.sqrt(3) / 2) - 40e-9 * f_sw)
        assert value == pytest.approx(1.0, rel=1e-12)
