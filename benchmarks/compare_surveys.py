"""Compare two survey output folders number by number (a check for performance work, not a benchmark).

``python -m benchmarks.compare_surveys BEFORE AFTER [--rtol 1e-10]`` reads both folders' ``survey.sqlite``
(every system's document, planet and pair rows, stored posterior samples) and ``population.json``, and
prints the largest relative difference of every number, the count of numbers compared and every
difference that is not a number (a changed text, a missing key).  Exit status 1 when some number
differs by more than ``rtol`` relative (``|a - b| <= rtol * max(|a|, |b|) + atol``) or anything else
differs.  A performance change should leave every number equal to floating-point rounding.
"""
from __future__ import annotations

import argparse
import json
import math
import pathlib
import sqlite3
import sys
import zlib

import numpy as np

__all__ = ["compare_values", "compare_folders", "main"]


class _Tally:
    def __init__(self, rtol, atol):
        self.rtol, self.atol = rtol, atol
        self.n = 0
        self.worst = 0.0
        self.worst_at = ""
        self.problems = []

    def number(self, a, b, where):
        self.n += 1
        if a == b or (math.isnan(a) and math.isnan(b)):
            return
        if math.isinf(a) or math.isinf(b) or math.isnan(a) or math.isnan(b):
            self.problems.append(f"{where}: {a!r} != {b!r}")
            return
        scale = max(abs(a), abs(b))
        rel = abs(a - b) / scale if scale > 0 else 0.0
        if rel > self.worst:
            self.worst, self.worst_at = rel, f"{where}: {a!r} vs {b!r}"
        if abs(a - b) > self.rtol * scale + self.atol:
            self.problems.append(f"{where}: {a!r} vs {b!r} (relative {rel:.3g})")


def compare_values(a, b, where, tally):
    """Walk two JSON-like values together; numbers compared with the tally's tolerance."""
    num = (int, float)
    if isinstance(a, bool) or isinstance(b, bool):
        if a != b:
            tally.problems.append(f"{where}: {a!r} != {b!r}")
    elif isinstance(a, num) and isinstance(b, num):
        tally.number(float(a), float(b), where)
    elif isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b), key=str):
            if k not in a or k not in b:
                tally.problems.append(f"{where}.{k}: only in {'after' if k not in a else 'before'}")
            else:
                compare_values(a[k], b[k], f"{where}.{k}", tally)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            tally.problems.append(f"{where}: lengths {len(a)} != {len(b)}")
        for i, (x, y) in enumerate(zip(a, b)):
            compare_values(x, y, f"{where}[{i}]", tally)
    elif a != b:
        tally.problems.append(f"{where}: {str(a)[:80]!r} != {str(b)[:80]!r}")


def _document(blob):
    if blob is None:
        return None
    if isinstance(blob, bytes):
        blob = zlib.decompress(blob).decode()
    return json.loads(blob)


def _rows(db, sql):
    return {tuple(r[:-1]): r[-1] for r in db.execute(sql)}


def compare_folders(before, after, rtol=1e-10, atol=1e-300):
    tally = _Tally(rtol, atol)
    dbs = [sqlite3.connect(f"file:{pathlib.Path(p) / 'survey.sqlite'}?mode=ro", uri=True) for p in (before, after)]
    for sql, kind in (("SELECT system, status, document FROM systems", "document"),
                      ("SELECT system, idx, row_json FROM planets", "json"),
                      ("SELECT system, idx, row_json FROM pairs", "json"),
                      ("SELECT system, idx, ecc_samples FROM planets", "blob"),
                      ("SELECT system, idx, psi_samples FROM planets", "blob")):
        ra, rb = (_rows(db, sql) for db in dbs)
        if set(ra) != set(rb):
            tally.problems.append(f"{sql}: keys differ {sorted(set(ra) ^ set(rb))[:5]}")
        for key in sorted(set(ra) & set(rb), key=str):
            where = f"{sql.split()[3]}{list(key)}"
            x, y = ra[key], rb[key]
            if kind == "document":
                compare_values(_document(x), _document(y), where, tally)
            elif kind == "json":
                compare_values(json.loads(x), json.loads(y), where, tally)
            elif (x is None) != (y is None):
                tally.problems.append(f"{where}: samples in one folder only")
            elif x is not None:
                compare_values(np.frombuffer(x, "<f8").tolist(), np.frombuffer(y, "<f8").tolist(), where, tally)
    pa, pb = (pathlib.Path(p) / "population.json" for p in (before, after))
    if pa.exists() and pb.exists():
        compare_values(json.loads(pa.read_text()), json.loads(pb.read_text()), "population", tally)
    return tally


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m benchmarks.compare_surveys", description=__doc__.split("\n")[0])
    ap.add_argument("before")
    ap.add_argument("after")
    ap.add_argument("--rtol", type=float, default=1e-10)
    ap.add_argument("--atol", type=float, default=1e-300)
    args = ap.parse_args(argv)
    t = compare_folders(args.before, args.after, args.rtol, args.atol)
    print(f"numbers compared: {t.n}; largest relative difference: {t.worst:.3g}"
          + (f" ({t.worst_at})" if t.worst_at else ""))
    for p in t.problems[:40]:
        print("  " + p)
    if len(t.problems) > 40:
        print(f"  ... {len(t.problems) - 40} more")
    return 1 if t.problems else 0


if __name__ == "__main__":
    sys.exit(main())
