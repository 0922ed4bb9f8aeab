"""Crash-safe survey store (SQLite, WAL) and CSV export.

Each finished system is written in one transaction: its JSON document (zlib-compressed), its
table rows (system, planets, pairs), the posterior samples the population
inference needs, and its reject lines.  A run killed at any moment leaves only
whole systems behind, so ``--resume`` can skip exactly the systems that are
stored.  A manifest row records what the results depend on (catalogue hash,
column map, analysis options, seed); a resume with other inputs is refused.

Final tables are exported from the store sorted by system id, so an
interrupted-then-resumed run writes the same bytes as an uninterrupted one.

Control characters in text cells (NUL, terminal escapes) are written as
``\\xNN`` (:func:`archsys.output.files.printable`).  CSV cells that a spreadsheet would run as a formula (text starting with ``=``,
``+``, ``-``, ``@``, a tab or a carriage return) are prefixed with ``'``;
numbers such as ``-0.5`` are left alone (OWASP "CSV injection", common
practice).
"""
from __future__ import annotations

import csv
import io
import json
import math
import pathlib
import sqlite3
import zlib

import numpy as np

from ..errors import InputError
from ..output.files import atomic_write
from ..output.file_names import printable
from . import store_check

__all__ = ["SurveyStore", "escape_cell", "csv_text", "write_csv", "pack_samples", "unpack_samples",
           "pack_document", "unpack_document"]

STORE_NAME = "survey.sqlite"
STORE_FORMAT = 2         # 2: a checksum per system (store_check.py)

_SCHEMA = """
CREATE TABLE IF NOT EXISTS manifest (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS systems (
    system TEXT PRIMARY KEY, status TEXT NOT NULL, n_planets INTEGER NOT NULL,
    error_kind TEXT, row_json TEXT, document TEXT);
CREATE TABLE IF NOT EXISTS planets (
    system TEXT NOT NULL, idx INTEGER NOT NULL, planet TEXT NOT NULL, row_json TEXT NOT NULL,
    ecc_basis TEXT, ecc_interim TEXT, ecc_samples BLOB, psi_interim TEXT, psi_samples BLOB,
    PRIMARY KEY (system, idx));
CREATE TABLE IF NOT EXISTS pairs (
    system TEXT NOT NULL, idx INTEGER NOT NULL, row_json TEXT NOT NULL, PRIMARY KEY (system, idx));
CREATE TABLE IF NOT EXISTS rejects (
    system TEXT NOT NULL, idx INTEGER NOT NULL, planet TEXT, row TEXT, field TEXT, col TEXT,
    reason TEXT NOT NULL, PRIMARY KEY (system, idx));
""" + store_check.CHECKS_SCHEMA


def pack_samples(x):
    """float64 little-endian bytes of a 1-D sample array (None for None)."""
    if x is None:
        return None
    return np.ascontiguousarray(np.asarray(x, dtype="<f8")).tobytes()


def unpack_samples(b):
    if b is not None and (not isinstance(b, bytes) or len(b) % 8):
        raise InputError("survey store: a posterior-sample blob is damaged; rerun with --resume to repair it")
    return None if b is None else np.frombuffer(b, dtype="<f8")


def pack_document(doc):
    """A report document as stored: JSON compressed with zlib (level 1), about a fifth of the text.

    A three-planet system's document is about 24 kB of JSON, 24 GB for 10^6 systems as text.
    """
    return None if doc is None else zlib.compress(_dumps(doc).encode("utf-8"), 1)


def unpack_document(value):
    """The document of a stored value: compressed bytes, or JSON text from a store of before 0.2.0's batching."""
    if value is None:
        return None
    if isinstance(value, bytes):
        value = zlib.decompress(value).decode("utf-8")
    return json.loads(value)


def _dumps(obj):
    return json.dumps(obj, sort_keys=False, allow_nan=False, default=_json_default)


