"""The comparison object: contract, families, ranking, views."""

import json

import pytest

from explorer import DEMO, RANKINGS, DesignError, evaluate, load_design
from explorer.results import FAMILIES


def test_every_check_belongs_to_a_family():
    res = evaluate(DEMO)
    for r in res.options:
        fams = r.families()
        assert "other" not in fams, (r.label, [c.name for c in r.checks])
        assert set(fams) <= set(FAMILIES)
        assert all(isinstance(v["ok"], bool) for v in fams.values())
        # an option holds exactly when every family holds
        assert r.feasible == all(v["ok"] for v in fams.values())


def test_result_contract_and_json():
    d = evaluate(DEMO).to_dict()
    assert d["format"] == "explorer-result" and d["version"] == 1
    text = json.dumps(d, allow_nan=False)  # no NaN or infinity can reach the JSON
    again = json.loads(text)
    for o in again["options"]:
        assert set(o["v_rail"]) >= {"min", "max", "mean"}
        assert set(o["startup"]) >= {"t_uvlo", "cycles_uvlo", "i_peak"}
        assert set(o["duty"]) >= {"min", "max", "hold_up"}
        for c in o["capacitors"]:
            assert set(c) >= {"name", "c_eff", "v_max", "v_rating", "ripple", "i_rms", "i_peak"}
        assert 0 < o["efficiency"] <= 1
        assert o["p_drawn"] >= o["p_delivered"] > 0


@pytest.mark.parametrize("rank", sorted(RANKINGS))
def test_rankings_put_feasible_first(rank):
    res = evaluate(DEMO, rank=rank)
    order = res.ranking()
    assert sorted(order) == sorted(r.label for r in res.options)
    feas = [res[lab].feasible for lab in order]
    assert feas == sorted(feas, reverse=True)
    if rank == "overhead":
        oh = [res[lab].overhead for lab in order if res[lab].feasible]
        assert oh == sorted(oh)


def test_unknown_rank_rejected():
    with pytest.raises(DesignError, match="rank: expected one of"):
        evaluate(DEMO, rank="cheapest")


def test_html_has_no_script_and_shows_caution():
    html = evaluate(DEMO)._repr_html_()
    assert "<script" not in html.lower() and "<table" in html
    assert "IEC 62368-1" in html
    for o in DEMO["options"]:
        assert o["label"] in html


def test_missing_model_is_reported_not_invented():
    from explorer.design import IsolatedOption
    from explorer.options import register_lazy
    register_lazy("isolated", "explorer.options.not_built_yet", IsolatedOption)
    try:
        res = evaluate(DEMO)
    finally:
        register_lazy("isolated", "explorer.options.isolated", IsolatedOption)
    r = res["isolated 1 W"]
    assert not r.feasible and r.error and r.v_rail is None and r.efficiency is None
    assert "not available" in r.verdict


def test_infeasible_option_verdict_names_the_broken_limit():
    d = json.loads(json.dumps(DEMO))
    d["options"][0]["v_rating"] = 10  # C_boot rated below the rail it sees
    r = evaluate(load_design(d))["bootstrap 220n"]
    assert not r.feasible
    assert r.verdict.startswith("does not hold")
    assert r.families()["stress"]["ok"] is False
