"""Typed options of an analysis, shared by ``archsys report``, ``archsys survey``,
the benchmark and the Python API.

:class:`AnalysisOptions` validates every value when it is made, so the Python
API refuses a bad value exactly as the command line does: one
:class:`~archsys.errors.InputError` line naming the option (and its command-line
flag) and the accepted range.  :class:`SurveyOptions` holds what only a survey
needs (column map, selection, resume, scheduler, limit, figures).

Example::

    from archsys.options import AnalysisOptions, Mode
    opts = AnalysisOptions(mode=Mode.FAST, seed=3)      # n_draws = FAST_DRAWS
    opts = AnalysisOptions(mode="direct", n_draws=2000)  # strings work too
"""
from __future__ import annotations

import enum
import math
import os
import pathlib
import stat
from dataclasses import dataclass, fields, replace

from .errors import InputError
from .inference.draws import DEFAULT_DRAWS

__all__ = ["Mode", "AnalysisOptions", "SurveyOptions", "FAST_DRAWS", "MIN_DRAWS", "MAX_DRAWS",
           "MAX_SEED", "MAX_JOBS", "MAX_NBODY", "MAX_NBODY_ORBITS", "MAX_PRIOR_FILE_BYTES", "check_prior"]

#: Draws per system in ``--mode fast`` (``archsys report`` and ``archsys survey`` alike).
FAST_DRAWS = 1000
#: Fewest posterior draws that give usable percentiles.
MIN_DRAWS = 10
#: Most posterior draws kept per system: every array of a 64-planet system then
#: stays below about 100 MB, so a run cannot exhaust memory through this option.
MAX_DRAWS = 200_000
#: Largest seed (numpy's SeedSequence takes any non-negative integer; 2^63 - 1 keeps
#: the seed a signed 64-bit integer in every file format that stores it).
MAX_SEED = 2 ** 63 - 1
#: Most worker processes (far above the cores of any one machine).
MAX_JOBS = 1024
#: Most posterior draws integrated by ``--nbody``.
MAX_NBODY = 10_000
#: Longest N-body horizon in orbits of the innermost planet (10^7 orbits take hours per draw).
MAX_NBODY_ORBITS = 1e7
#: Posterior draws integrated when the analytic criteria are not enough (``--nbody auto``, the
#: default of ``archsys report``): 64 draws give a fraction to +-0.06 (1 sigma at 50 %).
AUTO_NBODY_DRAWS = 64
#: Default N-body horizon in orbits of the innermost planet (issue: >= 10^4; 2 x 10^4 matches the
#: horizon of the independent checks in the tests).
DEFAULT_NBODY_ORBITS = 2e4
#: Default wall-clock budget of the N-body step of one system [s]; the draws integrated are cut to
#: fit it (and the report says so).
DEFAULT_NBODY_BUDGET = 120.0
#: Environment variable that sets the default of ``nbody`` when it is not given ("auto" or a number):
#: e.g. ``ARCHSYS_NBODY=0`` in batch scripts and in the test suite.
NBODY_ENV = "ARCHSYS_NBODY"
#: What ``require_stable`` conditions on: the analytic Hill + AMD criterion or N-body survival.
STABLE_BY = ("analytic", "nbody")
#: Largest prior file read (bundled priors are a few hundred bytes).
MAX_PRIOR_FILE_BYTES = 1 << 20


class Mode(str, enum.Enum):
    """How the posterior is obtained."""

    AUTO = "auto"        # MCMC when a joint constraint binds, direct draws otherwise
    DIRECT = "direct"    # direct Monte Carlo draws, never MCMC
    MCMC = "mcmc"        # always MCMC
    FAST = "fast"        # direct draws only, FAST_DRAWS of them (large surveys)

    def __str__(self):
        return self.value

    def __format__(self, spec):
        return format(self.value, spec)


#: Option name -> command-line flag, for messages.
_FLAG = {"n_draws": "--draws", "seed": "--seed", "mode": "--mode", "ecc_prior": "--prior",
         "incl_prior": "--incl-prior", "max_steps": "--max-steps", "nbody": "--nbody",
         "nbody_orbits": "--nbody-orbits", "nbody_budget": "--nbody-budget", "jobs": "--jobs",
         "stable_by": "--require-stable",
         "test_planet_mass": "--probe-mass", "ttv_free_eccentricity": "--ttv-free-ecc",
         "limit": "--limit", "where": "--where", "columns": "--columns", "scheduler": "--scheduler"}


