"""Same seed, same numbers: serial, local processes and a real Dask cluster.

Data: the Open Exoplanet Catalogue extract (Rein 2012, arXiv:1211.7121,
snapshot 2026-08-22), the first 12 systems with two or more planets.
Byte-identical outputs are the check (common practice for reproducible runs).
"""
import pathlib

import pytest

from archsys.survey.run import run_survey

OEC = pathlib.Path(__file__).parent / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"  # Rein 2012; see data/oec/README.md
COLUMNS = pathlib.Path(__file__).parent / "data" / "oec_columns.toml"
LIMIT = 12
OUTPUTS = ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json")


def _run(out, **kw):
    run_survey(str(OEC), str(out), columns=str(COLUMNS), where=["n_planets>=2"], limit=LIMIT, mode="direct",
               draws=200, figures=False, seed=5, **kw)
    return {name: (out / name).read_bytes() for name in OUTPUTS}


@pytest.fixture(scope="module")
def serial(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("serial") / "o", jobs=1)


def test_local_processes_equal_serial(serial, tmp_path):
    assert _run(tmp_path / "o", jobs=2) == serial


def test_other_seed_differs(serial, tmp_path):
    out = tmp_path / "o"
    run_survey(str(OEC), str(out), columns=str(COLUMNS), where=["n_planets>=2"], limit=LIMIT, mode="direct",
               draws=200, figures=False, seed=6, jobs=1)
    assert (out / "systems.csv").read_bytes() != serial["systems.csv"]
    assert (out / "rejects.csv").read_bytes() == serial["rejects.csv"]    # input checks need no seed


@pytest.mark.slow          # a real cluster: scheduler and two worker processes (about 20 s)
def test_dask_cluster_equals_serial(serial, tmp_path, monkeypatch):
    distributed = pytest.importorskip("distributed")
    # spawned workers must import archsys from this source tree
    root = str(pathlib.Path(__file__).resolve().parents[1])
    monkeypatch.setenv("PYTHONPATH", root)
    # two tasks of 6 systems each, analysed together in a worker (the serial run above: one at a time)
    from archsys.survey import workers
    monkeypatch.setattr(workers, "_batches", lambda tasks, n_workers=1, batch=None: [tasks[:6], tasks[6:]])
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        got = _run(tmp_path / "o", scheduler=cluster.scheduler_address)
    assert got == serial


def test_missing_scheduler_is_a_clear_error(tmp_path):
    pytest.importorskip("distributed")
    import dask
    from archsys.errors import InputError
    with dask.config.set({"distributed.comm.timeouts.connect": "2s"}), \
            pytest.raises(InputError, match="cannot connect to the Dask scheduler"):
        run_survey(str(OEC), str(tmp_path / "o"), columns=str(COLUMNS), limit=2, mode="direct", draws=50,
                   figures=False, scheduler="tcp://127.0.0.1:9")
