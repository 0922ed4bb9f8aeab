"""Talking to a Dask cluster with deadlines: connection set-up and every wait for a result.

A Dask client waits without end when the address answers TCP but is not a
Dask scheduler (a web server on that port) and, after the scheduler dies,
keeps trying to reconnect.  Here:

* :func:`connect` builds the client in a helper thread and gives up after
  ``distributed.comm.timeouts.connect`` (at most 10 s; ``ARCHSYS_DASK_CONNECT_S``
  overrides both) + 1 s: one line, "no Dask scheduler answered";
* :func:`results` yields finished results and raises one line when no task
  has finished for ``ARCHSYS_DASK_IDLE_S`` seconds (default 3600, longer than
  any single system of a survey) or the scheduler connection is gone (the
  client's status is no longer "running"); the systems stored so far are
  kept for ``--resume``.
"""
from __future__ import annotations

import os
import threading
import time

from ..errors import InputError

__all__ = ["connect", "results", "connect_timeout", "idle_timeout"]


def _seconds(value, default):
    try:
        import dask.utils
        return float(dask.utils.parse_timedelta(value, default="seconds"))
    except (ImportError, ValueError, TypeError):
        return float(default)


def connect_timeout():
    """Seconds to wait for a scheduler to answer."""
    env = os.environ.get("ARCHSYS_DASK_CONNECT_S")
    if env:
        return _seconds(env, 30)
    import dask
    return min(_seconds(dask.config.get("distributed.comm.timeouts.connect", "30s"), 30), 10.0)


def idle_timeout():
    return _seconds(os.environ.get("ARCHSYS_DASK_IDLE_S", "3600"), 3600)


def connect(address):
    """A connected ``distributed.Client``, or one InputError line within the deadline."""
    from distributed import Client
    t = connect_timeout()
    box = {}

    def work():
        try:
            box["client"] = Client(address, timeout=f"{t}s")
        except BaseException as exc:            # reported in the caller's thread
            box["error"] = exc

    th = threading.Thread(target=work, daemon=True, name="archsys-dask-connect")
    th.start()
    th.join(t + 1.0)
    if th.is_alive():
        raise InputError(f"--scheduler {address}: no Dask scheduler answered within {t + 1:g} s "
                         f"(is something else listening on that port?)")
    if "error" in box:
        exc = box["error"]
        if isinstance(exc, (OSError, TimeoutError, ValueError)) or type(exc).__module__.startswith("distributed"):
            raise InputError(f"--scheduler {address}: cannot connect to the Dask scheduler "
                             f"({' '.join(str(exc).split())[:160] or type(exc).__name__})") from None
        raise exc
    return box["client"]


def _lost(client):
    return getattr(client, "status", "running") not in ("running", "connecting")


def results(client, futures):
    """Results of ``futures`` as they finish; one InputError line when the cluster stops answering."""
    from distributed import as_completed
    from distributed.utils import TimeoutError as DaskTimeout
    idle = idle_timeout()
    ac = as_completed(futures)
    left = len(futures)
    while left:
        waited = 0.0
        batch = None
        while batch is None:
            try:
                batch = ac.next_batch(block=False)
            except StopIteration:
                return
            if batch:
                break
            batch = None
            if _lost(client):
                raise InputError("the Dask scheduler went away during the survey; the systems stored so "
                                 "far are kept: rerun with --resume")
            if waited >= idle:
                raise InputError(f"no system finished on the Dask cluster for {idle:g} s; the systems stored "
                                 f"so far are kept: rerun with --resume")
            time.sleep(0.2)
            waited += 0.2
        for fut in batch:
            try:
                res = fut.result(timeout=idle)
            except (DaskTimeout, TimeoutError):
                raise InputError(f"the Dask cluster gave no result for {idle:g} s; the systems stored so far "
                                 f"are kept: rerun with --resume") from None
            except (KeyboardInterrupt, SystemExit, GeneratorExit):
                raise
            except BaseException as exc:
                if type(exc).__module__.startswith(("distributed", "tornado", "asyncio", "concurrent")) \
                        or isinstance(exc, OSError) or "Cancelled" in type(exc).__name__:
                    raise InputError(f"the Dask cluster failed ({type(exc).__name__}); the systems stored so "
                                     f"far are kept: rerun with --resume") from None
                raise
            left -= 1
            yield fut, res
