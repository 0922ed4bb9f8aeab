"""Command-line interface: parse arguments, call the library, return an exit code.

Exit status: 0 success, 2 bad input (one clear line per problem on stderr, no
traceback unless --debug), 1 internal error.
"""
from __future__ import annotations

import argparse
import json
import sys
import warnings

from .errors import InputError

__all__ = ["main"]


def _demo_files():
    from importlib import resources
    import pathlib
    try:
        root = resources.files("archsys.data.demo_systems")
        files = sorted(p for p in root.iterdir() if p.name.endswith(".toml"))
        if files:
            return [str(p) for p in files]
    except ModuleNotFoundError:
        pass
    src = pathlib.Path(__file__).resolve().parents[1] / "demo_systems"
    return [str(p) for p in sorted(src.glob("*.toml"))]


def _add_analysis_options(p):
    g = p.add_argument_group("analysis")
    g.add_argument("--seed", type=int, default=0, help="random seed (same seed, same numbers; default 0)")
    g.add_argument("--draws", type=int, default=None, help="posterior draws to keep (default 4000)")
    g.add_argument("--mode", choices=["auto", "direct", "mcmc", "fast"], default="auto",
                   help="auto: MCMC when a joint constraint binds, direct draws otherwise; "
                        "direct: never MCMC; mcmc: always; fast: direct draws only, 1000 of them "
                        "(for large surveys)")
    g.add_argument("--prior", dest="ecc_prior", default=None, metavar="NAME_OR_FILE",
                   help="eccentricity prior (see `archsys priors`)")
    g.add_argument("--incl-prior", default=None, metavar="NAME_OR_FILE",
                   help="prior on the mutual-inclination dispersion sigma")
    g.add_argument("--require-stable", action="store_true",
                   help="add Hill/AMD stability of every adjacent pair as a prior")
    g.add_argument("--max-steps", type=int, default=None, help="cap on MCMC steps per walker")
    g.add_argument("--nbody", type=int, default=0, metavar="N",
                   help="integrate N posterior draws with rebound and MEGNO (extra 'nbody')")
    g.add_argument("--nbody-orbits", type=float, default=1000.0, metavar="ORBITS",
                   help="N-body horizon in orbits of the outermost planet (default 1000)")
    g.add_argument("--jobs", type=int, default=1,
                   help="worker processes (report: N-body checks; survey: systems, default one per core)")
    g.add_argument("--quiet", action="store_true", help="no progress bar")


def _options(args):
    from .pipeline import AnalysisOptions
    from .inference.draws import DEFAULT_DRAWS
    n = args.draws or (1000 if args.mode == "fast" else DEFAULT_DRAWS)
    if n < 10:
        raise InputError(f"--draws must be at least 10; got {n}")
    return AnalysisOptions(n_draws=n, seed=args.seed, mode=args.mode, ecc_prior=args.ecc_prior,
                           incl_prior=args.incl_prior, require_stable=args.require_stable,
                           quiet=args.quiet, max_steps=args.max_steps, nbody=args.nbody, nbody_orbits=args.nbody_orbits, jobs=args.jobs)


def _cmd_report(args):
    from . import read_system
    from .pipeline import analyze
    from .output.text import render_text
    files = args.files or _demo_files()
    systems = [read_system(f) for f in files]   # validate everything before any output
    opts = _options(args)
    results = [analyze(s, opts) for s in systems]
    if args.out or args.figures:
        from .output.formats import write_outputs
        for r in results:
            write_outputs(r, out_dir=args.out, fig_dir=args.figures, preset=getattr(args, "preset", None),
                          corner_params=args.corner_params)
    fmt = "json" if args.json else args.format
    if fmt == "json":
        docs = [r.document for r in results]
        sys.stdout.write(json.dumps(docs[0] if len(docs) == 1 else docs, indent=2, allow_nan=False) + "\n")
    elif fmt == "text":
        colour = sys.stdout.isatty() and not args.no_colour
        sys.stdout.write("\n".join(render_text(r.document, colour=colour) for r in results))
    else:
        from .output.formats import render
        sys.stdout.write("\n".join(render(r, fmt, preset=args.preset) for r in results))
    return 0


