"""The floating rail's load: what the high-side gate and driver draw.

Gate-drive power P = Q_G·V·f_sw (Mohan, Undeland & Robbins, *Power
Electronics*, 3rd ed., 2003, §22-3; Erickson & Maksimović 2020, §4.3): the
charge Q_G is drawn from the rail at each HS turn-on whatever the gate and
driver resistances are; those only split where the energy is dissipated.
"""

from __future__ import annotations

import numpy as np

from .design import Design
from .schedule import Schedule

__all__ = ["charge_per_turn_on", "charge_per_turn_off", "load_charge", "load_power", "required_rail"]


def charge_per_turn_on(design: Design) -> float:
    """Charge taken from the rail at each HS turn-on: Q_G + Q_LS [C]."""
    return design.gate.q_g + design.driver.q_ls


def charge_per_turn_off(design: Design) -> float:
    """Charge taken from the rail at each HS turn-off: Q_LS [C].

    A pulsed level shifter sends a set pulse at the turn-on command and a reset pulse at the
    turn-off command; each draws its charge from the floating rail (through the floating side's
    latch load), so Q_LS is taken per transition, twice per switching period.
    """
    return design.driver.q_ls


def required_rail(design: Design) -> float:
    """Lowest rail voltage the design accepts: max(uvlo_off, v_gs_on_min) + v_margin [V]."""
    return max(design.driver.uvlo_off, design.gate.v_gs_on_min) + design.checks.v_margin


def load_charge(design: Design, schedule: Schedule, v_rail) -> float:
    """Charge the load draws from the rail over the schedule at a constant rail voltage [C].

    Q = n_on·(Q_G + Q_LS) + n_off·Q_LS + I_Q·T + (V/R_GS)·t_on, with n_on and n_off the HS
    turn-ons and turn-offs and t_on the total HS on-time.
    """
    q = np.count_nonzero(schedule.hs_turn_on) * charge_per_turn_on(design)
    q = q + np.count_nonzero(schedule.hs_turn_off) * charge_per_turn_off(design)
    q = q + design.driver.i_q * schedule.period
    if design.gate.r_gs is not None:
        q = q + np.asarray(v_rail) / design.gate.r_gs * float(schedule.dt[schedule.hs_on].sum())
    return q


def load_power(design: Design, schedule: Schedule, v_rail) -> float:
    """Average power delivered to the floating rail's load at rail voltage ``v_rail`` [W].

    P = V·Q/T with Q from :func:`load_charge`: for the gate charge this is the
    textbook Q_G·V·f_sw.
    """
    return np.asarray(v_rail) * load_charge(design, schedule, v_rail) / schedule.period
