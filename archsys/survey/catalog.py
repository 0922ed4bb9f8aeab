"""Read planet-per-row catalogues, group them into systems, select with ``--where``.

Formats
-------
The format follows the file extension: ``.csv`` (also ``.tsv``, ``.txt`` with
tabs), ``.ecsv``, ``.parquet``/``.pq`` (needs pyarrow) and ``.xml``/``.vot``/
``.votable`` (VOTable).  Every cell is read as it is: CSV cells stay strings
and are converted to numbers field by field later, so one bad cell rejects one
system instead of the whole column ("mixed types").  Empty cells and the
tokens ``nan``, ``NaN``, ``null``, ``NULL``, ``NA``, ``N/A``, ``--`` mean
"unknown" (common practice).  ECSV and VOTable columns keep their units.

A CSV line with more cells than the header is not guessed at: it is kept as a
"malformed" row, reported in ``rejects.csv`` and belongs to no system.

Row numbers are 1-based data rows (the header is not counted): row 1 is the
first planet, which is line 2 of a CSV file with one header line.

Selection language (``--where``): see :mod:`archsys.survey.where`.
"""
from __future__ import annotations

import csv
import hashlib
import io
import math
import pathlib
import re
from dataclasses import dataclass, field

from ..errors import InputError
from ..model.inputfile import MAX_TABLE_BYTES, read_input_bytes
from ..limits import MAX_CELL_CHARS
from .identity import bad_text, decode_cell, screen_rows, system_key

__all__ = ["Catalog", "SystemRows", "read_catalog", "group_systems", "parse_where",
           "select", "evaluate", "parse_number", "as_bool", "SYSTEM_VARS", "MISSING_TOKENS"]

MISSING_TOKENS = frozenset({"", "nan", "NaN", "NAN", "null", "NULL", "None", "NA", "N/A", "n/a", "--"})
_FORMATS = {".csv": "csv", ".txt": "csv", ".tsv": "csv", ".ecsv": "ecsv", ".parquet": "parquet",
            ".pq": "parquet", ".xml": "votable", ".vot": "votable", ".votable": "votable"}


@dataclass
class Catalog:
    """A planet-per-row table: column name -> list of cells (str, number, bool or None)."""

    path: str
    name: str
    sha256: str
    columns: list
    cells: dict
    units: dict = field(default_factory=dict)   # column -> unit string (ECSV/VOTable)
    malformed: list = field(default_factory=list)   # (row, reason) of rows that could not be read
    malformed_cells: dict = field(default_factory=dict)   # row -> the raw cells of a malformed row

    @property
    def n_rows(self) -> int:
        return len(self.cells[self.columns[0]]) if self.columns else 0

    def row(self, i: int) -> dict:
        """Cells of data row ``i`` (0-based) as a dict."""
        return {c: self.cells[c][i] for c in self.columns}


@dataclass
class SystemRows:
    """The rows of one system: ``rows`` are (row number, cells) in table order."""

    system: str
    rows: list
    broken: list = field(default_factory=list)   # (row, reason): rows of this system that could not be read
    spellings: tuple = ()    # the id's Unicode spellings in the table when there were several (NFC merged)

    @property
    def n_planets(self) -> int:
        return len(self.rows)


def _clean(x):
    """Normalise a cell: None for missing, stripped str, or a Python number/bool."""
    if x is None:
        return None
    try:
        import numpy as np
        if x is np.ma.masked:
            return None
        if isinstance(x, np.generic):
            x = x.item()
    except ImportError:  # pragma: no cover
        pass
    if isinstance(x, (bytes, bytearray, memoryview)):
        x = decode_cell(x)          # bytes that are not UTF-8 stay marked: their row is rejected
    if isinstance(x, str):
        s = x.strip()
        return None if s in MISSING_TOKENS else s
    if isinstance(x, float) and math.isnan(x):
        return None
    return x


_NOT_UTF8 = re.compile("[\udc80-\udcff]")


#: Rows between two progress reports while a table is read.
PROGRESS_ROWS = 20_000