def _name(opt):
    flag = _FLAG.get(opt)
    return f"{flag} ({opt})" if flag else opt


def _int(opt, value, lo, hi, hint=""):
    """An integer in [lo, hi] (hi None: no upper bound) or a one-line InputError."""
    if isinstance(value, bool) or not (isinstance(value, int) or _is_integral(value)):
        raise InputError(f"{_name(opt)} must be an integer; got {value!r:.40}", field=opt)
    v = int(value)
    if v < lo or (hi is not None and v > hi):
        rng = f"at least {lo}" if hi is None else f"between {lo} and {hi}"
        raise InputError(f"{_name(opt)} must be {rng}{hint}; got {v}", field=opt)
    return v


def _is_integral(x):
    try:
        import numpy as np
        return isinstance(x, np.integer)
    except ImportError:  # pragma: no cover
        return False


def check_prior(opt, name, quantity):
    """Resolve a prior name or file; refuse directories, special files, binary or misspelt names.

    Returns the loaded prior.  Every failure is one InputError line naming the option.
    """
    from .inference.prior_files import load_prior
    label = _name(opt)
    if not isinstance(name, (str, os.PathLike)) or not str(name).strip():
        raise InputError(f"{label}: expected a prior name or a .toml file; got {name!r:.40}", field=opt)
    text = str(name)
    if any(not c.isprintable() for c in text):
        raise InputError(f"{label}: the name holds control characters; got {text!r:.60}", field=opt)
    p = pathlib.Path(text)
    try:
        st = p.stat()
    except OSError:
        st = None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise InputError(f"{label} {text}: is a directory, expected a prior name or a .toml file",
                             field=opt)
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"{label} {text}: not a regular file (a device, pipe or socket); "
                             f"give a prior name or a .toml file", field=opt)
        if st.st_size > MAX_PRIOR_FILE_BYTES:
            raise InputError(f"{label} {text}: {st.st_size} bytes; a prior file is at most "
                             f"{MAX_PRIOR_FILE_BYTES} bytes", field=opt)
        try:
            blob = p.read_bytes()
        except OSError as exc:
            raise InputError(f"{label} {text}: cannot read ({exc.strerror})", field=opt) from None
        try:
            blob.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise InputError(f"{label} {text}: not UTF-8 text (byte {exc.start}); not a prior file",
                             field=opt) from None
        if b"\x00" in blob:
            raise InputError(f"{label} {text}: contains NUL bytes; not a prior file", field=opt)
    try:
        prior = load_prior(text)
    except InputError as exc:
        raise InputError(f"{label}: {exc}", field=opt) from None
    except (OSError, ValueError, TypeError) as exc:
        raise InputError(f"{label} {text}: not a usable prior file ({type(exc).__name__}: {exc})",
                         field=opt) from None
    if prior.quantity != quantity:
        raise InputError(f"{label} {text}: is a prior on {prior.quantity}, not {quantity}", field=opt)
    return prior


