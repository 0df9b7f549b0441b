"""Numerical robustness: extreme but legal designs give finite answers in bounded time.

Regression tests for the failures the fuzz run found live here too, each next to the
design that showed it. The design values are invented test scenarios.
"""

import copy
import time
import warnings

import numpy as np
import pytest

import explorer
from explorer import DEMO, ExplorerWarning, evaluate, load_design
from explorer.options import model_for
from strategies import nonfinite_paths


def _evaluate_quietly(design):
    """evaluate() with the package's own warnings recorded, not raised (other warnings still fail)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("error")
        warnings.simplefilter("always", ExplorerWarning)
        result = evaluate(design)
    return result, [w for w in caught if issubclass(w.category, ExplorerWarning)]


def _isolated_only(**bridge):
    d = copy.deepcopy(DEMO)
    d["bridge"].update(bridge)
    d["options"] = [o for o in d["options"] if o["kind"] == "isolated"]
    return d


def test_isolated_with_no_hs_turn_on_reports_no_infinity():
    """Regression (fuzz run): a half bridge at duty 1 has no HS turn-on, so the isolated module's
    f_sw/Q_G limits are unbounded; they were reported as inf, which the result contract forbids
    (None where a figure is unbounded)."""
    d = _isolated_only(topology="half_bridge", duty=1.0, v_out=None)
    r, _ = _evaluate_quietly(d)
    res = r.options[0]
    assert res.duty.topology["f_sw_max"] is None and res.duty.topology["q_g_max"] is None
    assert nonfinite_paths(res) == []


@pytest.mark.parametrize("text", ["\uff12\uff10\uff10k", "\u0662\u0660\u0660k", "200\u00a0k"])
def test_look_alike_digits_are_refused(text):
    """Regression (hostile-input review): ``\\d`` matched digits of every script, so full-width
    '２００k' or Arabic-Indic '٢٠٠k' was read as 200 kHz although it is not what the format allows
    (ASCII numbers with an SI suffix)."""
    with pytest.raises(explorer.DesignError) as e:
        explorer.parse_eng(text, "bridge.f_sw")
    assert e.value.path == "bridge.f_sw"
