"""Progress bars: tqdm on standard error, with update intervals that suit terminals and logs."""
from __future__ import annotations

import sys

__all__ = ["progress_bar", "peak_memory_mib"]


def progress_bar(total, quiet=False, stream=None, skipped=0, desc="survey", unit="system", delay=0.0):
    """A tqdm progress bar on standard error (or ``stream``); disabled when ``quiet``.

    On a terminal it redraws every 0.5 s; written to a file or a pipe it writes a
    line at most every 30 s, so logs stay short.  ``skipped`` (systems resumed)
    is shown as a postfix; callers add theirs with ``bar.set_postfix_str``.
    ``delay``: seconds before the bar first appears (a step that ends or fails
    sooner shows nothing, so a one-line error stays one line).
    """
    from tqdm import tqdm
    stream = stream or sys.stderr
    tty = bool(getattr(stream, "isatty", lambda: False)())
    bar = tqdm(total=total, file=stream, disable=quiet or total == 0, desc=desc, unit=unit,
               mininterval=0.5 if tty else 30.0, maxinterval=60.0, smoothing=0.05, dynamic_ncols=tty,
               ascii=not tty, leave=True, delay=delay)
    if skipped and not bar.disable:
        bar.set_postfix_str(f"{skipped} resumed", refresh=False)
    return bar


def peak_memory_mib():
    """(this process, largest finished child process) peak resident memory [MiB], or None where unknown.

    ``getrusage`` maxima (kilobytes on Linux); children are counted once they have exited.
    """
    try:
        import resource
    except ImportError:  # pragma: no cover - not on POSIX
        return None, None
    scale = 1.0 / 1024.0 if sys.platform != "darwin" else 1.0 / (1024.0 * 1024.0)
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * scale
    kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * scale
    return own, (kids or None)
