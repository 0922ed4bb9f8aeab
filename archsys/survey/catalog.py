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

Memory
------
CSV files are read as a stream of lines (never whole: the bytes are hashed as
they pass) and Parquet files by batches of rows (``pyarrow``'s
``iter_batches``); ECSV and VOTable files are read whole by astropy, which has
no streaming reader for them, so they are for catalogues that fit in memory
several times over.  Every row is kept packed: its cleaned cells, aligned with
``Catalog.columns``, as one ``marshal`` string of bytes (about the size of the
CSV line; values ``marshal`` cannot hold keep the row as a tuple).  Only this
module packs and unpacks them, and only data it packed itself.  A system's
rows (:class:`SystemRows`) carry their packed rows, so a system sent to a
worker process is about the size of its CSV lines and the column names (which
systems sent together share); ``SystemRows.rows`` unpacks them into one dict
per row when the system is selected or analysed, and is not kept.  Parquet
cells are pyarrow's Python values: integers stay integers, also in a column
with missing cells (pandas, used before, made such a column floats).

Selection language (``--where``): see :mod:`archsys.survey.where`.
"""
from __future__ import annotations

import csv
import io
import itertools
import marshal
import math
import pathlib
import re
from dataclasses import dataclass, field

from ..errors import InputError
from ..model.inputfile import MAX_TABLE_BYTES, open_input_stream, read_input_bytes
from ..limits import MAX_CELL_CHARS
from .identity import bad_text, decode_cell, screen_rows, system_key

__all__ = ["Catalog", "SystemRows", "read_catalog", "group_systems", "parse_where",
           "select", "evaluate", "parse_number", "as_bool", "SYSTEM_VARS", "MISSING_TOKENS",
           "PROGRESS_ROWS", "PARQUET_BATCH_ROWS", "pack_row", "unpack_row"]

MISSING_TOKENS = frozenset({"", "nan", "NaN", "NAN", "null", "NULL", "None", "NA", "N/A", "n/a", "--"})
_FORMATS = {".csv": "csv", ".txt": "csv", ".tsv": "csv", ".ecsv": "ecsv", ".parquet": "parquet",
            ".pq": "parquet", ".xml": "votable", ".vot": "votable", ".votable": "votable"}

#: Rows between two progress reports while a CSV table is read (Parquet: one report per batch).
PROGRESS_ROWS = 20_000
#: Rows per Parquet batch: the memory of one batch's Python cells at a time, beside the packed rows.
PARQUET_BATCH_ROWS = 32_768
#: Bytes read from a file at a time.
_READ_CHUNK = 1 << 20


def pack_row(cells: tuple):
    """One row's cells (str, int, float, bool, None) as a compact ``marshal`` byte string.

    A row holding another type (a Parquet timestamp, a decimal) stays a tuple.
    Only rows packed here are ever unpacked (:func:`unpack_row`): no user bytes are
    given to ``marshal``.
    """
    try:
        return marshal.dumps(cells)
    except ValueError:                  # "unmarshallable object"
        return tuple(cells)


def unpack_row(packed) -> tuple:
    """The cells of a row packed by :func:`pack_row`."""
    return packed if packed.__class__ is tuple else marshal.loads(packed)


@dataclass
class Catalog:
    """A planet-per-row table.

    ``rows``: every data row, packed (:func:`pack_row`), cells aligned with
    ``columns``; a malformed row's cells are all None (its raw cells are in
    ``malformed_cells``).  ``row(i)``, ``column(name)`` and ``cells`` unpack them.
    """

    path: str
    name: str
    sha256: str
    columns: list
    rows: list
    units: dict = field(default_factory=dict)   # column -> unit string (ECSV/VOTable)
    malformed: list = field(default_factory=list)   # (row, reason) of rows that could not be read
    malformed_cells: dict = field(default_factory=dict)   # row -> the raw cells of a malformed row

    @property
    def n_rows(self) -> int:
        return len(self.rows)

    def row_cells(self, i: int) -> tuple:
        """Cells of data row ``i`` (0-based), aligned with ``columns``."""
        return unpack_row(self.rows[i])

    def row(self, i: int) -> dict:
        """Cells of data row ``i`` (0-based) as a dict."""
        return dict(zip(self.columns, unpack_row(self.rows[i])))

    def iter_column(self, name):
        """The cells of one column, row by row (unpacked one row at a time)."""
        j = self.columns.index(name)
        return (unpack_row(r)[j] for r in self.rows)

    def column(self, name) -> list:
        """The cells of one column."""
        return list(self.iter_column(name))

    @property
    def cells(self) -> dict:
        """Column name -> list of cells: every row unpacked (a copy: for small tables and tests)."""
        cols = zip(*map(unpack_row, self.rows)) if self.rows else [()] * len(self.columns)
        return {c: list(v) for c, v in zip(self.columns, cols)}

    def add_columns(self, new: dict):
        """Append columns (name -> one cell per row); the rows are packed again, once."""
        new = {name: list(values) for name, values in new.items()}
        for name, values in new.items():
            if len(values) != len(self.rows):
                raise ValueError(f"column '{name}': {len(values)} cells for {len(self.rows)} rows")
        if not new:
            return
        extra = zip(*new.values())
        self.rows = [pack_row(unpack_row(r) + tuple(v)) for r, v in zip(self.rows, extra)]
        self.columns.extend(new)


@dataclass(slots=True)
class SystemRows:
    """The rows of one system, in table order, kept packed.

    ``row_numbers``: 1-based data rows (a ``range`` when they follow each other);
    ``packed``: their cells (:func:`pack_row`), aligned with ``columns`` (one
    tuple shared by every system of a catalogue); ``broken``: (row, reason) of
    rows of this system that could not be read.
    ``rows`` unpacks them on each access into (row number, dict column -> cell):
    bind it to a local name when it is read several times.
    """

    system: str
    row_numbers: tuple
    packed: tuple
    columns: tuple
    broken: list | tuple = ()
    spellings: tuple = ()    # the id's Unicode spellings in the table when there were several (NFC merged)

    @classmethod
    def from_rows(cls, system, rows, broken=(), spellings=(), columns=None):
        """A system from (row number, dict column -> cell) pairs (tests, small tables)."""
        if columns is None:
            columns = tuple(dict.fromkeys(k for _, cells in rows for k in cells))
        columns = tuple(columns)
        return cls(system, tuple(n for n, _ in rows),
                   tuple(pack_row(tuple(cells.get(c) for c in columns)) for _, cells in rows),
                   columns, list(broken) or (), tuple(spellings))

    @property
    def rows(self) -> list:
        """(row number, dict column -> cell) of every row, unpacked now (not kept)."""
        cols = self.columns
        return [(n, dict(zip(cols, unpack_row(p)))) for n, p in zip(self.row_numbers, self.packed)]

    def row_cells(self) -> list:
        """Cells of every row as tuples aligned with ``columns``."""
        return [unpack_row(p) for p in self.packed]

    @property
    def n_planets(self) -> int:
        return len(self.row_numbers)


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


def _clean_column(vals):
    """_clean over a column of plain Python values; numbers and None without a call per cell."""
    return [None if v is None or (v.__class__ is float and v != v) else
            v if v.__class__ in (int, float, bool) else _clean(v) for v in vals]


_NOT_UTF8 = re.compile("[\udc80-\udcff]")


def _lines(path, text, first):
    """Lines of a text stream (the first one already read); a NUL character ends the reading."""
    for line in itertools.chain((first,), text) if first else text:
        if "\x00" in line:
            raise InputError(f"{path}: contains NUL bytes; not a text table")
        yield line


def _read_csv(path: pathlib.Path, stream, progress=None):
    """Header, packed rows and malformed rows of a CSV/TSV file, read as a stream of lines.

    A line with a byte that is not UTF-8, or with fewer or more cells than the
    header, is never guessed at: it is kept as a malformed row (reported in
    rejects.csv) and the other rows are read.
    """
    buf = io.BufferedReader(stream, max(_READ_CHUNK, 8))     # (8: room for the byte-order-mark test)
    head = buf.peek(5)[:5]
    if head.startswith(b"\xef\xbb\xbf"):
        head = head[3:]
    if head[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise InputError(f"{path}: UTF-16 text; save the table as UTF-8")
    text = io.TextIOWrapper(buf, encoding="utf-8", errors="surrogateescape", newline="")
    text._CHUNK_SIZE = _READ_CHUNK     # bytes decoded at a time (8 KiB by default); lines span chunks
    first = text.readline()
    if first.startswith("\ufeff"):
        first = first[1:]
    delim = "\t" if path.suffix.lower() == ".tsv" else ","
    if path.suffix.lower() == ".txt" and "\t" in first.split("\n", 1)[0] and "," not in first.split("\n", 1)[0]:
        delim = "\t"
    reader = csv.reader(_lines(path, text, first), delimiter=delim)
    old_limit = csv.field_size_limit()
    size = path.stat().st_size
    csv.field_size_limit(max(old_limit, size + 1))   # an over-long cell rejects its row (identity.py)
    try:
        return _read_csv_rows(path, reader, delim, progress, stream)
    finally:
        csv.field_size_limit(old_limit)
        text.detach().detach()        # the wrappers let go of ``stream`` without closing it


def _read_csv_rows(path, reader, delim, progress=None, stream=None):
    try:
        header = next(reader)
    except StopIteration:
        if stream is not None:
            stream.check_not_empty()
        raise InputError(f"{path}: file is empty") from None
    except csv.Error as exc:
        raise InputError(f"{path}: header line: {exc}") from None
    bad = _NOT_UTF8.search(",".join(header))
    if bad:
        raise InputError(f"{path}: the header line is not UTF-8 text (byte 0x{ord(bad.group(0)) - 0xdc00:02x}); "
                         f"save the table as UTF-8")
    header = [h.strip() for h in header]
    ncol = len(header)
    rows, malformed, raw = [], [], {}
    blank = pack_row((None,) * ncol)          # the cells of a malformed row (one shared object)
    missing = MISSING_TOKENS
    dumps = marshal.dumps
    append = rows.append
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
        elif len(rec) > ncol:      # a bad row is reported, never guessed at
            why = (f"line {lineno} has {len(rec)} cells but the header has {ncol} columns; "
                   f"check the quoting of that line")
        elif len(rec) < ncol:
            why = (f"line {lineno} has {len(rec)} cells but the header has {ncol} columns "
                   f"(a truncated or short line); the row is not read")
        if why:
            malformed.append((row, why))
            raw[row] = rec
            append(blank)
        else:
            # CSV cells are always text: _clean's string branch (the hot loop of a large table);
            # text cells only, so marshal always packs them
            append(dumps(tuple([None if (c := v.strip()) in missing else c for v in rec])))
        if progress is not None and row % PROGRESS_ROWS == 0:
            progress(PROGRESS_ROWS)
    if stream is not None:
        stream.check_not_empty()
    if progress is not None:
        progress(len(rows) % PROGRESS_ROWS)
    return header, rows, {}, (malformed, raw)


def _pack_columns(header, cols, malformed, raw, offset, rows):
    """Screen a block of rows given column by column (identity.screen_rows) and append them packed."""
    screen_rows(header, cols, malformed, raw, offset=offset)
    rows.extend(map(pack_row, zip(*(cols[h] for h in header))) if header else ())


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
    del tab
    rows, malformed, raw = [], [], {}
    _pack_columns(header, cols, malformed, raw, 0, rows)
    return header, rows, units, (malformed, raw)


def _read_parquet(path: pathlib.Path, progress=None, batch_rows=None):
    """Header and packed rows of a Parquet file, read batch by batch.

    Cells are pyarrow's Python values (``to_pylist``): integers stay integers,
    nulls and NaN are None, binary cells are decoded as UTF-8 or reject their row.
    """
    try:
        import pyarrow.parquet as pq
    except ImportError as exc:
        raise InputError(f"{path}: reading Parquet needs pyarrow (pip install 'archsys[parquet]'): {exc}") from None
    rows, malformed, raw = [], [], {}
    try:
        # buffered reads of each column chunk, no pre-buffering of a whole row group: less memory at once
        pf = pq.ParquetFile(str(path), buffer_size=_READ_CHUNK, pre_buffer=False)
        header = [str(n) for n in pf.schema_arrow.names]
        for batch in pf.iter_batches(batch_size=batch_rows or PARQUET_BATCH_ROWS):
            cols = {h: _clean_column(batch.column(j).to_pylist()) for j, h in enumerate(header)}
            _pack_columns(header, cols, malformed, raw, len(rows), rows)
            if progress is not None:
                progress(batch.num_rows)
    except InputError:
        raise
    except Exception as exc:
        raise InputError(f"{path}: cannot read as Parquet: {type(exc).__name__}: {exc}") from None
    return header, rows, {}, (malformed, raw)


def read_catalog(path, progress=None, *, parquet_batch_rows=None) -> Catalog:
    """Read a catalogue file (CSV, ECSV, Parquet or VOTable; see module docstring).

    ``progress(n)``, when given, is called with the number of rows read since
    its last call (every few thousand rows of a CSV file, every batch of a
    Parquet file; once for ECSV and VOTable, which astropy reads whole).

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
    if fmt == "csv":
        with open_input_stream(path, "catalogue table", max_bytes=MAX_TABLE_BYTES) as stream:
            header, rows, units, (malformed, raw) = _read_csv(p, stream, progress)
            stream.drain()
            digest = stream.sha256()
    elif fmt == "parquet":
        with open_input_stream(path, "catalogue table", max_bytes=MAX_TABLE_BYTES) as stream:
            stream.drain()                        # the digest (and the empty-file check) in one pass
            stream.check_not_empty()
            digest = stream.sha256()
        header, rows, units, (malformed, raw) = _read_parquet(p, progress, parquet_batch_rows)
    else:
        import hashlib
        blob = read_input_bytes(path, "catalogue table", max_bytes=MAX_TABLE_BYTES)
        digest = hashlib.sha256(blob).hexdigest()
        del blob
        header, rows, units, (malformed, raw) = _read_astropy(p, fmt)
        if progress is not None:
            progress(len(rows))
    seen = set()
    for j, h in enumerate(header, start=1):
        if not h:
            raise InputError(f"{path}: column {j} has an empty name in the header")
        if h in seen:
            raise InputError(f"{path}: column '{h}' appears twice in the header")
        seen.add(h)
    return Catalog(path=str(path), name=p.name, sha256=digest, columns=header, rows=rows, units=units,
                   malformed=malformed, malformed_cells=raw)


