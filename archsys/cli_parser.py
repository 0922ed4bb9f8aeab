"""The command line's parser: every subcommand, its options and their help (``archsys --help``).

The CLI only maps flags to fields of :class:`archsys.options.AnalysisOptions` / ``SurveyOptions``;
ranges are checked there, so the API refuses what the command line refuses.
"""
from __future__ import annotations

import argparse
import sys

from .options import AUTO_NBODY_DRAWS, DEFAULT_NBODY_BUDGET, DEFAULT_NBODY_ORBITS
from .cli_commands import (EXIT_UNUSABLE, _cmd_cite, _cmd_plot, _cmd_priors, _cmd_report, _cmd_simulate,
                           _cmd_stack, _cmd_survey)

__all__ = ["build_parser"]


class _Parser(argparse.ArgumentParser):
    """argparse with one-line usage errors (``archsys: error: ...``, exit 2)."""

    def error(self, message):
        from .output.file_names import printable
        sys.stderr.write(f"archsys: error: {printable(' '.join(message.split()))} "
                         f"(see `{self.prog} --help`)\n")
        sys.exit(2)


def _add_analysis_options(p):
    from .options import FAST_DRAWS, MAX_DRAWS, Mode
    from .inference.draws import DEFAULT_DRAWS
    g = p.add_argument_group("analysis")
    g.add_argument("--seed", type=int, default=0, help="random seed, >= 0 (same seed, same numbers; default 0)")
    g.add_argument("--draws", type=int, default=None,
                   help=f"posterior draws to keep (default {DEFAULT_DRAWS}; at most {MAX_DRAWS})")
    g.add_argument("--mode", choices=[m.value for m in Mode], default="auto",
                   help="auto: MCMC when a joint constraint binds, direct draws otherwise; "
                        f"direct: never MCMC; mcmc: always; fast: direct draws only, {FAST_DRAWS} of them "
                        "(for large surveys)")
    g.add_argument("--prior", dest="ecc_prior", default=None, metavar="NAME_OR_FILE",
                   help="eccentricity prior (see `archsys priors`)")
    g.add_argument("--incl-prior", default=None, metavar="NAME_OR_FILE",
                   help="prior on the mutual-inclination dispersion sigma")
    g.add_argument("--require-stable", action="store_true",
                   help="keep only stable draws (the criterion is set by --stable-by)")
    g.add_argument("--stable-by", choices=["analytic", "nbody"], default="analytic",
                   help="what --require-stable conditions on: 'analytic' (Hill + AMD criterion as a prior, "
                        "default) or 'nbody' (survival of each integrated draw over the N-body horizon)")
    g.add_argument("--max-steps", type=int, default=None, help="cap on MCMC steps per walker (>= 1)")
    g.add_argument("--nbody", default=None, metavar="N",
                   help="posterior draws integrated with rebound (WHFast + MEGNO): 'auto' (report default: "
                        f"{AUTO_NBODY_DRAWS} draws when the analytic criteria are not enough), 0 = never, N = always")
    g.add_argument("--nbody-budget", type=float, default=DEFAULT_NBODY_BUDGET, metavar="SECONDS",
                   help="integration work per system, in seconds at a nominal speed (default "
                        f"{DEFAULT_NBODY_BUDGET:g}); fewer draws are integrated to fit it, and the report says so")
    g.add_argument("--nbody-orbits", type=float, default=None, metavar="ORBITS",
                   help=f"N-body horizon in orbits of the innermost planet (default {DEFAULT_NBODY_ORBITS:g})")
    g.add_argument("--jobs", type=int, default=0,
                   help="worker processes (report: N-body draws; survey: systems); default 0 = one per core")
    g.add_argument("--quiet", action="store_true", help="no progress bar")


