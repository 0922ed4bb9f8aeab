"""Surveys at scale: the same bytes however the work is split, bounded population fits, progress.

References beside each check: the collision condition of Laskar & Petit (2017, A&A 605, A72, the
critical AMD's defining equation) solved by plain bisection; the Gladman (1993) criterion in the
orbital-elements form documented in archsys.physics.hill; byte-identical outputs between runs are
common practice for reproducible pipelines.
"""
import io
import math
import pathlib

import numpy as np
import pytest

from archsys.physics import amd, hill
from archsys.survey import popfits
from archsys.survey.run import run_survey
from archsys.survey.store import SurveyStore
from archsys.survey.synthetic import PopulationLaws, write_population

OUTPUTS = ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json")


def _bisect_root(alpha, gamma, n=200):
    lo, hi = np.zeros_like(alpha), np.ones_like(alpha)
    for _ in range(n):
        mid = 0.5 * (lo + hi)
        f = alpha * mid + gamma * mid / np.sqrt(alpha * (1 - mid ** 2) + gamma ** 2 * mid ** 2) - 1 + alpha
        hi, lo = np.where(f > 0, mid, hi), np.where(f > 0, lo, mid)
    return 0.5 * (lo + hi)


def test_collision_root_matches_bisection_and_is_batch_invariant():
    rng = np.random.default_rng(3)
    alpha = rng.uniform(0.05, 0.995, 5000)
    gamma = 10 ** rng.uniform(-4, 4, 5000)
    e = amd._collision_root(alpha, gamma)
    np.testing.assert_allclose(e, _bisect_root(alpha, gamma), rtol=0, atol=1e-13)
    # each element depends on its own inputs only: alone, in other batches, in another order
    alone = np.array([amd._collision_root(alpha[i:i + 1], gamma[i:i + 1])[0] for i in range(0, 5000, 97)])
    assert alone.tobytes() == e[::97].tobytes()
    perm = rng.permutation(5000)
    assert amd._collision_root(alpha[perm], gamma[perm]).tobytes() == e[perm].tobytes()


def test_gladman_margin_same_bytes_with_broadcast_shapes():
    rng = np.random.default_rng(4)
    n, k = 50, 16
    a1, m1, m2, ms, e1 = (rng.uniform(lo, hi, (n, 1)) for lo, hi in
                          ((0.05, 0.1), (1e-6, 1e-4), (1e-6, 1e-4), (0.8, 1.2), (0.0, 0.3)))
    a2 = rng.uniform(0.11, 0.3, (n, k))
    got = hill.gladman_margin(a1, a2, m1, m2, ms, e1, 0.0)
    full = [np.broadcast_to(x, (n, k)).copy() for x in (a1, m1, m2, ms, e1)]
    A1, M1, M2, MS, E1 = full
    # the orbital-elements form of Gladman (1993) on full arrays (see hill.gladman_margin)
    mu1, mu2 = M1 / MS, M2 / MS
    mu = mu1 + mu2
    g1, g2 = np.sqrt(1.0 - E1 ** 2), np.sqrt(1.0 - np.zeros((n, k)) ** 2)
    d = np.sqrt(a2 / A1)
    lhs = mu ** -3 * (mu1 + mu2 / d ** 2) * (mu1 * g1 + mu2 * g2 * d) ** 2
    rhs = 1.0 + 3.0 ** (4.0 / 3.0) * mu1 * mu2 / mu ** (4.0 / 3.0)
    assert got.tobytes() == (lhs / rhs - 1.0).tobytes()
    # swapped order gives the same margins
    assert np.array_equal(hill.gladman_margin(a2, a1, m2, m1, ms, 0.0, e1), got)


def test_thinned_fit_samples_state_their_effect():
    """A fit of many planets keeps at most MAX_FIT_SAMPLES draws and says what thinning did."""
    from archsys.survey.hierarchical import MIN_SAMPLES_PER_OBJECT, HMBData, samples_kept, thinning_note
    assert samples_kept(1000, 100, 2 ** 16) == 65 and samples_kept(10, 100, 2 ** 16) == 100
    assert samples_kept(10 ** 6, 100, 2 ** 16) == MIN_SAMPLES_PER_OBJECT      # never below the floor
    assert samples_kept(10 ** 6, 100, None) == 100
    assert thinning_note(100, 100) is None
    note = thinning_note(4000, 100)
    assert note["samples_per_object_used"] == 32 and note["samples_per_object_available"] == 100
    assert "1.77x" in note["effect"] and "benchmarks/population_thinning.py" in note["effect"]
    x = [np.linspace(0.01, 0.5, 100) + i * 1e-4 for i in range(300)]
    d = HMBData(x, [np.zeros(100)] * 300, 1.0, max_samples=300 * 40)
    assert (d.k, d.k_available) == (40, 100)
    # even thinning: the first and last draws kept, in order
    assert d.x[0, 0] == x[0][0] and d.x[0, -1] == x[0][-1] and np.all(np.diff(d.x[0]) > 0)