@dataclass(frozen=True)
class AnalysisOptions:
    """Settings of one analysis (recorded in the provenance block).

    Fields
    ------
    n_draws : posterior draws kept, MIN_DRAWS..MAX_DRAWS; None = DEFAULT_DRAWS
        (FAST_DRAWS in fast mode)
    seed : random seed, 0..MAX_SEED
    mode : :class:`Mode` or its value ("auto", "direct", "mcmc", "fast")
    ecc_prior, incl_prior : a bundled prior name or a prior .toml file (None = default)
    require_stable : Hill/AMD stability of every adjacent pair as a prior
    quiet : no progress bar
    max_steps : cap on MCMC steps per walker (None = the sampler's default), >= 1
    nbody : posterior draws integrated with rebound: "auto" (AUTO_NBODY_DRAWS draws when the system
        falls outside the analytic criteria's domain, none otherwise), 0 (never) or 1..MAX_NBODY
        (always); None = the environment variable ARCHSYS_NBODY, else "auto"
    nbody_orbits : N-body horizon in orbits of the innermost planet, in (0, MAX_NBODY_ORBITS];
        None = DEFAULT_NBODY_ORBITS
    nbody_budget : wall-clock budget of the N-body step [s], > 0
    stable_by : what ``require_stable`` conditions on: "analytic" (Hill + AMD criterion) or "nbody"
        (survival of each draw over the N-body horizon)
    jobs : worker processes (0 = one per core), 0..MAX_JOBS
    test_planet_mass : mass of the test planet put in each gap [Earth masses], > 0
        (None = geometric mean of the gap's neighbours)
    ttv_free_eccentricity : free eccentricity assumed for the approximate TTV amplitudes, in [0, 1)
    """

    n_draws: int | None = None
    seed: int = 0
    mode: Mode = Mode.AUTO
    ecc_prior: str | None = None
    incl_prior: str | None = None
    require_stable: bool = False
    quiet: bool = True
    max_steps: int | None = None
    nbody: int | str | None = None
    nbody_orbits: float | None = None
    nbody_budget: float = DEFAULT_NBODY_BUDGET
    stable_by: str = "analytic"
    jobs: int = 1
    test_planet_mass: float | None = None
    ttv_free_eccentricity: float = 0.0

    def __post_init__(self):
        put = lambda k, v: object.__setattr__(self, k, v)  # noqa: E731 - frozen dataclass
        try:
            mode = Mode(str(self.mode.value if isinstance(self.mode, Mode) else self.mode).lower())
        except ValueError:
            raise InputError(f"{_name('mode')} must be one of {', '.join(m.value for m in Mode)}; "
                             f"got {self.mode!r:.40}", field="mode") from None
        put("mode", mode)
        if self.n_draws is None:
            put("n_draws", FAST_DRAWS if mode is Mode.FAST else DEFAULT_DRAWS)
        put("n_draws", _int("n_draws", self.n_draws, MIN_DRAWS, MAX_DRAWS,
                            " (the cap bounds memory use)"))
        put("seed", _int("seed", self.seed, 0, MAX_SEED))
        if self.max_steps is not None:
            put("max_steps", _int("max_steps", self.max_steps, 1, None))
        nb = self.nbody
        if nb is None:
            nb = os.environ.get(NBODY_ENV, "auto").strip() or "auto"
        if isinstance(nb, str) and nb.strip().lower() == "auto":
            put("nbody", "auto")
        else:
            if isinstance(nb, str):
                try:
                    nb = int(nb)
                except ValueError:
                    raise InputError(f"{_name('nbody')} must be 'auto' or a number of draws between 0 and "
                                     f"{MAX_NBODY}; got {nb!r:.40}", field="nbody") from None
            put("nbody", _int("nbody", nb, 0, MAX_NBODY))
        if self.nbody_orbits is None:
            put("nbody_orbits", DEFAULT_NBODY_ORBITS)
        orbits = self.nbody_orbits
        if isinstance(orbits, bool) or not isinstance(orbits, (int, float)) or not math.isfinite(orbits) \
                or not 0 < orbits <= MAX_NBODY_ORBITS:
            raise InputError(f"{_name('nbody_orbits')} must be a number in (0, {MAX_NBODY_ORBITS:g}] orbits; "
                             f"got {orbits!r:.40}", field="nbody_orbits")
        put("nbody_orbits", float(orbits))
        budget = self.nbody_budget
        if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not math.isfinite(budget) \
                or budget <= 0:
            raise InputError(f"{_name('nbody_budget')} must be a positive number of seconds; got {budget!r:.40}",
                             field="nbody_budget")
        put("nbody_budget", float(budget))
        if self.stable_by not in STABLE_BY:
            raise InputError(f"{_name('stable_by')} must be one of {', '.join(STABLE_BY)}; "
                             f"got {self.stable_by!r:.40}", field="stable_by")
        put("jobs", _int("jobs", self.jobs, 0, MAX_JOBS, " (0 = one per core)"))
        probe = self.test_planet_mass
        if probe is not None:
            if isinstance(probe, bool) or not isinstance(probe, (int, float)) or not math.isfinite(probe) \
                    or probe <= 0:
                raise InputError(f"{_name('test_planet_mass')} must be a positive number of Earth masses; "
                                 f"got {probe!r:.40}", field="test_planet_mass")
            put("test_planet_mass", float(probe))
        z = self.ttv_free_eccentricity
        if isinstance(z, bool) or not isinstance(z, (int, float)) or not math.isfinite(z) or not 0 <= z < 1:
            raise InputError(f"{_name('ttv_free_eccentricity')} must be in [0, 1); got {z!r:.40}",
                             field="ttv_free_eccentricity")
        put("ttv_free_eccentricity", float(z))
        for k in ("require_stable", "quiet"):
            if not isinstance(getattr(self, k), bool):
                raise InputError(f"{k} must be true or false; got {getattr(self, k)!r:.40}", field=k)
        if self.ecc_prior is not None:
            check_prior("ecc_prior", self.ecc_prior, "eccentricity")
            put("ecc_prior", str(self.ecc_prior))
        if self.incl_prior is not None:
            check_prior("incl_prior", self.incl_prior, "mutual_inclination_sigma")
            put("incl_prior", str(self.incl_prior))

    @property
    def analytic_stability_prior(self) -> bool:
        """Whether the Hill + AMD criterion is a prior (``--require-stable`` with ``--stable-by analytic``)."""
        return bool(self.require_stable) and self.stable_by == "analytic"

    @property
    def uses_mcmc(self) -> bool:
        """False when the options exclude MCMC (direct and fast modes)."""
        return self.mode not in (Mode.DIRECT, Mode.FAST)

    def unused(self):
        """Options given but without effect in this mode (['--prior', ...])."""
        if self.uses_mcmc:
            return []
        out = [_FLAG[k] for k in ("ecc_prior", "incl_prior") if getattr(self, k) is not None]
        if self.require_stable:
            out.append("--require-stable")
        if self.max_steps is not None:
            out.append("--max-steps")
        return out

    def replace(self, **changes):
        """A copy with ``changes`` (validated again)."""
        return replace(self, **changes)

    def as_dict(self):
        """JSON-ready mapping of the options that shape the numbers (no quiet, no jobs)."""
        out = {}
        for f in fields(self):
            if f.name in ("quiet", "jobs"):
                continue
            v = getattr(self, f.name)
            out[f.name] = v.value if isinstance(v, Mode) else v
        return out


