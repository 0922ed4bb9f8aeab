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

import errno
import signal
import sys
import warnings

from .errors import InputError

from .cli_parser import build_parser

from .cli_commands import _STATE, _silence_stdout

__all__ = ["Terminated", "main"]


def _one_line_warnings(message, category, filename, lineno, file=None, line=None):
    from .output.file_names import printable
    from .limits import clip
    sys.stderr.write(f"archsys: warning: {printable(clip(' '.join(str(message).split()), 300))}\n")


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
    old_term = old_int = None
    try:
        old_term = signal.signal(signal.SIGTERM, _on_sigterm)
        # Ctrl-C as KeyboardInterrupt again: a C library (rebound installs its own SIGINT handler when it
        # integrates) may have replaced Python's, and the interruption must run every cleanup.
        old_int = signal.signal(signal.SIGINT, signal.default_int_handler)
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
        from .output.file_names import printable
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
        from .output.file_names import printable
        sys.stderr.write(f"archsys: error: {printable(line)}\n")
        return 2
    finally:
        if argv is not None and _STATE["logging_off"]:     # called from Python: give logging back
            import logging
            logging.disable(logging.NOTSET)
            _STATE["logging_off"] = False
        for sig, old in ((signal.SIGTERM, old_term), (signal.SIGINT, old_int)):
            if old is not None:
                try:
                    signal.signal(sig, old)
                except (ValueError, OSError, TypeError):
                    pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
