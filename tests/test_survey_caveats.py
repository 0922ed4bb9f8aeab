"""Survey terminal lines carry what their numbers rest on; --where's bare comparisons say what they drop.

Behaviour checks of README promises ("Selecting systems", "Surveys"); no outside source.
"""
import warnings

import pytest

from archsys.model.checks import InputWarning
from archsys.survey.catalog import group_systems, read_catalog
from archsys.survey.column_map import bind, canonical_map, where_names
from archsys.survey.multiplicity_block import summary_lines
from archsys.survey.where import kept_by_any, parse_where, select

CSV = """system,planet,period,star_mass,method
A,A b,3.0,1.0,RV
A,A c,9.0,1.0,Transit
B,B b,4.0,1.0,RV
B,B c,11.0,1.0,RV
C,C b,5.0,1.0,Transit
"""


def _groups(tmp_path):
    f = tmp_path / "w.csv"
    f.write_text(CSV)
    cat = read_catalog(str(f))
    cmap = bind(canonical_map(cat.columns), cat)
    groups, _ = group_systems(cat, cmap.system)
    return groups, where_names(cmap, cat.columns)


def test_bare_comparison_holds_on_every_row_and_any_on_some(tmp_path):
    groups, names = _groups(tmp_path)
    bare, agg = parse_where("method==RV", names), parse_where("any(method==RV)", names)
    assert [g.system for g in groups if select(g, [bare])] == ["B"]
    assert [g.system for g in groups if select(g, [agg])] == ["A", "B"]
    dropped = [g for g in groups if not select(g, [bare])]
    assert kept_by_any(dropped, ["method==RV"], [bare]) == [("method==RV", 1)]
    assert kept_by_any(dropped, ["any(method==RV)"], [agg]) == []


def test_survey_says_when_a_bare_comparison_drops_systems(tmp_path):
    from archsys.options import AnalysisOptions, SurveyOptions
    from archsys.survey.run import run_survey
    f = tmp_path / "w.csv"
    f.write_text(CSV)
    with warnings.catch_warnings(record=True) as got:
        warnings.simplefilter("always")
        run_survey(str(f), str(tmp_path / "o"), AnalysisOptions(mode="fast", jobs=1, quiet=True),
                   SurveyOptions(where=("method==RV",), figures=False))
    notes = [str(w.message) for w in got if issubclass(w.category, InputWarning)]
    assert len(notes) == 1 and "drops 1 system" in notes[0] and "any(method==RV)" in notes[0]
    assert "\n" not in notes[0]


def test_terminal_lines_carry_counts_warnings_and_the_bound():
    sig = {"median": 0.4, "lo": 0.2, "hi": 1.3, "lo95": 0.11, "hi95": 4.2}
    pop = {"mutual_inclination_population": {"n_planets": 5, "n_systems": 2, "ess_min": 1.0,
                                             "ess_warning": "minimum effective sample size 1.0 < 10"},
           "transit_multiplicity": {
               "observed": {"n_systems": 2972, "n_planets": 3917}, "sigma_follows_prior": True,
               "model": {"spacing": {"kind": "observed_ratios", "n_ratios": 945, "median_ratio": 2.1}},
               "side_by_side": {"per_system_posteriors": {"sigma_deg": {"median": 0.13, "lo": 0.1, "hi": 0.2}},
                                "transit_multiplicity": {"sigma_deg": sig}}}}
    lines = summary_lines(pop)
    assert "from 5 planets in 2 systems" in lines[0]
    assert lines[1].startswith("warning:") and "effective sample size 1.0" in lines[1]
    assert "sigma < 4.2 deg (95 % upper bound" in lines[2] and "0.4" not in lines[2]
    assert "from 2972 systems" in lines[2] and "945 observed adjacent period ratios" in lines[2]
    pop["transit_multiplicity"]["sigma_follows_prior"] = False
    assert "0.4 deg (68 %: 0.2-1.3)" in summary_lines(pop)[2]
