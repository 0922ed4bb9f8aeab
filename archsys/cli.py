"""Command-line interface: a thin layer that parses arguments, builds the typed options
(:mod:`archsys.options`), calls the library and returns an exit code.

Exit status: 0 success, 2 bad input, a bad argument or an output that cannot be
written (one clear line per problem on stderr, no traceback unless --debug),
3 ``report --strict`` with an unusable posterior (README, "Usable posteriors"; the
reports are still written), 1 internal error, 130 interrupted, 143 terminated (SIGTERM).

:func:`main` is the one boundary where every failure of the outside world
becomes one line and exit status 2: ``OSError`` (a full disk, a read-only or
vanished folder, a name too long), ``sqlite3.Error`` (the survey store) and the
errors of a Dask cluster (a scheduler that went away or never answered).
SIGTERM is turned into an interruption, so staging folders are removed and a
survey's store is kept for ``--resume`` just as with Ctrl-C.
"""
from __future__ import annotations

import argparse
import io
import json
import errno
import os
import signal
import sys
import warnings

from .errors import InputError
from .options import AUTO_NBODY_DRAWS, DEFAULT_NBODY_BUDGET, DEFAULT_NBODY_ORBITS

__all__ = ["main", "build_parser"]


class _Parser(argparse.ArgumentParser):
    """argparse with one-line usage errors (``archsys: error: ...``, exit 2)."""

    def error(self, message):
        from .output.files import printable
        sys.stderr.write(f"archsys: error: {printable(' '.join(message.split()))} "
                         f"(see `{self.prog} --help`)\n")
        sys.exit(2)


def _demo_files():
    from .demos import demo_files
    return demo_files()


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


def options_from_args(args):
    """The :class:`~archsys.options.AnalysisOptions` of parsed arguments (validated)."""
    from .options import AnalysisOptions
    return AnalysisOptions(n_draws=args.draws, seed=args.seed, mode=args.mode, ecc_prior=args.ecc_prior,
                           incl_prior=args.incl_prior, require_stable=args.require_stable,
                           stable_by=args.stable_by,
                           quiet=args.quiet, max_steps=args.max_steps, nbody=args.nbody,
                           nbody_orbits=args.nbody_orbits, nbody_budget=args.nbody_budget, jobs=args.jobs,
                           test_planet_mass=getattr(args, "probe_mass", None),
                           ttv_free_eccentricity=getattr(args, "ttv_free_ecc", 0.0))


def _warn_unused(opts):
    unused = opts.unused()
    if unused:
        sys.stderr.write(f"archsys: warning: {', '.join(unused)} ha{'s' if len(unused) == 1 else 've'} no "
                         f"effect with --mode {opts.mode} (direct draws use no prior and no sampler); "
                         f"the provenance records no prior as used\n")


def _note(msg):
    from .output.files import printable
    sys.stderr.write(f"archsys: {printable(msg)}\n")


def _check_out_args(args, *names):
    """Refuse output-folder arguments that can never be written (empty, NUL, over-long names)."""
    from .limits import check_output_path
    for n in names:
        check_output_path(getattr(args, n, None), f"--{n}")


def _cmd_report(args):
    from . import read_system
    from .pipeline import analyze
    files = args.files or _demo_files()
    _check_out_args(args, "out", "figures")
    opts = options_from_args(args)                # refuse bad arguments before reading anything
    from .survey.lock import refuse_survey_folder
    for d in (args.out, args.figures):
        refuse_survey_folder(d, "report")
    if args.out or args.figures:
        from .output.style import get_preset
        get_preset(args.preset)
    systems = [read_system(f) for f in files]   # validate everything before any output
    _warn_unused(opts)
    from .progress import progress_bar
    bar = progress_bar(len(systems), quiet=args.quiet or len(systems) < 2, desc="report")
    results = []
    try:
        for s in systems:
            results.append(analyze(s, opts))
            bar.update(1)
    finally:
        bar.close()
    if args.out or args.figures:
        _write_report_files(results, args)
    fmt = "json" if args.json else args.format
    if fmt == "json":
        docs = [r.document for r in results]
        text = json.dumps(docs[0] if len(docs) == 1 else docs, indent=2, allow_nan=False) + "\n"
    elif fmt == "text":
        from .output.formats.terminal import render_text
        colour = sys.stdout.isatty() and not args.no_colour
        text = "\n".join(render_text(r.document, colour=colour) for r in results)
    else:
        from .output.formats import render
        text = "\n".join(render(r, fmt, preset=args.preset) for r in results)
    _write_stdout(text)
    return _strict_status(results, args)


#: Exit status of ``archsys report --strict`` when a posterior is unusable.
EXIT_UNUSABLE = 3


