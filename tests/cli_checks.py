"""Checks shared by the tests of user-facing errors and output folders.

README promise checked by :func:`one_line_exit_2`: every user-facing error is one line starting
``archsys: error:``, exit status 2, no traceback.
"""
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
