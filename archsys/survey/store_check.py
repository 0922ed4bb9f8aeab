"""The survey store checks itself: file, schema, manifest and a checksum per system.

* Before the store is opened, its first bytes must be SQLite's header; its
  tables must be the store's own, with the store's columns (a foreign SQLite
  file or random bytes are refused with one line naming the file, what is
  wrong and what to do: move it away or choose another ``--out``; the file is
  never changed).
* Each system is sealed when it is stored: :func:`seal` writes the SHA-256 of
  its stored rows (system, planets with their sample blobs, pairs, rejects)
  in the same transaction, into the table ``checks``.
* On ``--resume`` :func:`check_and_repair` runs SQLite's ``quick_check`` and
  then verifies every system: a known status, JSON rows that parse, sample
  blobs of whole float64 numbers, and the checksum.  A system that fails
  (rows deleted or changed, a table dropped, an unknown status, a malformed
  JSON row, a short or non-finite sample blob) is removed from the store and
  analysed again, so ``--resume`` repairs what it can re-analyse and the
  outputs equal an uninterrupted run's; one note line says how many systems
  and why.  A store damaged beyond that (not a database, pages SQLite cannot
  read, no manifest) is refused.
* :func:`reconcile` is the last check before the tables are written: every
  analysed system has as many planet and pair rows as its counts say, so a
  partial table is never written with exit status 0.
"""
from __future__ import annotations

import hashlib
import json
import sqlite3

import numpy as np

from ..errors import InputError

__all__ = ["SQLITE_HEADER", "KNOWN_STATUS", "check_file", "check_schema", "seal", "check_and_repair",
           "reconcile", "CHECKS_SCHEMA"]

SQLITE_HEADER = b"SQLite format 3\x00"
KNOWN_STATUS = ("ok", "rejected")
CHECKS_SCHEMA = "CREATE TABLE IF NOT EXISTS checks (system TEXT PRIMARY KEY, digest TEXT NOT NULL);"
_TABLES = ("systems", "planets", "pairs", "rejects")


def _recover(path):
    return (f"move {path.name} (and any {path.name}-wal) out of {path.parent} to start afresh, "
            f"or choose another --out")