def _add_prediction_options(p):
    """Options of the predictions (report only; the survey uses the defaults)."""
    g = p.add_argument_group("predictions")
    g.add_argument("--probe-mass", type=float, default=None, metavar="MEARTH",
                   help="mass of the test planet put in each gap (Earth masses; default: geometric mean "
                        "of its neighbours)")
    g.add_argument("--ttv-free-ecc", type=float, default=0.0, metavar="E",
                   help="free eccentricity assumed for the approximate TTV amplitudes (default 0: forced only)")


_CORNER_HELP = ("the paper corner figure: parameters to show, e.g. 'e_b,m_b,m_c' or 'e_*' "
                "(keys: e_X, omega_X, i_X, psi_X, m_X per planet X; sigma; Phi_XY); written as NAME_corner_selected")


def build_parser():
    from .output.formats.registry import format_names
    from .version import __version__
    ap = _Parser(prog="archsys", description="Architecture of multi-planet systems "
                 "from catalogue measurements.")
    ap.add_argument("--version", action="version", version=f"archsys {__version__}")
    ap.add_argument("--debug", action="store_true", help="show tracebacks")
    sub = ap.add_subparsers(dest="command", required=True, parser_class=_Parser)

    r = sub.add_parser("report", help="analyse system files and report (no file: the bundled demo systems)")
    r.add_argument("files", nargs="*", help="system files (TOML)")
    r.add_argument("--json", action="store_true", help="print the JSON document")
    r.add_argument("--format", choices=format_names(), default="text",
                   help="report format on standard output (every registered format)")
    r.add_argument("--out", default=None, metavar="DIR", help="write every format (and chains) to DIR")
    r.add_argument("--figures", default=None, metavar="DIR", help="write figures (PDF and PNG) to DIR")
    r.add_argument("--preset", default="one-column", help="figure preset: one-column, two-column, slide")
    r.add_argument("--corner-params", default=None, metavar="KEYS", help=_CORNER_HELP)
    r.add_argument("--no-colour", action="store_true", help="plain text even on a terminal")
    r.add_argument("--strict", action="store_true",
                   help=f"exit with status {EXIT_UNUSABLE} when a posterior is unusable (reports are still written)")
    r.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(r)
    _add_prediction_options(r)
    r.set_defaults(func=_cmd_report)

    p = sub.add_parser("priors", help="list the bundled published priors with citations")
    p.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    p.set_defaults(func=_cmd_priors)

    s = sub.add_parser("survey", help="batch analysis of a planet-per-row catalogue")
    s.add_argument("catalog", help="CSV, ECSV, Parquet or VOTable file, one planet per row")
    s.add_argument("--out", required=True, metavar="DIR")
    s.add_argument("--columns", default=None, metavar="MAP.toml", help="column mapping file")
    s.add_argument("--where", action="append", default=[], metavar="EXPR",
                   help="select systems, e.g. 'n_planets>=3' or 'method==Transit' (repeatable)")
    s.add_argument("--resume", action="store_true", help="skip systems already finished in DIR")
    s.add_argument("--scheduler", default=None, metavar="ADDRESS", help="Dask scheduler address")
    s.add_argument("--limit", type=int, default=None, help="analyse at most N systems (after --where)")
    s.add_argument("--no-figures", action="store_true")
    s.add_argument("--preset", default="one-column", help="figure preset: one-column, two-column, slide")
    t = s.add_argument_group("transit multiplicity (population mutual inclinations; geometric only)")
    t.add_argument("--transit-planets", default=None, metavar="EXPR",
                   help="row expression for the planets counted as transiting (default 'transiting == true'; "
                        "'off' skips the fit)")
    t.add_argument("--transit-period", type=float, nargs=2, default=None, metavar=("MIN", "MAX"),
                   help="detectability cut in period [day] (default: range of the counted planets)")
    t.add_argument("--transit-radius", type=float, nargs=2, default=None, metavar=("MIN", "MAX"),
                   help="detectability cut in planet radius [Earth radii] (default: none)")
    t.add_argument("--transit-second", choices=["single", "isotropic"], default=None,
                   help="second population: one planet per system (default) or mutually isotropic orbits")
    s.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(s)
    s.set_defaults(func=_cmd_survey, jobs=0, nbody="0")   # survey: one worker per core; N-body when asked

    c = sub.add_parser("cite", help="what to cite for a run: the papers behind its numbers, and their BibTeX")
    c.add_argument("inputs", nargs="+", help="system files (.toml, analysed with the options below), report "
                   "documents (.json), saved chains (.npz) or survey folders")
    c.add_argument("--bib", action="store_true", help="print only the BibTeX (the NAME.bib of `report --out`)")
    c.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(c)
    c.set_defaults(func=_cmd_cite)

    m = sub.add_parser("simulate", help="write a catalogue of invented systems drawn from population laws")
    m.add_argument("out", metavar="OUT", help="catalogue to write (.csv or .parquet; canonical survey columns)")
    m.add_argument("--systems", type=int, required=True, metavar="N", help="number of systems")
    m.add_argument("--seed", type=int, default=0)
    m.add_argument("--planets", type=int, default=None, metavar="K",
                   help="exactly K planets per system (default: truncated Poisson, see --mean-planets)")
    m.add_argument("--mean-planets", type=float, default=2.5, metavar="X",
                   help="Poisson mean of the number of planets (before truncation to 1..--max-planets)")
    m.add_argument("--max-planets", type=int, default=8, metavar="K")
    m.add_argument("--ecc-sigma", type=float, default=0.04, metavar="S",
                   help="Rayleigh sigma of eccentricities (default 0.04)")
    m.add_argument("--incl-sigma-deg", type=float, default=2.0, metavar="DEG",
                   help="Rayleigh sigma of planet tilts about each system's plane (default 2 deg)")
    m.add_argument("--ecc-measured", type=float, default=0.2, metavar="F",
                   help="fraction of planets whose eccentricity is listed (default 0.2)")
    m.add_argument("--mass-measured", type=float, default=0.5, metavar="F",
                   help="fraction of planets whose mass is listed (default 0.5)")
    m.add_argument("--only-transiting", action="store_true",
                   help="list only the planets that transit an observer on the z axis")
    m.add_argument("--truth", action="store_true", help="add the true values as true_* columns")
    m.add_argument("--quiet", action="store_true")
    m.set_defaults(func=_cmd_simulate)

    q = sub.add_parser("plot", help="redraw figures from a saved result (no resampling)")
    q.add_argument("result", help="chains file (.npz) written by `archsys report --out`")
    q.add_argument("--figures", required=True, metavar="DIR")
    q.add_argument("--preset", default="one-column")
    q.add_argument("--corner-params", default=None, metavar="KEYS", help=_CORNER_HELP)
    q.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    q.set_defaults(func=_cmd_plot)

    k = sub.add_parser("stack", help="one architecture figure of many systems, stacked in rows")
    k.add_argument("inputs", nargs="+", help="system files (.toml), saved chains (.npz), report documents "
                   "(.json) or survey folders (from `archsys survey --out`)")
    k.add_argument("--figures", required=True, metavar="DIR", help="folder for NAME.pdf and NAME.png")
    k.add_argument("--name", default="architecture_stack", help="file stem (default architecture_stack)")
    k.add_argument("--sort-by", default=None, metavar="KEY",
                   help="row order, '-KEY' descending: name, n_planets, star_mass, a_inner, a_outer, period_inner, "
                        "period_outer, total_mass, min_hill_separation, gap_complexity, hill_stable_probability, "
                        "or a numeric column of a survey's systems.csv (default: input order); "
                        "write --sort-by=-KEY for descending")
    k.add_argument("--descending", action="store_true", help="sort from the largest value down")
    k.add_argument("--where", action="append", default=[], metavar="EXPR",
                   help="select systems of a survey folder (the survey's --where language; repeatable)")
    k.add_argument("--limit", type=int, default=None, help="draw at most N systems (after sorting)")
    k.add_argument("--preset", default="one-column")
    k.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(k)
    k.set_defaults(func=_cmd_stack)
    return ap