def _cmd_priors(args):
    from .inference.priors import list_priors
    rows = []
    for p in list_priors():
        flag = "  [from memory]" if p.from_memory else ""
        params = ", ".join(f"{k}={v:g}" if isinstance(v, (int, float)) else f"{k}={v}" for k, v in p.parameters.items())
        rows.append(f"{p.name:<28} {p.quantity:<26} {p.family}({params})\n{'':<28} {p.citation}{flag}")
    sys.stdout.write("\n".join(rows) + "\n")
    return 0


def _cmd_survey(args):
    from .survey.run import run_survey_cli
    return run_survey_cli(args)


def _cmd_plot(args):
    from .output.figures import plot_saved
    plot_saved(args.result, args.figures, preset=args.preset, corner_params=args.corner_params)
    return 0


def _cmd_stack(args):
    from .stacking import collect_documents, sort_documents, write_stacked_figure
    has_files = any(str(f).lower().endswith(".toml") for f in args.inputs)
    docs = collect_documents(args.inputs, options=_options(args) if has_files else None, where=args.where)
    key = args.sort_by
    if key and args.descending and not key.startswith("-"):
        key = "-" + key
    docs = sort_documents(docs, key)
    for path in write_stacked_figure(docs, args.figures, stem=args.name, preset=args.preset, limit=args.limit):
        sys.stdout.write(f"{path}\n")
    return 0


_CORNER_HELP = ("the paper corner figure: parameters to show, e.g. 'e_b,m_b,m_c' or 'e_*' "
                "(keys: e_X, omega_X, i_X, psi_X, m_X per planet X; sigma; Phi_XY); written as NAME_corner_selected")


def build_parser():
    ap = argparse.ArgumentParser(prog="archsys", description="Architecture of multi-planet systems "
                                 "from catalogue measurements.")
    ap.add_argument("--debug", action="store_true", help="show tracebacks")
    sub = ap.add_subparsers(dest="command", required=True)

    r = sub.add_parser("report", help="analyse system files and report (no file: the bundled demo systems)")
    r.add_argument("files", nargs="*", help="system files (TOML)")
    r.add_argument("--json", action="store_true", help="print the JSON document")
    r.add_argument("--format", choices=["text", "json", "markdown", "html", "latex"], default="text")
    r.add_argument("--out", default=None, metavar="DIR", help="write every format (and chains) to DIR")
    r.add_argument("--figures", default=None, metavar="DIR", help="write figures (PDF and PNG) to DIR")
    r.add_argument("--preset", default="one-column", help="figure preset: one-column, two-column, slide")
    r.add_argument("--corner-params", default=None, metavar="KEYS", help=_CORNER_HELP)
    r.add_argument("--no-colour", action="store_true", help="plain text even on a terminal")
    r.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(r)
    r.set_defaults(func=_cmd_report)

    p = sub.add_parser("priors", help="list the bundled published priors with citations")
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
    s.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    _add_analysis_options(s)
    s.set_defaults(func=_cmd_survey, jobs=0)   # survey: one worker per core by default

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


def _one_line_warnings(message, category, filename, lineno, file=None, line=None):
    sys.stderr.write(f"archsys: warning: {' '.join(str(message).split())}\n")


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    debug = getattr(args, "debug", False)
    try:
        with warnings.catch_warnings():
            if not debug:
                warnings.simplefilter("ignore", RuntimeWarning)
                warnings.showwarning = _one_line_warnings
            return args.func(args)
    except InputError as exc:
        if debug:
            raise
        lines = getattr(exc, "problems", None) or [str(exc)]
        for line in lines:
            sys.stderr.write(f"archsys: error: {line}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write("archsys: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
