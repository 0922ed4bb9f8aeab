"""Survey columns and population.json block of the predictions (archsys.survey.predictions).

The rows are made by the survey's own flattening (store.system_row / pair_row) from a score mapping
of a synthetic posterior, so the test covers the path systems.csv / pairs.csv -> population.json.
Worked value: super-period of 10 d / 15.3 d near 3:2 = 255 d (Lithwick, Xie & Wu 2012; recomputed).
"""
import pytest

from archsys.scores import compute_scores
from archsys.survey.predictions import prediction_population
from archsys.survey.store import pair_row, system_row

from test_predictions import _posterior, _system


def test_packed_probability_and_super_periods_reach_the_survey_tables():
    post = _posterior(_system())
    sc = compute_scores(post)
    doc = {"system": "Test", "planets": [], "pairs": sc["pairs"], **sc["system"]}
    srow = system_row(doc)
    prows = [pair_row("Test", p) for p in sc["pairs"]]
    assert srow["packing_packed_probability"] == 0.0             # the 15.3 -> 45 d gap has room
    assert prows[0]["super_period_days_median"] == pytest.approx(1 / abs(3 / 15.3 - 2 / 10), rel=1e-12)
    assert prows[1]["room_fit_probability"] == 1.0
    pop = prediction_population([srow], prows)
    assert pop["packing"]["systems"] == 1 and pop["packing"]["per_system"][0]["packed_probability"] == 0.0
    sp = pop["super_periods"]
    assert (sp["pairs"], sp["first_order"], sp["second_order"]) == (2, 1, 1)
    assert sp["per_pair"][0]["resonance"] == "3:2"
    assert sp["per_pair"][0]["super_period_days"]["median"] == pytest.approx(255.0, rel=1e-9)


def test_population_block_without_predictions():
    # Systems with one planet carry no packing or super-period columns: empty, not an error.
    pop = prediction_population([{"system": "A"}], [])
    assert pop["packing"]["systems"] == 0 and pop["packing"]["expected_number_packed"] is None
    assert pop["super_periods"]["pairs"] == 0