def _strict_status(results, args):
    """0, or EXIT_UNUSABLE under --strict when any system's posterior is unusable (named on stderr)."""
    bad = [r.document.get("system", "?") for r in results
           if not (r.document.get("posterior_usability") or {}).get("usable", True)]
    for name in bad:
        _note(f"warning: the posterior of '{name}' is unusable (effective sample size below the "
              f"threshold; README, 'Usable posteriors')")
    return EXIT_UNUSABLE if bad and getattr(args, "strict", False) else 0


def _write_report_files(results, args):
    """Every file of every system, staged and moved into place only when all are written."""
    from .output.files import StagedOutput, unique_stems
    from .output.formats import write_outputs
    names = [r.document.get("system", "system") for r in results]
    stems, renamed = unique_stems(names)
    from .survey.lock import ReportLock
    with ReportLock(args.out, args.figures), StagedOutput(args.out, args.figures) as st:
        for r, stem in zip(results, stems):
            write_outputs(r, out_dir=args.out, fig_dir=args.figures, preset=args.preset, stem=stem,
                          corner_params=args.corner_params)
    for name, stem in renamed:
        _note(f"note: system '{name}' is written as '{stem}.*' (its file name would collide with another "
              f"system's)")
    from .output.numbers import short_name
    for r, stem in zip(results, stems):        # planets' corner plots (same rule as output.figures)
        doc = r.document
        letters = [short_name(p.get("name", "?"), doc.get("system", "")) for p in doc.get("planets", [])]
        for name, pstem in unique_stems(letters, fallback="planet", reserved=("system",))[1]:
            _note(f"note: planet '{name}' of '{doc.get('system')}': its corner plot is '{stem}_corner_{pstem}' "
                  f"(the file name would collide with another's)")
    where = [d for d in (args.out, args.figures) if d]
    _note(f"wrote {len(st.written)} files to {' and '.join(where)}")


def _write_stdout(text):
    """Write the report to standard output; a write error is an InputError-style exit (2)."""
    if sys.stdout is None:
        raise InputError("standard output is closed; nothing was printed (redirect it to a file)")
    try:
        sys.stdout.write(text)
        sys.stdout.flush()
    except BrokenPipeError:
        raise
    except OSError as exc:
        _silence_stdout()
        raise InputError(f"cannot write to standard output: {exc.strerror or exc}") from None


