"""Checks shared by the tests of user-facing errors and output folders.

README promise checked by :func:`one_line_exit_2`: every user-facing error is one line starting
``archsys: error:``, exit status 2, no traceback.
"""
import os
import pathlib


def one_line_exit_2(rc, err, *tokens):
    """README promise: one line, exit 2, no traceback; ``tokens`` appear in the line."""
    assert rc == 2, err
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("archsys: error: "), err
    for t in tokens:
        assert t in err, (t, err)


def files_in(d):
    """Relative paths of every file under ``d`` (sorted; empty when ``d`` does not exist)."""
    d = pathlib.Path(d)
    return sorted(str(p.relative_to(d)) for p in d.rglob("*") if p.is_file()) if d.exists() else []


def child_pids(pid):
    """Process ids of the children of ``pid`` (Linux /proc; empty where unreadable)."""
    out = set()
    try:
        for tid in os.listdir(f"/proc/{pid}/task"):
            with open(f"/proc/{pid}/task/{tid}/children") as fh:
                out |= {int(x) for x in fh.read().split()}
    except OSError:
        pass
    return out


def alive(pid):
    """True while process ``pid`` exists and is not a zombie (Linux /proc)."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().split()[2] != "Z"
    except OSError:
        return False