def _read_csv(path: pathlib.Path, blob: bytes, progress=None):
    """Header, columns, units and malformed rows of a CSV/TSV file.

    A line with a byte that is not UTF-8, or with fewer or more cells than the
    header, is never guessed at: it is kept as a malformed row (reported in
    rejects.csv) and the other rows are read.
    """
    if blob.startswith(b"\xef\xbb\xbf"):
        blob = blob[3:]
    if blob[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise InputError(f"{path}: UTF-16 text; save the table as UTF-8")
    text = blob.decode("utf-8", "surrogateescape")     # bad bytes are found row by row below
    if "\x00" in text:
        raise InputError(f"{path}: contains NUL bytes; not a text table")
    delim = "\t" if path.suffix.lower() == ".tsv" else ","
    first = text.split("\n", 1)[0]
    if path.suffix.lower() == ".txt" and "\t" in first and "," not in first:
        delim = "\t"
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
    old_limit = csv.field_size_limit()
    csv.field_size_limit(max(old_limit, len(text) + 1))   # an over-long cell rejects its row (identity.py)
    try:
        return _read_csv_rows(path, reader, delim, progress)
    finally:
        csv.field_size_limit(old_limit)


def _read_csv_rows(path, reader, delim, progress=None):
    try:
        header = next(reader)
    except StopIteration:
        raise InputError(f"{path}: file is empty") from None
    except csv.Error as exc:
        raise InputError(f"{path}: header line: {exc}") from None
    bad = _NOT_UTF8.search(",".join(header))
    if bad:
        raise InputError(f"{path}: the header line is not UTF-8 text (byte 0x{ord(bad.group(0)) - 0xdc00:02x}); "
                         f"save the table as UTF-8")
    header = [h.strip() for h in header]
    rows, malformed, raw = [], [], {}
    lineno = 1
    while True:
        try:
            rec = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            raise InputError(f"{path}: line {reader.line_num}: {exc}") from None
        lineno = reader.line_num
        if not rec or all(not c.strip() for c in rec):
            continue
        row = len(rows) + 1
        why = None
        joined = ",".join(rec)
        m = _NOT_UTF8.search(joined)
        if m:
            why = (f"line {lineno} is not UTF-8 text (byte 0x{ord(m.group(0)) - 0xdc00:02x}); the row is "
                   f"skipped, save the table as UTF-8")
        elif len(joined) > MAX_CELL_CHARS and max(map(len, rec)) > MAX_CELL_CHARS:
            j = max(range(len(rec)), key=lambda k: len(rec[k]))
            col = header[j][:60] if j < len(header) else f"#{j + 1}"
            why = (f"line {lineno}: column '{col}': {len(rec[j])} characters; a cell may have at most "
                   f"{MAX_CELL_CHARS}; the row is skipped")
        elif len(rec) > len(header):      # a bad row is reported, never guessed at
            why = (f"line {lineno} has {len(rec)} cells but the header has {len(header)} columns; "
                   f"check the quoting of that line")
        elif len(rec) < len(header):
            why = (f"line {lineno} has {len(rec)} cells but the header has {len(header)} columns "
                   f"(a truncated or short line); the row is not read")
        if why:
            malformed.append((row, why))
            raw[row] = rec
            rec = [""] * len(header)
        rows.append(rec)
        if progress is not None and row % PROGRESS_ROWS == 0:
            progress(PROGRESS_ROWS)
    # CSV cells are always text: _clean's string branch, column by column (the hot loop of a large table)
    missing = MISSING_TOKENS
    cols = {h: [None if (c := v.strip()) in missing else c for v in col]
            for h, col in zip(header, zip(*rows) if rows else [() for _ in header])}
    return header, cols, {}, (malformed, raw)


def _read_astropy(path: pathlib.Path, fmt: str):
    try:
        from astropy.table import Table
        tab = Table.read(str(path), format="ascii.ecsv" if fmt == "ecsv" else "votable")
    except InputError:
        raise
    except Exception as exc:  # astropy raises many types for a malformed file
        raise InputError(f"{path}: cannot read as {fmt.upper()}: {type(exc).__name__}: {exc}") from None
    header = list(tab.colnames)
    cols, units = {}, {}
    for c in header:
        col = tab[c]
        mask = getattr(col, "mask", None)
        vals = list(col.tolist()) if mask is None else [None if m else v for v, m in
                                                      zip(col.data.data.tolist(), mask.tolist())]
        cols[c] = [_clean(v) for v in vals]
        if col.unit is not None and str(col.unit):
            units[c] = col.unit.to_string()
    return header, cols, units, []


def _read_parquet(path: pathlib.Path):
    try:
        import pandas as pd
        df = pd.read_parquet(path)
    except ImportError as exc:
        raise InputError(f"{path}: reading Parquet needs pyarrow (pip install 'archsys[parquet]'): {exc}") from None
    except Exception as exc:
        raise InputError(f"{path}: cannot read as Parquet: {type(exc).__name__}: {exc}") from None
    header = [str(c) for c in df.columns]
    cols = {str(c): [_clean(v) for v in df[c].tolist()] for c in df.columns}
    return header, cols, {}, []


def read_catalog(path, progress=None) -> Catalog:
    """Read a catalogue file (CSV, ECSV, Parquet or VOTable; see module docstring).

    ``progress(n)``, when given, is called with the number of rows read since
    its last call (every few thousand rows of a CSV file; once for the other
    formats).

    Raises
    ------
    InputError
        The file is missing, unreadable, of an unknown format, or its header
        is unusable (duplicated or empty column names).
    """
    p = pathlib.Path(path)
    fmt = _FORMATS.get(p.suffix.lower())
    if fmt is None:
        raise InputError(f"{path}: unknown table format '{p.suffix}'; use .csv, .ecsv, .parquet or "
                         f".xml/.vot (VOTable)")
    blob = read_input_bytes(path, "catalogue table", max_bytes=MAX_TABLE_BYTES)
    raw = {}
    if fmt == "csv":
        header, cols, units, (malformed, raw) = _read_csv(p, blob, progress)
    elif fmt == "parquet":
        header, cols, units, malformed = _read_parquet(p)
    else:
        header, cols, units, malformed = _read_astropy(p, fmt)
    if fmt != "csv":        # (CSV rows are screened as they are read, in _read_csv_rows)
        malformed, raw = screen_rows(header, cols, list(malformed), raw)   # not UTF-8, over-long cells
    if progress is not None:
        n = len(cols[header[0]]) if header else 0
        progress(n % PROGRESS_ROWS if fmt == "csv" else n)
    seen = set()
    for j, h in enumerate(header, start=1):
        if not h:
            raise InputError(f"{path}: column {j} has an empty name in the header")
        if h in seen:
            raise InputError(f"{path}: column '{h}' appears twice in the header")
        seen.add(h)
    return Catalog(path=str(path), name=p.name, sha256=hashlib.sha256(blob).hexdigest(),
                   columns=header, cells=cols, units=units, malformed=malformed, malformed_cells=raw)


def group_systems(cat: Catalog, system_col: str):
    """Rows grouped by system id, sorted by id; and the row numbers without an id.

    Returns
    -------
    systems : list of SystemRows, sorted by system id (rows in table order)
    orphans : list of int, 1-based rows whose system cell is empty (malformed rows excluded)
    """
    groups, orphans, broken, spellings = {}, [], {}, {}
    ids = cat.cells[system_col]
    bad = dict(cat.malformed)
    col = cat.columns.index(system_col) if system_col in cat.columns else None
    names = cat.columns
    cells_of_row = zip(*(cat.cells[c] for c in names))       # row dicts built once, column by column
    for i, (sid, vals) in enumerate(zip(ids, cells_of_row)):
        if i + 1 in bad:
            # a row that could not be read still names its system when that cell is clean:
            # the system is then rejected as a whole instead of being analysed without the row
            cells = cat.malformed_cells.get(i + 1) or []
            sid = _clean(cells[col]) if col is not None and col < len(cells) else None
            if isinstance(sid, str) and not bad_text(sid):
                sid = system_key(sid)
                broken.setdefault(sid, []).append((i + 1, bad[i + 1]))
                groups.setdefault(sid, [])
            continue
        if sid is None:
            orphans.append(i + 1)
            continue
        sid = str(sid) if not isinstance(sid, float) or not sid.is_integer() else str(int(sid))
        key = system_key(sid)
        spellings.setdefault(key, set()).add(sid)
        groups.setdefault(key, []).append((i + 1, dict(zip(names, vals))))
    return [SystemRows(s, groups[s], broken.get(s, []),
                       tuple(sorted(spellings[s])) if len(spellings.get(s, ())) > 1 else ())
            for s in sorted(groups)], orphans


# the selection language lives in .where; re-exported here for older imports
from .where import (SYSTEM_VARS, as_bool, evaluate, parse_number, parse_where, select)  # noqa: E402,F401