def _silence_stdout():
    """Point stdout at /dev/null so that the interpreter's final flush cannot fail again."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError, io.UnsupportedOperation):
        pass


def _cmd_priors(args):
    from .inference.priors import list_priors
    rows = []
    for p in list_priors():
        flag = "  [from memory]" if p.from_memory else ""
        params = ", ".join(f"{k}={v:g}" if isinstance(v, (int, float)) else f"{k}={v}" for k, v in p.parameters.items())
        rows.append(f"{p.name:<28} {p.quantity:<26} {p.family}({params})\n{'':<28} {p.citation}{flag}")
    _write_stdout("\n".join(rows) + "\n")
    return 0


def _cmd_survey(args):
    from .options import SurveyOptions
    from .survey.run import run_survey
    _check_out_args(args, "out")
    opts = options_from_args(args)
    sopts = SurveyOptions(columns=args.columns, where=tuple(args.where or ()), resume=args.resume,
                          scheduler=args.scheduler, limit=args.limit, figures=not args.no_figures,
                          preset=args.preset)
    _warn_unused(opts)
    if args.scheduler and not getattr(args, "debug", False):
        import logging                      # Dask logs tracebacks of a lost scheduler: the one line is ours
        logging.disable(logging.CRITICAL)   # (back on when main() returns to a Python caller, see main)
        _STATE["logging_off"] = True
    from .survey.multiplicity_block import MultiplicitySettings, summary_lines
    transit = MultiplicitySettings.from_cli(args.transit_planets, args.transit_period, args.transit_radius,
                                            args.transit_second)
    pop = run_survey(args.catalog, args.out, opts, sopts, debug=getattr(args, "debug", False), transit=transit)
    c = pop["counts"]
    if not args.quiet:
        _note(f"survey: {c['systems_selected']} systems: {c['systems_analysed']} analysed, "
              f"{c['systems_rejected']} rejected (see {os.path.join(args.out, 'rejects.csv')})")
        for line in summary_lines(pop):
            _note(f"survey: {line}")
    for line in pop.get("_notes", []):
        _note(line)
    if c.get("systems_unusable_posterior"):
        _note(f"survey: warning: {c['systems_unusable_posterior']} analysed systems have an unusable posterior "
              f"(column posterior_usability_usable in systems.csv; README, 'Usable posteriors')")
    ecc_warn = (pop.get("eccentricity_population") or {}).get("ess_warning")
    if ecc_warn and not args.quiet:
        _note(f"survey: warning: population eccentricities: {ecc_warn}")
    if c["rejected_analysis_error"]:
        _note(f"survey: warning: {c['rejected_analysis_error']} systems failed inside the analysis "
              f"(reason 'analysis failed: ...' in rejects.csv); please report them")
    _note(f"wrote the survey tables and population.json to {args.out}")
    return 0


def _cite_document(path, args):
    """The report document (or population.json) behind one ``archsys cite`` input."""
    import pathlib
    from .model.inputfile import read_input_bytes
    p = pathlib.Path(path)
    if p.is_dir():
        p = p / "population.json"
        if not p.exists():
            raise InputError(f"{path}: not a survey folder (no population.json)")
    low = p.name.lower()
    if low.endswith(".toml"):
        from . import read_system
        from .pipeline import analyze
        opts = options_from_args(args)
        return analyze(read_system(str(p)), opts).document
    if low.endswith(".npz"):
        from .output.chains import load_posterior
        _, meta = load_posterior(str(p))
        doc = meta.get("document") if isinstance(meta, dict) else None
        if not isinstance(doc, dict):
            raise InputError(f"{path}: the chains file holds no report document")
        return doc
    if low.endswith(".json"):
        data = read_input_bytes(str(p), "report document (.json)")
        try:
            doc = json.loads(data.decode("utf-8"))
        except (UnicodeDecodeError, ValueError) as exc:
            raise InputError(f"{path}: not a JSON document ({exc})") from None
        if isinstance(doc, list) and doc and all(isinstance(d, dict) for d in doc):
            return doc
        if not isinstance(doc, dict):
            raise InputError(f"{path}: expected a report document (a JSON object)")
        return doc
    raise InputError(f"{path}: expected a system file (.toml), a report document (.json), saved chains "
                     "(.npz) or a survey folder")


def _cmd_cite(args):
    from .output.references import render_bib, render_citations
    docs = []
    for path in args.inputs:
        d = _cite_document(path, args)
        docs += d if isinstance(d, list) else [d]
    out = [render_bib(d) if args.bib else render_citations(d) for d in docs]
    _write_stdout("\n".join(out))
    return 0


def _cmd_simulate(args):
    from .survey.synthetic import PopulationLaws, write_population
    laws = PopulationLaws(planets=args.planets, mean_planets=args.mean_planets, max_planets=args.max_planets,
                          ecc_sigma=args.ecc_sigma, incl_sigma_deg=args.incl_sigma_deg,
                          ecc_measured=args.ecc_measured, mass_measured=args.mass_measured,
                          only_transiting=args.only_transiting)
    res = write_population(args.out, args.systems, laws, seed=args.seed, truth=args.truth)
    if not args.quiet:
        _note(f"simulate: wrote {res['rows']} planets of {res['systems']} invented systems "
              f"({res['planets_transiting']} transiting) to {res['path']}")
    return 0


def _cmd_plot(args):
    from .model.inputfile import check_regular_file
    from .output.figures import plot_saved
    from .output.files import StagedOutput
    from .output.style import get_preset
    _check_out_args(args, "figures")
    get_preset(args.preset)
    check_regular_file(args.result, "chains file (.npz)", max_bytes=4 << 30)
    with StagedOutput(args.figures) as st:
        plot_saved(args.result, args.figures, preset=args.preset, corner_params=args.corner_params)
    _note(f"wrote {len(st.written)} files to {args.figures}")
    return 0


def _cmd_stack(args):
    from .output.files import StagedOutput
    from .output.figures.stack import collect_documents, sort_documents, write_stacked_figure
    _check_out_args(args, "figures")
    if args.limit is not None and args.limit < 1:
        raise InputError(f"--limit: must be at least 1; got {args.limit}", field="limit")
    has_files = any(str(f).lower().endswith(".toml") for f in args.inputs)
    docs = collect_documents(args.inputs, options=options_from_args(args) if has_files else None, where=args.where)
    key = args.sort_by
    if key and args.descending and not key.startswith("-"):
        key = "-" + key
    docs = sort_documents(docs, key)
    with StagedOutput(args.figures):               # every page or none
        paths = write_stacked_figure(docs, args.figures, stem=args.name, preset=args.preset, limit=args.limit)
    _write_stdout("".join(f"{path}\n" for path in paths))
    return 0


_CORNER_HELP = ("the paper corner figure: parameters to show, e.g. 'e_b,m_b,m_c' or 'e_*' "
                "(keys: e_X, omega_X, i_X, psi_X, m_X per planet X; sigma; Phi_XY); written as NAME_corner_selected")


def build_parser():
    from . import __version__
    ap = _Parser(prog="archsys", description="Architecture of multi-planet systems "
                 "from catalogue measurements.")
    ap.add_argument("--version", action="version", version=f"archsys {__version__}")
    ap.add_argument("--debug", action="store_true", help="show tracebacks")
    sub = ap.add_subparsers(dest="command", required=True, parser_class=_Parser)

    r = sub.add_parser("report", help="analyse system files and report (no file: the bundled demo systems)")
    r.add_argument("files", nargs="*", help="system files (TOML)")
    r.add_argument("--json", action="store_true", help="print the JSON document")
    r.add_argument("--format", choices=["text", "json", "markdown", "html", "latex"], default="text")
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


def _one_line_warnings(message, category, filename, lineno, file=None, line=None):
    from .output.files import printable
    from .limits import clip
    sys.stderr.write(f"archsys: warning: {printable(clip(' '.join(str(message).split()), 300))}\n")


_STATE = {"logging_off": False}


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised in the main thread so that every cleanup of an interruption runs."""