def test_thinned_beta_fit_agrees_with_the_full_fit():
    """Thinning 100 -> 32 draws per planet moves the Beta fit by a fraction of its interval.

    Reference population: Beta(0.867, 3.03) of Kipping (2013, MNRAS 434, L51; RV planets), observed
    with Gaussian errors of 0.01-0.1 (common practice for RV eccentricities); samples are the exact
    posterior under a flat prior on [0, 1) (the measurement's normal truncated to [0, 1)).
    """
    from scipy import stats
    from archsys.survey.hierarchical import HMBData, fit_beta
    rng = np.random.default_rng(5)
    n, truth = 500, (0.867, 3.03)
    e = rng.beta(*truth, n)
    sig = np.exp(rng.uniform(math.log(0.01), math.log(0.1), n))
    obs = e + sig * rng.standard_normal(n)
    samples = [stats.truncnorm.rvs(-o / s, (1 - o) / s, loc=o, scale=s, size=100, random_state=rng)
               for o, s in zip(obs, sig)]
    lp0 = [np.zeros(100)] * n
    full = fit_beta(HMBData(samples, lp0, 1.0, max_samples=None), seed=3, n_steps=600, n_burn=200)
    thin = fit_beta(HMBData(samples, lp0, 1.0, max_samples=32 * n), seed=3, n_steps=600, n_burn=200)
    assert thin["diagnostics"]["samples_per_object"] == 32
    assert thin["diagnostics"]["samples_per_object_available"] == 100
    for p, t in zip(("alpha", "beta"), truth):
        f, h = full[p], thin[p]
        half = 0.5 * (f["hi"] - f["lo"])
        assert abs(h["median"] - f["median"]) < 0.5 * half, (p, f, h)
        assert 0.8 < (h["hi"] - h["lo"]) / (f["hi"] - f["lo"]) < 1.25
        assert h["lo95"] <= t <= h["hi95"] and f["lo95"] <= t <= f["hi95"]


def test_subsample_objects_is_seeded_and_states_its_effect():
    samples = [np.full(4, float(i)) for i in range(50)]
    lps = [np.zeros(4) for _ in range(50)]
    same = popfits.subsample_objects(samples, lps, seed=1, max_objects=50)
    assert same[0] is samples and same[2] is None
    s1, l1, info = popfits.subsample_objects(samples, lps, seed=1, max_objects=20)
    s2, _, _ = popfits.subsample_objects(samples, lps, seed=1, max_objects=20)
    s3, _, _ = popfits.subsample_objects(samples, lps, seed=2, max_objects=20)
    kept = [int(s[0]) for s in s1]
    assert len(s1) == len(l1) == 20 and kept == sorted(set(kept))
    assert kept == [int(s[0]) for s in s2] and kept != [int(s[0]) for s in s3]
    assert info["objects_available"] == 50 and info["objects_used"] == 20
    assert f"{math.sqrt(50 / 20):.2f}x wider" in info["effect"]


@pytest.fixture(scope="module")
def catalogue(tmp_path_factory):
    path = tmp_path_factory.mktemp("cat") / "pop.csv"
    write_population(path, 14, PopulationLaws(mean_planets=2.5, ecc_measured=1.0), seed=11)
    return path


def _outputs(out):
    return {name: (out / name).read_bytes() for name in OUTPUTS}


@pytest.mark.slow
def test_background_fits_and_workers_give_the_same_bytes(catalogue, tmp_path, monkeypatch):
    # every population fit runs: eccentricities of every planet, subsampled to 12 planets
    monkeypatch.setattr(popfits, "MAX_FIT_OBJECTS", 12)
    kw = dict(mode="fast", figures=False, quiet=True, seed=3)
    serial = run_survey(catalogue, tmp_path / "serial", jobs=1, **kw)
    assert serial["eccentricity_population"]["subsample"]["objects_used"] == 12
    assert serial["eccentricity_population"]["beta"] is not None
    run_survey(catalogue, tmp_path / "two", jobs=2, **kw)
    assert _outputs(tmp_path / "two") == _outputs(tmp_path / "serial")


def test_progress_from_the_first_step(catalogue, tmp_path):
    class Tty(io.StringIO):
        def isatty(self):
            return True

    err = Tty()
    run_survey(catalogue, tmp_path / "o", mode="fast", jobs=1, figures=False, quiet=False, stream=err,
               limit=3)
    text = err.getvalue()
    for what in ("survey:", "population:", "files written", "peak memory"):
        assert what in text, what
    quiet = Tty()
    run_survey(catalogue, tmp_path / "q", mode="fast", jobs=1, figures=False, quiet=True, stream=quiet, limit=3)
    assert quiet.getvalue() == ""


def test_grouped_store_writes_whole_systems_only(tmp_path):
    store = SurveyStore(tmp_path)
    ok = {"system": "A", "status": "rejected", "n_planets": 1, "error_kind": "input",
          "rejects": [{"planet": "", "row": 1, "field": "", "column": "", "reason": "x"}]}
    broken = {"system": "B", "status": "rejected", "n_planets": 1}       # no reject lines: 'rejects' missing
    broken["rejects"] = [{"planet": ""}]                                  # a line without its reason
    with pytest.raises(KeyError):
        store.put_many([ok, broken])
    assert store.count() == 0                                             # the group is one transaction
    store.put_many([ok])
    assert store.done() == {"A"}
    store.close()


