"""What each subcommand does (``report``, ``priors``, ``survey``, ``cite``, ``simulate``, ``plot``,
``stack``): options from the parsed flags, the library call, its files and one-line notes on standard error.
"""
from __future__ import annotations

import io
import json
import os
import sys

from .errors import InputError

__all__ = ["options_from_args", "EXIT_UNUSABLE"]


def _demo_files():
    from .demos import demo_files
    return demo_files()


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
    from .output.file_names import printable
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
    from .output.files import StagedOutput
    from .output.file_names import unique_stems
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
    from .inference.prior_files import list_priors
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


_STATE = {"logging_off": False}