def _on_sigterm(signum, frame):
    raise Terminated()


class _WriteRecorder:
    """Standard output for argparse: it swallows write errors of --help/--version, this remembers them."""

    def __init__(self, real):
        self.real = real
        self.error = None

    def write(self, text):
        try:
            n = self.real.write(text)
            self.real.flush()
            return n
        except OSError as exc:
            self.error = exc
            raise

    def __getattr__(self, name):
        return getattr(self.real, name)


def _parse(parser, argv):
    """Parsed arguments; ``--help``/``--version`` output that cannot be written is one line, exit 2."""
    real = sys.stdout
    rec = _WriteRecorder(real) if real is not None else None
    if rec is not None:
        sys.stdout = rec
    try:
        return parser.parse_args(argv)
    except SystemExit as exc:
        if exc.code in (0, None):
            try:
                if real is None:
                    raise OSError(errno.EBADF, "standard output is closed")
                if rec.error is not None:
                    raise rec.error
                real.flush()
            except OSError as err:
                _silence_stdout()
                sys.stderr.write(f"archsys: error: cannot write to standard output: {err.strerror or err}\n")
                raise SystemExit(2) from None
        raise
    finally:
        if sys.stdout is rec and rec is not None:
            sys.stdout = real


def _outside_error(exc):
    """One line for a failure of the outside world (file system, store, cluster), or None."""
    import sqlite3
    if isinstance(exc, sqlite3.Error):
        what = " ".join(str(exc).split()) or type(exc).__name__
        hint = ("; free some space, then rerun with --resume (the stored systems are kept)"
                if "full" in what else "; the stored systems are kept for --resume where the store is whole")
        return f"survey store: {what}{hint}"
    mod = type(exc).__module__ or ""
    if mod.startswith(("distributed", "tornado")) or type(exc).__name__ in ("CancelledError", "FutureCancelledError"):
        what = " ".join(str(exc).split())[:160] or type(exc).__name__
        return (f"the Dask cluster failed ({type(exc).__name__}: {what}); the systems stored so far are kept: "
                f"rerun with --resume")
    if isinstance(exc, OSError):
        name = exc.filename
        what = exc.strerror or " ".join(str(exc).split()) or type(exc).__name__
        if isinstance(exc, TimeoutError) and not exc.strerror:
            what = f"timed out ({what})"
        return f"{what}: {name}" if name else what
    return None


def main(argv=None):
    parser = build_parser()
    args = _parse(parser, argv)
    debug = getattr(args, "debug", False)
    old_term = None
    try:
        old_term = signal.signal(signal.SIGTERM, _on_sigterm)
    except (ValueError, OSError, AttributeError):      # not the main thread, or no SIGTERM
        pass
    try:
        with warnings.catch_warnings():
            if not debug:
                warnings.simplefilter("ignore", RuntimeWarning)
                warnings.showwarning = _one_line_warnings
            return args.func(args)
    except Terminated:
        sys.stderr.write("archsys: terminated\n")
        return 143
    except InputError as exc:
        if debug:
            raise
        from .output.files import printable
        lines = getattr(exc, "problems", None) or [str(exc)]
        for line in lines:
            sys.stderr.write(f"archsys: error: {printable(line)}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write("archsys: interrupted\n")
        return 130
    except BrokenPipeError:
        _silence_stdout()
        return 0
    except MemoryError:
        if debug:
            raise
        sys.stderr.write("archsys: error: out of memory; use fewer --draws or fewer systems at once\n")
        return 2
    except RecursionError:
        if debug:
            raise
        sys.stderr.write("archsys: error: an input is nested too deeply to process\n")
        return 2
    except Exception as exc:
        line = None if debug else _outside_error(exc)
        if line is None:
            raise
        from .output.files import printable
        sys.stderr.write(f"archsys: error: {printable(line)}\n")
        return 2
    finally:
        if argv is not None and _STATE["logging_off"]:     # called from Python: give logging back
            import logging
            logging.disable(logging.NOTSET)
            _STATE["logging_off"] = False
        if old_term is not None:
            try:
                signal.signal(signal.SIGTERM, old_term)
            except (ValueError, OSError):
                pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