def _json_default(x):
    if isinstance(x, np.generic):
        return x.item()
    if isinstance(x, np.ndarray):
        return x.tolist()
    raise TypeError(f"not JSON serialisable: {type(x).__name__}")


class SurveyStore:
    """The embedded store of one survey directory (``DIR/survey.sqlite``)."""

    def __init__(self, out_dir):
        self.path = pathlib.Path(out_dir) / STORE_NAME
        self.path.parent.mkdir(parents=True, exist_ok=True)
        store_check.check_file(self.path)              # random bytes, a foreign file: refused, untouched
        self.db = None
        existed = self.path.exists()
        try:
            self.db = sqlite3.connect(str(self.path), isolation_level=None)
            self.missing_tables = store_check.check_schema(self.db, self.path, _SCHEMA)
            self.db.execute("PRAGMA journal_mode=WAL")
            self.db.execute("PRAGMA synchronous=NORMAL")
            self.db.executescript(_SCHEMA)
        except InputError:
            self.close()
            raise
        except sqlite3.DatabaseError as exc:
            self.close()
            if not existed:                            # a store this run began: leave nothing behind
                for suffix in ("", "-wal", "-shm", "-journal"):
                    try:
                        pathlib.Path(f"{self.path}{suffix}").unlink()
                    except OSError:
                        pass
            if "full" in str(exc):
                raise InputError(f"{self.path}: no room for the survey store ({exc}); free some space or "
                                 f"choose another --out") from None
            raise InputError(f"{self.path}: not a usable survey store ({exc}); choose another --out") from None

    # -- manifest -----------------------------------------------------------
    def manifest(self):
        rows = self.db.execute("SELECT key, value FROM manifest").fetchall()
        try:
            return {k: json.loads(v) for k, v in rows} if rows else None
        except (ValueError, TypeError):
            raise InputError(f"{self.path}: the store's manifest is damaged (malformed JSON); it cannot be "
                             f"matched to its inputs; move {self.path.name} away to start afresh") from None

    def set_manifest(self, manifest: dict):
        with self._tx():
            self.db.execute("DELETE FROM manifest")
            self.db.executemany("INSERT INTO manifest VALUES (?, ?)",
                                [(k, _dumps(v)) for k, v in manifest.items()])

    def check_manifest(self, manifest: dict, resume: bool):
        """Start a new store, or accept a matching one on --resume (else InputError)."""
        old = self.manifest()
        n_done = self.db.execute("SELECT COUNT(*) FROM systems").fetchone()[0]
        if n_done == 0:              # nothing stored yet (e.g. a run that failed to start): start afresh
            self.set_manifest(manifest)
            return
        if not resume:
            raise InputError(f"{self.path.parent}: already holds a survey ({n_done} systems stored); "
                             f"pass --resume to continue it, or choose another --out")
        if old is None:
            raise InputError(f"{self.path}: the store's manifest is missing ({n_done} systems stored); it "
                             f"cannot be matched to its inputs; move {self.path.name} away to start afresh")
        diff = [k for k in sorted(set(old) | set(manifest)) if old.get(k) != manifest.get(k)]
        if diff:
            what = "; ".join(f"{k}: stored {_short(old.get(k))}, now {_short(manifest.get(k))}" for k in diff)
            raise InputError(f"{self.path}: cannot resume, the survey inputs differ ({what}); "
                             f"use a new --out or rerun with the original catalogue and options")

    # -- results ------------------------------------------------------------
    def _tx(self):
        return _Transaction(self.db)

    def done(self):
        return {r[0] for r in self.db.execute("SELECT system FROM systems")}

    def count(self):
        return self.db.execute("SELECT COUNT(*) FROM systems").fetchone()[0]

    def put(self, res: dict):
        """Store one system's result (one transaction; replaces an older entry)."""
        self.put_many([res])

    def put_many(self, results):
        """Store several systems' results in one transaction (whole systems only, as :meth:`put`)."""
        with self._tx():
            for res in results:
                self._put(res)

    def _put(self, res):
        sid = res["system"]
        for t in ("systems", "planets", "pairs", "rejects", "checks"):
            self.db.execute(f"DELETE FROM {t} WHERE system = ?", (sid,))
        self.db.execute("INSERT INTO systems VALUES (?, ?, ?, ?, ?, ?)",
                        (sid, res["status"], int(res["n_planets"]), res.get("error_kind"),
                         _dumps(res["system_row"]) if res.get("system_row") is not None else None,
                         pack_document(res.get("document"))))
        for i, p in enumerate(res.get("planets", [])):
            self.db.execute("INSERT INTO planets VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                            (sid, i, p["row"]["planet"], _dumps(p["row"]), p.get("ecc_basis"),
                             p.get("ecc_interim"), pack_samples(p.get("ecc_samples")),
                             p.get("psi_interim"), pack_samples(p.get("psi_samples"))))
        for i, row in enumerate(res.get("pairs", [])):
            self.db.execute("INSERT INTO pairs VALUES (?, ?, ?)", (sid, i, _dumps(row)))
        for i, r in enumerate(res.get("rejects", [])):
            self.db.execute("INSERT INTO rejects VALUES (?, ?, ?, ?, ?, ?, ?)",
                            (sid, i, r.get("planet", ""), str(r.get("row", "")), r.get("field", ""),
                             r.get("column", ""), r["reason"]))
        store_check.seal(self.db, sid)

    def systems(self, ids=None):
        """(system, status, n_planets, error_kind, row) sorted by system id."""
        out = []
        for sid, st, n, kind, row in self.db.execute(
                "SELECT system, status, n_planets, error_kind, row_json FROM systems ORDER BY system"):
            if ids is None or sid in ids:
                out.append((sid, st, n, kind, json.loads(row) if row else None))
        return out

    def document(self, sid):
        r = self.db.execute("SELECT document FROM systems WHERE system = ?", (sid,)).fetchone()
        return unpack_document(r[0]) if r and r[0] else None

    def rows(self, table, ids=None):
        """Row dicts of 'planets' or 'pairs', sorted by (system, idx)."""
        out = []
        for sid, row in self.db.execute(f"SELECT system, row_json FROM {table} ORDER BY system, idx"):
            if ids is None or sid in ids:
                out.append(json.loads(row))
        return out

    def samples(self, ids=None):
        """Per planet: (system, planet, ecc_basis, ecc_interim, ecc, psi_interim, psi)."""
        out = []
        for rec in self.db.execute("SELECT system, planet, ecc_basis, ecc_interim, ecc_samples, "
                                   "psi_interim, psi_samples FROM planets ORDER BY system, idx"):
            if ids is None or rec[0] in ids:
                out.append((rec[0], rec[1], rec[2], rec[3], unpack_samples(rec[4]), rec[5],
                            unpack_samples(rec[6])))
        return out

    def rejects(self, ids=None):
        out = []
        for sid, planet, row, fld, col, reason in self.db.execute(
                "SELECT system, planet, row, field, col, reason FROM rejects ORDER BY system, idx"):
            if ids is None or sid in ids:
                out.append({"system": sid, "planet": planet, "row": row, "field": fld, "column": col,
                            "reason": reason})
        return out

    def close(self):
        if self.db is None:
            return
        try:
            self.db.close()
        except sqlite3.Error:  # pragma: no cover
            pass


