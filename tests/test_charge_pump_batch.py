"""Batched pump Monte Carlo against evaluate_option, sample by sample.

The reference for each sample is the project's own single-design model,
``evaluate_option`` on the design that ``tolerance.apply_factors`` perturbs, as
issue 6 requires; the engine under it is checked against scipy in
tests/test_scnet_batch.py. The demo design is a scenario of our own invention.
"""

import dataclasses

import numpy as np
import pytest
from numpy.testing import assert_allclose

from explorer import demo_design
from explorer.errors import DesignError
from explorer.options.charge_pump import evaluate_option, rail_min_batch
from explorer.tolerance import Factors, apply_factors, monte_carlo, sample_factors

PUMPS = ["pump 1:1", "pump 1:2 from 5 V", "pump 2:1 from 24 V"]


def spread_design(distribution="uniform"):
    d = demo_design()
    return dataclasses.replace(d, spread=dataclasses.replace(d.spread, q_g=0.2, i_q=0.3,
                                                             distribution=distribution))


@pytest.mark.parametrize("distribution", ["uniform", "gaussian"])
@pytest.mark.parametrize("label", PUMPS)
def test_batch_equals_evaluate_per_sample(label, distribution):
    d = spread_design(distribution)
    opt = d.option(label)
    f = sample_factors(d, label, 64, np.random.default_rng(7))
    # the factors really move every input the pump sees
    for name in ("k_c", "q_g", "i_q", "v_dd"):
        assert np.ptp(getattr(f, name)) > 0
    batch = rail_min_batch(d, opt, f)
    assert batch.shape == (64,)
    for i in (0, 1, 17, 40, 63):
        p = apply_factors(d, label, f.at(i))
        one = evaluate_option(p, p.option(label)).v_rail.min
        assert_allclose(batch[i], one, rtol=1e-12)


@pytest.mark.parametrize("label", PUMPS)
def test_batch_at_nominal_factors_is_the_nominal_evaluation(label):
    # with every factor at 1 the perturbed design is the demo with ideal capacitors of the same value
    d = spread_design()
    f = Factors(k_c=np.ones(3), q_g=np.ones(3), i_q=np.ones(3), v_dd=np.ones(3), v_f=np.ones(3),
                t=np.full(3, 25.0))
    batch = rail_min_batch(d, d.option(label), f)
    ref = evaluate_option(d, d.option(label)).v_rail.min
    assert_allclose(batch, ref, rtol=1e-12)


def test_rail_falls_with_gate_charge_and_rises_with_capacitance():
    # physical direction of each factor (more load: lower rail; more C_out and C_fly: lower R_out and dip)
    d = spread_design()
    opt = d.option("pump 1:1")
    one = np.ones(3)
    q = rail_min_batch(d, opt, Factors(k_c=one, q_g=np.array([0.8, 1.0, 1.2]), i_q=one, v_dd=one))
    c = rail_min_batch(d, opt, Factors(k_c=np.array([0.8, 1.0, 1.2]), q_g=one, i_q=one, v_dd=one))
    assert np.all(np.diff(q) < 0) and np.all(np.diff(c) > 0)


@pytest.mark.parametrize("label", PUMPS)
def test_monte_carlo_is_vectorised_and_reproducible(label):
    d = spread_design()
    a = monte_carlo(d, label, 500, seed=3)
    b = monte_carlo(d, label, 500, seed=3)
    assert a.vectorised
    assert_allclose(a.rail_min, b.rail_min, rtol=0)
    assert np.all(np.isfinite(a.rail_min))


def test_batch_refuses_another_kind():
    d = demo_design()
    with pytest.raises(DesignError, match="charge_pump"):
        rail_min_batch(d, d.option("bootstrap 220n"), Factors(k_c=np.ones(2)))