def check_file(path):
    """Refuse a store file that is not an SQLite database (before SQLite opens it)."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(len(SQLITE_HEADER))
    except FileNotFoundError:
        return
    if head and head != SQLITE_HEADER:
        raise InputError(f"{path}: not an archsys survey store (not an SQLite database); {_recover(path)}")


def expected_schema(schema_sql):
    """table -> column names of the store's schema."""
    db = sqlite3.connect(":memory:")
    try:
        db.executescript(schema_sql)
        return {t: [r[1] for r in db.execute(f"PRAGMA table_info({t})")] for t, in
                db.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    finally:
        db.close()


def check_schema(db, path, schema_sql):
    """Refuse a database whose tables are not the store's (foreign SQLite file); returns missing tables."""
    want = expected_schema(schema_sql)
    have = {t: [r[1] for r in db.execute(f"PRAGMA table_info(\"{t}\")")] for t, in
            db.execute("SELECT name FROM sqlite_master WHERE type = 'table'") if not t.startswith("sqlite_")}
    if not have:
        return []
    foreign = sorted(t for t in have if t not in want)
    if foreign or "manifest" not in have and "systems" not in have:
        what = f"unknown table '{foreign[0]}'" if foreign else "none of the store's tables"
        raise InputError(f"{path}: not an archsys survey store ({what}); {_recover(path)}")
    for t, cols in have.items():
        if cols != want[t]:
            raise InputError(f"{path}: table '{t}' has columns {', '.join(cols)[:80]}, not the store's; "
                             f"not an archsys survey store; {_recover(path)}")
    return sorted(t for t in want if t not in have)


# --------------------------------------------------------------------------
# Checksums
# --------------------------------------------------------------------------

def _rows(db, sid):
    out = [db.execute("SELECT * FROM systems WHERE system = ?", (sid,)).fetchall()]
    for t in ("planets", "pairs", "rejects"):
        out.append(db.execute(f"SELECT * FROM {t} WHERE system = ? ORDER BY idx", (sid,)).fetchall())
    return out


def _digest(rows):
    return hashlib.sha256(repr(rows).encode("utf-8", "surrogatepass")).hexdigest()


def seal(db, sid):
    """Record the checksum of system ``sid``'s stored rows (call inside the storing transaction)."""
    db.execute("INSERT OR REPLACE INTO checks VALUES (?, ?)", (sid, _digest(_rows(db, sid))))


def _all_rows(db):
    """(sid, [systems rows, planets rows, pairs rows, rejects rows]) for every stored system, as
    :func:`_rows` gives them, one system at a time (ordered scans merged by system id: the memory
    holds one system, whatever the size of the store)."""
    import itertools
    streams = []
    for t in ("planets", "pairs", "rejects"):
        cur = db.cursor().execute(f"SELECT * FROM {t} ORDER BY system, idx")
        streams.append(itertools.groupby(cur, key=lambda r: r[0]))
    heads = [next(g, None) for g in streams]
    for rec in db.cursor().execute("SELECT * FROM systems ORDER BY system"):
        sid = rec[0]
        out = [[rec], [], [], []]
        for k, g in enumerate(streams):
            while heads[k] is not None and heads[k][0] < sid:       # rows of no stored system: skipped
                heads[k] = next(g, None)
            if heads[k] is not None and heads[k][0] == sid:
                out[k + 1] = list(heads[k][1])
                heads[k] = next(g, None)
        yield sid, out


def _json_ok(text, want=dict):
    if text is None:
        return want is None
    try:
        return isinstance(json.loads(text), want or object)
    except (ValueError, TypeError, RecursionError):
        return False


def _document_ok(value):
    """A stored document: zlib-compressed JSON (bytes) or JSON text (older stores) of a mapping."""
    if isinstance(value, bytes):
        import zlib
        try:
            value = zlib.decompress(value).decode("utf-8")
        except (zlib.error, UnicodeDecodeError):
            return False
    return _json_ok(value)


def _problem(rows):
    """What is structurally wrong with one system's rows, or None."""
    (srow,), planets, pairs = rows[0][:1], rows[1], rows[2]
    sid, status, n, kind, row_json, document = srow
    if status not in KNOWN_STATUS:
        return f"unknown status {str(status)[:20]!r}"
    if status == "ok":
        if not _json_ok(row_json) or not _document_ok(document):
            return "a malformed JSON row in table 'systems'"
        if len(planets) != n:
            return f"{len(planets)} planet rows for {n} planets"
        try:
            n_pairs = json.loads(row_json).get("n_pairs")
        except ValueError:
            n_pairs = None
        if isinstance(n_pairs, int) and len(pairs) != n_pairs:
            return f"{len(pairs)} pair rows for {n_pairs} pairs"
    for p in planets:
        if not _json_ok(p[3]):
            return "a malformed JSON row in table 'planets'"
        for blob in (p[6], p[8]):
            if blob is None:
                continue
            if not isinstance(blob, bytes) or len(blob) % 8:
                return f"a sample blob of {len(blob) if isinstance(blob, bytes) else '?'} bytes"
            if not np.all(np.isfinite(np.frombuffer(blob, dtype="<f8"))):
                return "non-finite posterior samples"
    for q in pairs:
        if not _json_ok(q[2]):
            return "a malformed JSON row in table 'pairs'"
    return None


def check_and_repair(store, missing_tables=()):
    """Verify every stored system; remove the damaged ones (they are analysed again).

    Returns the note lines to show (empty when the store is whole).
    """
    db, path = store.db, store.path
    try:
        res = db.execute("PRAGMA quick_check").fetchall()
    except sqlite3.DatabaseError as exc:
        res = [(str(exc),)]
    if [r[0] for r in res] != ["ok"]:
        raise InputError(f"{path}: the survey store is damaged beyond repair (SQLite: "
                         f"{' '.join(str(res[0][0]).split())[:100]}); {_recover(path)}")
    seals = dict(db.execute("SELECT system, digest FROM checks"))
    bad, stored = {}, set()
    for sid, r in _all_rows(db):
        stored.add(sid)
        why = _problem(r)
        if why is None and seals.get(sid) != _digest(r):
            why = ("no checksum" if sid not in seals else
                   "its rows changed or went missing after they were stored (checksum)")
        if why:
            bad[sid] = why
    stray = {s for t in _TABLES + ("checks",) for s, in db.execute(f"SELECT DISTINCT system FROM {t}")
             if s not in stored}
    if bad or stray:
        with store._tx():
            for sid in sorted(set(bad) | stray):
                for t in _TABLES + ("checks",):
                    db.execute(f"DELETE FROM {t} WHERE system = ?", (sid,))
    notes = []
    if missing_tables:
        notes.append(f"survey: note: the store {path} had lost its table(s) "
                     f"{', '.join(missing_tables)}; they were made again")
    if bad:
        first = sorted(bad)[0]
        notes.append(f"survey: note: store check: {len(bad)} stored system{'s' if len(bad) > 1 else ''} "
                     f"failed (e.g. {first!r}: {bad[first]}); removed from {path.name} and analysed again")
    return notes


def reconcile(status, planets, pairs):
    """Refuse to write tables that lack rows of an analysed system (the last check before writing)."""
    n_pl, n_pr = {}, {}
    for r in planets:
        n_pl[r.get("system")] = n_pl.get(r.get("system"), 0) + 1
    for r in pairs:
        n_pr[r.get("system")] = n_pr.get(r.get("system"), 0) + 1
    for sid, st, n, _, row in status:
        if st not in KNOWN_STATUS:
            raise InputError(f"survey store: system {sid!r} has an unknown status {str(st)[:20]!r}; "
                             f"rerun with --resume to repair the store")
        if st != "ok":
            continue
        want_pairs = (row or {}).get("n_pairs")
        if n_pl.get(sid, 0) != n or (isinstance(want_pairs, int) and n_pr.get(sid, 0) != want_pairs):
            raise InputError(f"survey store: system {sid!r} lacks some of its planet or pair rows; "
                             f"nothing was written; rerun with --resume to repair the store")