class _Transaction:
    def __init__(self, db):
        self.db = db

    def __enter__(self):
        self.db.execute("BEGIN IMMEDIATE")
        return self.db

    def __exit__(self, et, ev, tb):
        self.db.execute("COMMIT" if et is None else "ROLLBACK")
        return False


def _short(v):
    s = json.dumps(v, sort_keys=True)
    return s if len(s) <= 60 else s[:57] + "..."


# --------------------------------------------------------------------------
# CSV export
# --------------------------------------------------------------------------

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _is_number_text(s):
    try:
        float(s)
    except ValueError:
        return False
    return True


def escape_cell(x):
    """Text for one CSV cell, with spreadsheet formulas neutralised by a leading quote."""
    t = type(x)
    if t is float:                                  # most cells: one type test, then the general rules
        return repr(x) if math.isfinite(x) else ""
    if t is str and not x.startswith(_FORMULA_START) and x.isprintable():
        return x
    if x is None:
        return ""
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return repr(x) if math.isfinite(x) else ""
    s = printable(str(x), keep_newlines=True)      # no raw terminal escapes or NUL in a table
    if s.startswith(_FORMULA_START) and not _is_number_text(s):
        return "'" + s
    return s


def csv_text(header, rows):
    """CSV text (RFC 4180 quoting, \\n line ends) of dict rows under ``header``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([escape_cell(h) for h in header])
    for r in rows:
        w.writerow([escape_cell(r.get(h)) for h in header])
    return buf.getvalue()


def write_csv(path, header, rows):
    """Write a CSV file atomically (never a partial file)."""
    return atomic_write(path, csv_text(header, rows))


# --------------------------------------------------------------------------
# Table rows from a report document
# --------------------------------------------------------------------------

_DOC_SKIP = ("schema_version", "system", "star", "planets", "pairs", "sampler", "disclaimer", "provenance")
SUMMARY_KEYS = ("median", "lo", "hi")


def flatten(prefix, value, out, depth=0):
    """Flatten a document value into CSV columns: summaries become _median/_lo/_hi."""
    if value is None or isinstance(value, (bool, int, float, str)):
        out[prefix] = value
    elif isinstance(value, dict):
        if "median" in value:
            for k in SUMMARY_KEYS:
                out[f"{prefix}_{k}"] = value.get(k)
            if "infinite_fraction" in value:       # infinite percentiles are blank: say how many draws are
                out[f"{prefix}_infinite_fraction"] = value["infinite_fraction"]
        elif depth < 2:
            for k, v in value.items():
                flatten(f"{prefix}_{k}", v, out, depth + 1)
    # lists are left to the JSON document
    return out


def system_row(doc, extra=None):
    """One row of systems.csv from a report document (plus survey-side extras)."""
    planets = doc.get("planets", [])
    row = {"system": doc["system"], "n_planets": len(planets), "n_pairs": len(doc.get("pairs", [])),
           "n_transiting": sum(1 for p in planets if p.get("transiting") is True),
           "sampler": (doc.get("sampler") or {}).get("method")}
    for k, v in (doc.get("star") or {}).items():
        flatten(f"star_{k}", v, row)
    for k, v in doc.items():
        if k not in _DOC_SKIP:
            flatten(k, v, row)
    for k, v in (extra or {}).items():
        flatten(k, v, row)
    return row


def planet_row(system, entry):
    row = {"system": system, "planet": entry.get("name")}
    for k, v in entry.items():
        if k != "name":
            flatten(k, v, row)
    return row


def pair_row(system, entry, extra=None):
    row = {"system": system, "inner": entry.get("inner"), "outer": entry.get("outer")}
    for k, v in entry.items():
        if k not in ("inner", "outer"):
            flatten(k, v, row)
    for k, v in (extra or {}).items():
        if k not in entry:
            flatten(k, v, row)
    return row


def header_of(rows, first=()):
    """Column order: ``first`` (those present), then every other key in first-seen order."""
    seen = {}
    for r in rows:
        for k in r:
            seen.setdefault(k, None)
    # a key that is a summary in some rows and null in others keeps only its _median/_lo/_hi columns
    for k in list(seen):
        if f"{k}_median" in seen:
            del seen[k]
    head = [k for k in first if k in seen]
    return head + [k for k in seen if k not in head]