def _system_id(sid):
    return str(sid) if not isinstance(sid, float) or not sid.is_integer() else str(int(sid))


def group_systems(cat: Catalog, system_col: str):
    """Rows grouped by system id, sorted by id; and the row numbers without an id.

    Rows stay packed (one byte string each, shared with ``cat.rows``); only
    the system cell of each row is unpacked here.

    Returns
    -------
    systems : list of SystemRows, sorted by system id (rows in table order)
    orphans : list of int, 1-based rows whose system cell is empty (malformed rows excluded)
    """
    groups, orphans, broken, spellings = {}, [], {}, {}
    bad = dict(cat.malformed)
    col = cat.columns.index(system_col) if system_col in cat.columns else None
    if col is None:
        raise KeyError(system_col)
    for i, packed in enumerate(cat.rows):
        if i + 1 in bad:
            # a row that could not be read still names its system when that cell is clean:
            # the system is then rejected as a whole instead of being analysed without the row
            cells = cat.malformed_cells.get(i + 1) or []
            sid = _clean(cells[col]) if col < len(cells) else None
            if isinstance(sid, str) and not bad_text(sid):
                sid = system_key(sid)
                broken.setdefault(sid, []).append((i + 1, bad[i + 1]))
                groups.setdefault(sid, [])
            continue
        sid = unpack_row(packed)[col]
        if sid is None:
            orphans.append(i + 1)
            continue
        sid = _system_id(sid)
        key = system_key(sid)
        spell = spellings.get(key)        # the id's spelling; a set only when there are several
        if spell is None:
            spellings[key] = sid
        elif spell.__class__ is str:
            if spell != sid:
                spellings[key] = {spell, sid}
        else:
            spell.add(sid)
        seq = groups.get(key)
        if seq is None:
            groups[key] = [i + 1, packed]       # row number, packed row, row number, ...: one list
        else:
            seq += (i + 1, packed)
    columns = tuple(cat.columns)          # one tuple shared by every system
    out = []
    for s in sorted(groups):
        seq = groups.pop(s)
        out.append(SystemRows(s, _row_numbers(seq[0::2]), tuple(seq[1::2]), columns, broken.get(s, ()),
                              tuple(sorted(spellings[s])) if isinstance(spellings.get(s), set) else ()))
    return out, orphans


def _row_numbers(nums):
    """Row numbers (increasing) as a ``range`` when they follow each other (a system's usual rows), else a tuple."""
    if nums and nums[-1] - nums[0] == len(nums) - 1:
        return range(nums[0], nums[-1] + 1)
    return tuple(nums)


# the selection language lives in .where; re-exported here for older imports
from .where import (SYSTEM_VARS, as_bool, evaluate, parse_number, parse_where, select)  # noqa: E402,F401
