"""Progress bars: tqdm on standard error, with update intervals that suit terminals and logs."""
from __future__ import annotations

import sys

__all__ = ["progress_bar"]


def progress_bar(total, quiet=False, stream=None, skipped=0, desc="survey", unit="system"):
    """A tqdm progress bar on standard error (or ``stream``); disabled when ``quiet``.

    On a terminal it redraws every 0.5 s; written to a file or a pipe it writes a
    line at most every 30 s, so logs stay short.  ``skipped`` (systems resumed)
    is shown as a postfix; callers add theirs with ``bar.set_postfix_str``.
    """
    from tqdm import tqdm
    stream = stream or sys.stderr
    tty = bool(getattr(stream, "isatty", lambda: False)())
    bar = tqdm(total=total, file=stream, disable=quiet or total == 0, desc=desc, unit=unit,
               mininterval=0.5 if tty else 30.0, maxinterval=60.0, smoothing=0.05, dynamic_ncols=tty,
               ascii=not tty, leave=True)
    if skipped and not bar.disable:
        bar.set_postfix_str(f"{skipped} resumed", refresh=False)
    return bar
