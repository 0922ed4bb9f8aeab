"""Saved posterior chains (.npz): round trip, no pickle, malformed files rejected."""
import json

import numpy as np
import pytest

from archsys.errors import InputError
from archsys.inference.posterior import Posterior
from archsys.output.chains import FORMAT, load_posterior, posterior_bytes, save_posterior


def _posterior(n=200, npl=3, seed=1):
    rng = np.random.default_rng(seed)
    draws = {
        "m_star": rng.normal(1.0, 0.05, n),
        "r_star": np.full(n, np.nan),                      # unknown quantities are NaN
        "period": np.sort(rng.uniform(3, 30, (n, npl)), axis=1),
        "ecc": rng.uniform(0, 0.2, (n, npl)),
        "mass": rng.lognormal(-11, 0.3, (n, npl)),
        "inc": np.full((n, npl), np.nan),
        "psi": np.abs(rng.normal(0, 0.02, (n, npl))),      # MCMC-only keys
        "sigma_mutual": np.abs(rng.normal(0.02, 0.005, n)),
    }
    return Posterior(system=None, draws=draws, method="mcmc", seed=seed,
                     notes={"X b": {"mass": "true"}}, sampler={"walkers": 32, "steps": 1000},
                     prior={"eccentricity": {"name": "ecc-uniform"}})


def _document(npl=3):
    return {"system": "X", "planets": [{"name": f"X {chr(98 + j)}"} for j in range(npl)],
            "pairs": [], "provenance": {"seed": 1}}


def test_round_trip_equal_arrays_and_metadata(tmp_path):
    post, doc = _posterior(), _document()
    path = save_posterior(tmp_path / "x.chains.npz", post, doc)
    draws, meta = load_posterior(path)
    assert set(draws) == set(post.draws)
    for k, v in post.draws.items():
        np.testing.assert_array_equal(draws[k], v)          # NaN compare equal here
        assert draws[k].shape == v.shape
    assert meta["format"] == FORMAT
    assert meta["system"] == "X"
    assert meta["planet_names"] == ["X b", "X c", "X d"]
    assert meta["method"] == "mcmc"
    assert meta["sampler"] == {"walkers": 32, "steps": 1000}
    assert meta["prior"]["eccentricity"]["name"] == "ecc-uniform"
    assert meta["notes"] == post.notes
    assert meta["document"] == doc
    assert meta["n_draws"] == 200


def test_file_needs_no_pickle(tmp_path):
    path = save_posterior(tmp_path / "x.npz", _posterior(), _document())
    with np.load(path, allow_pickle=False) as npz:
        for k in npz.files:                                  # every entry loads without pickle
            assert npz[k].dtype != object


def test_pipeline_posterior_round_trip(tmp_path):
    from archsys import read_system
    from archsys.pipeline import AnalysisOptions, analyze
    src = tmp_path / "duo.toml"
    src.write_text(_DUO)
    res = analyze(read_system(src), AnalysisOptions(n_draws=100, mode="direct"))
    path = save_posterior(tmp_path / "duo.npz", res.posterior, res.document)
    draws, meta = load_posterior(path)
    np.testing.assert_array_equal(draws["period"], res.posterior.draws["period"])
    assert meta["document"] == json.loads(json.dumps(res.document))
    assert meta["planet_names"] == res.system.planet_names


def test_atomic_write_leaves_no_temporary_files(tmp_path):
    save_posterior(tmp_path / "x.npz", _posterior(), _document())
    save_posterior(tmp_path / "x.npz", _posterior(seed=2), _document())    # overwrite
    assert sorted(p.name for p in tmp_path.iterdir()) == ["x.npz"]


def test_non_numeric_draws_rejected_on_save():
    post = _posterior()
    post.draws["label"] = np.array(["a"] * 200)
    with pytest.raises(ValueError, match="label"):
        posterior_bytes(post, _document())


def _one_line(exc):
    msg = str(exc.value)
    assert "\n" not in msg
    return msg


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="not found") as e:
        load_posterior(tmp_path / "none.npz")
    _one_line(e)


def test_not_an_npz(tmp_path):
    p = tmp_path / "bad.npz"
    p.write_text("hello")
    with pytest.raises(InputError, match="bad.npz") as e:
        load_posterior(p)
    _one_line(e)


def test_single_npy_rejected(tmp_path):
    p = tmp_path / "one.npy"
    np.save(p, np.arange(3.0))
    with pytest.raises(InputError, match="not an .npz"):
        load_posterior(p)


def test_pickled_object_array_rejected(tmp_path):
    good = dict(np.load(save_posterior(tmp_path / "g.npz", _posterior(), _document())))
    good["draws.evil"] = np.array([{"a": 1}] * 200, dtype=object)
    p = tmp_path / "evil.npz"
    np.savez(p, **good)                                       # numpy pickles object arrays
    with pytest.raises(InputError, match="pickle") as e:
        load_posterior(p)
    _one_line(e)


def test_missing_meta_rejected(tmp_path):
    p = tmp_path / "nometa.npz"
    np.savez(p, **{"draws.period": np.ones((10, 2))})
    with pytest.raises(InputError, match="meta"):
        load_posterior(p)


def test_bad_meta_json_rejected(tmp_path):
    p = tmp_path / "badjson.npz"
    np.savez(p, meta=np.frombuffer(b"{not json", dtype=np.uint8), **{"draws.period": np.ones((10, 2))})
    with pytest.raises(InputError, match="JSON"):
        load_posterior(p)


def test_wrong_planet_columns_rejected(tmp_path):
    content = dict(np.load(save_posterior(tmp_path / "g.npz", _posterior(), _document())))
    content["draws.ecc"] = np.zeros((200, 5))                 # 5 columns for 3 planets
    p = tmp_path / "cols.npz"
    np.savez(p, **content)
    with pytest.raises(InputError, match="columns"):
        load_posterior(p)


def test_inconsistent_rows_rejected(tmp_path):
    content = dict(np.load(save_posterior(tmp_path / "g.npz", _posterior(), _document())))
    content["draws.m_star"] = np.zeros(7)
    p = tmp_path / "rows.npz"
    np.savez(p, **content)
    with pytest.raises(InputError, match="rows"):
        load_posterior(p)


# Invented two-planet system for the pipeline round trip.
_DUO = """
name = "Duo"
[star]
mass = { value = 1.0, err = 0.05 }
[[planet]]
name = "Duo b"
period = { value = 5.0, err = 0.001 }
mass = { value = 6.0, err = 1.0 }
[[planet]]
name = "Duo c"
period = { value = 7.6, err = 0.002 }
mass = { value = 9.0, err = 2.0 }
"""