@dataclass(frozen=True)
class SurveyOptions:
    """What a survey needs besides the analysis options.

    columns : column-map file (None = canonical column names)
    where : selection expressions (all must hold)
    resume : continue the survey stored in the output folder
    scheduler : Dask scheduler address (None = local processes)
    limit : analyse at most this many systems (after ``where``), >= 1
    figures : draw the population figures
    preset : figure preset of the population figures (one-column, two-column, slide)
    """

    columns: str | None = None
    where: tuple = ()
    resume: bool = False
    scheduler: str | None = None
    limit: int | None = None
    figures: bool = True
    preset: str = "one-column"

    def __post_init__(self):
        from .output.style import get_preset
        object.__setattr__(self, "preset", get_preset(self.preset).name)   # refuses an unknown preset
        where = self.where
        if isinstance(where, str):
            where = (where,)
        where = tuple(where or ())
        for w in where:
            if not isinstance(w, str):
                raise InputError(f"{_name('where')}: expected an expression (string); got {w!r:.40}",
                                 field="where")
        object.__setattr__(self, "where", where)
        if self.limit is not None:
            object.__setattr__(self, "limit", _int("limit", self.limit, 1, None))
        if self.scheduler is not None and (not isinstance(self.scheduler, str) or not self.scheduler.strip()):
            raise InputError(f"{_name('scheduler')}: expected an address like tcp://host:8786; "
                             f"got {self.scheduler!r:.40}", field="scheduler")
        if self.columns is not None:
            object.__setattr__(self, "columns", str(self.columns))


#: Keyword names accepted by :func:`split_keywords` (``draws`` is the command-line name of n_draws).
_ANALYSIS_KEYS = {f for f in AnalysisOptions.__dataclass_fields__}
_SURVEY_KEYS = {f for f in SurveyOptions.__dataclass_fields__}


def split_keywords(options=None, survey=None, **kw):
    """(AnalysisOptions, SurveyOptions) from objects and/or keyword overrides.

    ``run_survey(cat, out, mode="fast", limit=5)`` is a shorthand for passing
    both option objects; an unknown keyword is a TypeError.
    """
    if "draws" in kw:
        kw["n_draws"] = kw.pop("draws")
    unknown = sorted(set(kw) - _ANALYSIS_KEYS - _SURVEY_KEYS)
    if unknown:
        raise TypeError(f"unknown option(s): {', '.join(unknown)}")
    a = {k: v for k, v in kw.items() if k in _ANALYSIS_KEYS}
    s = {k: v for k, v in kw.items() if k in _SURVEY_KEYS}
    if options is None:
        a.setdefault("jobs", 0)           # a survey: one worker per core unless told otherwise
        a.setdefault("nbody", 0)          # and no N-body unless asked (--nbody N)
        options = AnalysisOptions(**a)
    elif a:
        options = replace(options, **a)
    survey = replace(survey, **s) if survey is not None else SurveyOptions(**s)
    return options, survey

