"""Benchmark figures of archsys: ``python -m benchmarks [--json] [--quick] [--skip NAME ...]`` from the
repository root (this folder is not installed with the package).

Prints one line per figure (or one JSON object with ``--json``).  Speed is measured here, never asserted
in tests.  Ratios are taken against a baseline measured in the same run (bare numpy, or the v0.1.0
engine checked out from the repository's ``v0.1.0`` tag), so they do not depend on the machine.

Figures
-------
kepler_draws_per_s, kepler_vs_bare_numpy
    archsys' vectorised Kepler III over 10^7 draws; the ratio is bare-numpy time / archsys time
    (1 = no overhead; target >= 0.6).
scores_draws_per_s, scores_seconds
    every score on 10^5 draws of the six-planet demo (Velmora).
posterior_seconds, posterior_neff_per_s, posterior_neff_per_s_vs_v010, posterior_v010_*
    the joint posterior of the six-planet demo, and the v0.1.0 engine (one emcee run over every
    parameter, run from the ``v0.1.0`` tag) on the same system in the same run (target: >= 5x the
    effective samples per second).
survey_full_*
    the open catalogue's RV systems in full mode (1 and 2 workers), and both engines on the same first
    40 of them (target: >= 5x faster, 2 workers >= 1.8x).
survey_systems_per_s, survey_seconds, survey_speedup_2_jobs
    the open catalogue in fast mode with 1 and 2 worker processes (target < 2 min, speed-up >= 1.7).
multiplicity_systems_per_s, multiplicity_systems_per_s_2_cores, multiplicity_vs_bare_numpy
    the transit-multiplicity forward model over 10^6 systems in one and in two processes (target >= 10^6
    systems per second on 2 cores); the ratio is the time bare numpy needs to draw the same random numbers
    over the model's time (1 = the random numbers are the whole cost).
stability_analytic_vs_nbody_cost
    cost of one N-body MEGNO integration per draw over the cost of the analytic verdicts per draw
    (needs rebound).
transit_curve_*, full_cpu_*
    the hypothetical-planet transit curve kernel against a bare-numpy evaluation of the same quadrature
    (every tilt piece and node), and full mode's CPU seconds per system on the open catalogue's first 8
    transiting multis for this tree and the main branch before the full-mode work, each in a child
    process (``benchmarks/full_mode.py``; ``--systems N`` there).
fast_synthetic_*, oec_fast_*, full_transit_multis_*, full_rv_*, dask_*
    surveys at scale, each in a fresh process through the command line, side by side with v0.1.0 (and
    the main branch before issue 23) exported from git: ``benchmarks/survey_scale.py`` (quick sizes
    here; ``python -m benchmarks.survey_scale`` for the full run).

The open catalogue is the extract in ``tests/data/oec/`` (Rein 2012; licence and provenance there).
"""