OEC = pathlib.Path(__file__).parent / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"
OEC_COLUMNS = pathlib.Path(__file__).parent / "data" / "oec_columns.toml"


@pytest.mark.slow
def test_open_catalogue_batched_workers_equal_one_at_a_time(tmp_path, monkeypatch):
    # the open catalogue extract (Rein 2012, arXiv:1211.7121; tests/data/oec): one system at a time in
    # this process against batches of systems on two worker processes with the population fits beside
    from archsys.survey import workers
    kw = dict(columns=str(OEC_COLUMNS), where=["n_planets>=2"], limit=24, mode="fast", figures=False,
              quiet=True, seed=9)
    monkeypatch.setattr(workers, "FAST_BATCH", 1)                  # one system per call: analyze()
    run_survey(OEC, tmp_path / "one", jobs=1, **kw)
    monkeypatch.undo()
    run_survey(OEC, tmp_path / "batched", jobs=2, **kw)
    assert _outputs(tmp_path / "batched") == _outputs(tmp_path / "one")


def _blas_threads():
    from threadpoolctl import threadpool_info
    return sorted({i["num_threads"] for i in threadpool_info()})


def test_fit_processes_and_the_survey_process_use_one_blas_thread():
    """Population-fit processes start with one BLAS thread, even when started at a later submit.

    A process pool starts its processes as tasks are submitted, so setting the thread variables only
    around the pool's creation missed them (the fits ran 12x slower on busy cores); threadpoolctl reads
    the loaded libraries' own setting (common practice for process-parallel numerical code).
    """
    from archsys.survey.workers import one_blas_thread
    with popfits.FitRunner(1) as fits:
        assert fits.submit(_blas_threads).result() == [1]
    with one_blas_thread():
        assert _blas_threads() == [1]


_FAULTS = r"""
import pathlib, resource, sys, warnings
warnings.simplefilter("ignore")
from archsys.survey import workers
from archsys.survey.catalog import read_catalog, group_systems
from archsys.survey.column_map import bind, load_column_map
from archsys.options import AnalysisOptions
if sys.argv[1] == "off":
    workers._malloc_checked.append(False)        # as before the fix: glibc's settings left as the environment made them
data = pathlib.Path(sys.argv[2])
cat = read_catalog(data / "oec" / "open_exoplanet_catalogue_planets.csv")
cmap = bind(load_column_map(str(data / "oec_columns.toml")), cat)
groups = [g for g in group_systems(cat, cmap.system)[0] if g.n_planets >= 3][:32]
opts = AnalysisOptions(mode="fast", nbody=0, quiet=True, jobs=1)
tasks = [(g, cmap, cat.units, opts, cat.name, False) for g in groups]
workers.process_batch(tasks[:4])
before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
out = workers.process_batch(tasks)
print(resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before, workers.large_array_malloc(),
      sum(r["status"] == "ok" for r in out))
"""


@pytest.mark.skipif(not pathlib.Path("/proc/self").exists(), reason="glibc/Linux behaviour")
def test_workers_undo_a_low_malloc_trim_threshold():
    """A Dask worker's MALLOC_TRIM_THRESHOLD_=65536 must not turn every batch array into fresh pages.

    glibc's mallopt(3) manual: setting M_TRIM_THRESHOLD (or M_MMAP_THRESHOLD, M_TOP_PAD, M_MMAP_MAX)
    disables the dynamic mmap threshold, so each allocation above 128 KiB is a new mmap faulted in page
    by page.  Dask's nanny sets that variable in its workers (distributed's default configuration).
    Open-catalogue multis (tests/data/oec) analysed in one batch, page faults counted by getrusage.
    """
    import subprocess
    import sys
    data = pathlib.Path(__file__).parent / "data"
    env = dict(__import__("os").environ, MALLOC_TRIM_THRESHOLD_="65536")
    counts = {}
    for mode in ("off", "on"):
        r = subprocess.run([sys.executable, "-c", _FAULTS, mode, str(data)], env=env, capture_output=True,
                           text=True, timeout=300)
        assert r.returncode == 0, r.stderr
        faults, fixed, ok = r.stdout.split()
        counts[mode] = int(faults)
        assert fixed == ("True" if mode == "on" else "False") and int(ok) >= 16
    assert counts["on"] * 4 < counts["off"], counts
    clean = {k: v for k, v in __import__("os").environ.items() if not k.startswith("MALLOC_")}
    r = subprocess.run([sys.executable, "-c", "from archsys.survey.workers import large_array_malloc as f; "
                        "print(f())"], env=clean, capture_output=True, text=True, timeout=120)
    assert r.stdout.strip() == "False", r.stderr           # nothing changed where nothing was set
