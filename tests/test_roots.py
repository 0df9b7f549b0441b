"""explorer.roots.brentq against scipy.optimize.brentq (the outside reference): the same floats.

Brent's method (Brent 1973, ch. 4) in the step order of scipy's brentq; every root below must equal
scipy's result bit for bit, and the errors must match scipy's conditions.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

from explorer.roots import brentq

CASES = [  # (function, a, b): smooth, steep, flat, one-sided and a kink
    (lambda x: x ** 3 - 2 * x - 5, 2.0, 3.0),  # Wallis's cubic (a classic test of root finders)
    (lambda x: math.cos(x) - x, 0.0, 1.0),
    (lambda x: math.exp(x) - 1e6, 0.0, 30.0),
    (lambda x: (x - 1e-7) ** 3, 0.0, 1.0),
    (lambda x: math.tanh(50 * (x - 0.3)), -1.0, 2.0),
    (lambda x: abs(x - 0.25) ** 0.5 * math.copysign(1, x - 0.25), 0.0, 1.0),
    (lambda x: 1.0 / (1.0 + x) - 1e-9, 0.0, 4e9),
]


@pytest.mark.parametrize("i", range(len(CASES)))
@pytest.mark.parametrize("xtol,rtol", [(2e-12, 4 * np.finfo(float).eps), (1e-9, 1e-10), (1e-300, 1e-15)])
def test_same_root_as_scipy_bit_for_bit(i, xtol, rtol):
    f, a, b = CASES[i]
    try:
        ref = optimize.brentq(f, a, b, xtol=xtol, rtol=rtol)
    except RuntimeError:  # scipy does not converge within 100 iterations: neither may we
        with pytest.raises(RuntimeError, match="no convergence"):
            brentq(f, a, b, xtol=xtol, rtol=rtol)
        return
    assert brentq(f, a, b, xtol=xtol, rtol=rtol) == ref


@settings(max_examples=200, deadline=None)
@given(st.floats(-10, 10), st.floats(0.01, 5), st.floats(-3, 3), st.floats(1e-14, 1e-3))
def test_same_root_as_scipy_on_random_cubics(r, s, c, xtol):
    f = lambda x: (x - r) * ((x - c) ** 2 + s)  # one real root at r
    a, b = r - 7.3, r + 2.1
    assert brentq(f, a, b, xtol=xtol) == optimize.brentq(f, a, b, xtol=xtol)


def test_errors_as_scipy():
    with pytest.raises(ValueError, match="different signs"):
        brentq(lambda x: x * x + 1, -1.0, 1.0)
    with pytest.raises(ValueError, match="rtol too small"):
        brentq(lambda x: x, -1.0, 1.0, rtol=1e-17)
    with pytest.raises(ValueError, match="NaN"):
        brentq(lambda x: math.nan if x > 0.2 else x - 0.5, 0.0, 1.0)
    assert brentq(lambda x: x, 0.0, 1.0) == 0.0  # a root at an end is returned as is
