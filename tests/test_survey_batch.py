"""Batched fast mode: systems analysed together give the bytes each gets alone.

The check is against the project's own one-system path on real data: the open exoplanet catalogue
extract (Rein 2012, arXiv:1211.7121; MIT licence; tests/data/oec), whose systems differ in planet
count, in which inputs they have and in their mistakes.  Identical outputs whichever way the work is
split is common practice for reproducible pipelines.
"""
import json
import pathlib
from dataclasses import replace

import numpy as np
import pytest

from archsys.model.reader import build_system
from archsys.options import AnalysisOptions, Mode
from archsys.pipeline import analyze, analyze_many
from archsys.scores.compute import compute_scores, compute_scores_many
from archsys.survey import workers
from archsys.survey.catalog import group_systems, read_catalog
from archsys.survey.column_map import bind, load_column_map
from archsys.survey.mapping import system_mapping
from archsys.survey.run import run_survey, system_seed

DATA = pathlib.Path(__file__).parent / "data"
OEC = DATA / "oec" / "open_exoplanet_catalogue_planets.csv"
OEC_COLUMNS = DATA / "oec_columns.toml"
OUTPUTS = ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json")


def _oec_systems(min_planets=1, limit=None):
    cat = read_catalog(OEC)
    cmap = bind(load_column_map(OEC_COLUMNS), cat)
    groups, _ = group_systems(cat, cmap.system)
    base = AnalysisOptions(mode=Mode.FAST, seed=5, nbody=0, quiet=True, jobs=1)
    systems, opts = [], []
    for g in groups:
        if g.n_planets < min_planets:
            continue
        data, problems, _ = system_mapping(g, cmap, cat.units)
        if problems:
            continue
        try:
            systems.append(build_system(data, source=g.system))
        except Exception:       # noqa: BLE001 - rejected rows are not what this test is about
            continue
        opts.append(replace(base, seed=system_seed(5, g.system)))
        if limit and len(systems) >= limit:
            break
    return systems, opts


def _alone(system, opts):
    try:
        return analyze(system, opts)
    except Exception as exc:    # noqa: BLE001 - compared with what the batch says for this system
        return exc


def _same(one, many):
    assert len(one) == len(many)
    for a, b in zip(one, many):
        if isinstance(a, Exception) or isinstance(b, Exception):
            assert type(a) is type(b) and str(a) == str(b)
            continue
        assert json.dumps(a.document, sort_keys=True) == json.dumps(b.document, sort_keys=True)
        for k, v in a.scores["arrays"].items():
            w = b.scores["arrays"][k]
            if isinstance(v, np.ndarray):
                assert v.tobytes() == np.asarray(w).tobytes(), k


def test_batched_analysis_is_byte_identical_on_open_catalogue_multis():
    systems, opts = _oec_systems(min_planets=2, limit=80)
    assert len(systems) >= 80 and len({s.n_planets for s in systems}) >= 3
    _same([_alone(s, o) for s, o in zip(systems, opts)], analyze_many(systems, opts))


def test_a_failing_system_fails_as_it_does_alone():
    systems, opts = _oec_systems(min_planets=3, limit=6)
    posts = [analyze(s, o).posterior for s, o in zip(systems, opts)]
    broken = posts[2]
    broken.draws["a"] = broken.draws["a"].copy()
    broken.draws["a"][:, 1] = -1.0                                  # a posterior no kernel accepts
    with pytest.raises(ValueError) as alone:
        compute_scores(broken, opts[2])
    with pytest.raises(ValueError) as batched:                     # its own error, not the stack's
        compute_scores_many(posts, opts)
    assert str(batched.value) == str(alone.value)


@pytest.mark.slow
def test_batched_analysis_is_byte_identical_on_the_whole_open_catalogue():
    systems, opts = _oec_systems()
    assert len(systems) > 3000
    _same([_alone(s, o) for s, o in zip(systems, opts)], analyze_many(systems, opts))


def test_survey_tables_same_bytes_one_at_a_time_and_batched(tmp_path, monkeypatch):
    kw = dict(columns=str(OEC_COLUMNS), where=["n_planets>=2"], limit=16, mode="fast", figures=False,
              quiet=True, seed=9)
    run_survey(OEC, tmp_path / "batched", jobs=1, **kw)
    monkeypatch.setattr(workers, "FAST_BATCH", 1)                  # one system per call: analyze()
    run_survey(OEC, tmp_path / "one", jobs=1, **kw)
    one = {n: (tmp_path / "one" / n).read_bytes() for n in OUTPUTS}
    assert {n: (tmp_path / "batched" / n).read_bytes() for n in OUTPUTS} == one
