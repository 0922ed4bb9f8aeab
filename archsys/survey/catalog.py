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

Selection language (``--where``)
--------------------------------
A small expression language, parsed by hand (nothing is ever passed to
``eval``)::

    expr     := term { ("or" | "||") term }
    term     := factor { ("and" | "&&") factor }
    factor   := ("not" | "!") factor | "(" expr ")" | agg | comparison
    agg      := ("any" | "all") "(" expr ")" | "count" "(" expr ")" OP operand
    comparison := operand OP operand          OP: == != < <= > >=
    operand  := NAME | `quoted name` | NUMBER | 'string' | "string" | true | false

A NAME is a system variable (``n_planets``: rows of the system in the table;
``system``: its id), an alias from the column map (``[aliases]``), an archsys
field name (``transiting``, ``period``, ``star_mass``: the column it is mapped
to) or a column of the table.  An unknown bare word facing a known name is a
string (``method==Transit``); two unknown names are an error.  Values are the
cells as they are in the table (no unit conversion).  Strings compare without
regard to case; a cell and a literal that both read as numbers compare as
numbers; any comparison with an empty cell is false.

The expression is evaluated for every row of a system; the system is selected
when it holds for all of its rows.  ``any(...)``, ``all(...)`` and
``count(...)`` look at all rows of the system, e.g.
``n_planets>=3 and any(method==Transit)`` or ``count(transiting==1)>=2``.
Several ``--where`` options must all hold.
"""
from __future__ import annotations

import csv
import difflib
import hashlib
import io
import math
import pathlib
import re
from dataclasses import dataclass, field

from ..errors import InputError
from ..model.inputfile import MAX_TABLE_BYTES, read_input_bytes

__all__ = ["Catalog", "SystemRows", "read_catalog", "group_systems", "parse_where",
           "select", "evaluate", "parse_number", "MISSING_TOKENS"]

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
    if isinstance(x, bytes):
        x = x.decode("utf-8", "replace")
    if isinstance(x, str):
        s = x.strip()
        return None if s in MISSING_TOKENS else s
    if isinstance(x, float) and math.isnan(x):
        return None
    return x


_NOT_UTF8 = re.compile("[\udc80-\udcff]")


def _read_csv(path: pathlib.Path, blob: bytes):
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
        m = _NOT_UTF8.search(",".join(rec))
        if m:
            why = (f"line {lineno} is not UTF-8 text (byte 0x{ord(m.group(0)) - 0xdc00:02x}); the row is "
                   f"skipped, save the table as UTF-8")
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
    cols = {h: [_clean(r[j]) for r in rows] for j, h in enumerate(header)}
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


def read_catalog(path) -> Catalog:
    """Read a catalogue file (CSV, ECSV, Parquet or VOTable; see module docstring).

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
        header, cols, units, (malformed, raw) = _read_csv(p, blob)
    elif fmt == "parquet":
        header, cols, units, malformed = _read_parquet(p)
    else:
        header, cols, units, malformed = _read_astropy(p, fmt)
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
    groups, orphans, broken = {}, [], {}
    ids = cat.cells[system_col]
    bad = dict(cat.malformed)
    col = cat.columns.index(system_col) if system_col in cat.columns else None
    for i, sid in enumerate(ids):
        if i + 1 in bad:
            # a row that could not be read still names its system when that cell is clean:
            # the system is then rejected as a whole instead of being analysed without the row
            cells = cat.malformed_cells.get(i + 1) or []
            sid = _clean(cells[col]) if col is not None and col < len(cells) else None
            if isinstance(sid, str) and not _NOT_UTF8.search(sid):
                broken.setdefault(sid, []).append((i + 1, bad[i + 1]))
                groups.setdefault(sid, [])
            continue
        if sid is None:
            orphans.append(i + 1)
            continue
        sid = str(sid) if not isinstance(sid, float) or not sid.is_integer() else str(int(sid))
        groups.setdefault(sid, []).append((i + 1, cat.row(i)))
    return [SystemRows(s, groups[s], broken.get(s, [])) for s in sorted(groups)], orphans


# --------------------------------------------------------------------------
# The selection language
# --------------------------------------------------------------------------

_TOKEN = re.compile(r"""\s*(?:
    (?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)(?![A-Za-z_])
  | (?P<str>'[^']*'|"[^"]*")
  | (?P<quoted>`[^`]+`)
  | (?P<op>==|!=|<=|>=|<|>|&&|\|\||!|\(|\)|=)
  | (?P<name>[A-Za-z_][A-Za-z0-9_.:-]*)
)""", re.X)
_CMP = ("==", "!=", "<", "<=", ">", ">=")
_KEYWORDS = {"and", "or", "not", "any", "all", "count", "true", "false"}
SYSTEM_VARS = ("n_planets", "system")


def _tokenize(expr, where):
    pos, out = 0, []
    expr = expr.rstrip()
    while pos < len(expr):
        m = _TOKEN.match(expr, pos)
        if not m or m.end() == pos:
            raise InputError(f"{where}: cannot read {expr[pos:pos + 12]!r} at character {pos + 1}")
        kind = m.lastgroup
        text = m.group(kind)
        if kind == "op" and text == "=":
            raise InputError(f"{where}: use '==' to compare, not '='")
        if kind == "name" and text.lower() in _KEYWORDS:
            kind, text = "kw", text.lower()
        out.append((kind, text))
        pos = m.end()
    return out


class _Parser:
    def __init__(self, expr, names, where):
        self.where = where
        self.toks = _tokenize(expr, where)
        self.i = 0
        self.names = names       # name -> resolved key

    def peek(self):
        return self.toks[self.i] if self.i < len(self.toks) else (None, None)

    def take(self, *texts):
        kind, text = self.peek()
        if text in texts and kind in ("op", "kw"):
            self.i += 1
            return text
        return None

    def expect(self, text):
        if not self.take(text):
            got = self.peek()[1]
            raise InputError(f"{self.where}: expected '{text}'" + (f", got '{got}'" if got else " at the end"))

    def parse(self):
        if not self.toks:
            raise InputError(f"{self.where}: empty expression")
        node = self.expr()
        if self.i < len(self.toks):
            raise InputError(f"{self.where}: unexpected '{self.peek()[1]}'")
        return node

    def expr(self):
        node = self.term()
        while self.take("or", "||"):
            node = ("or", node, self.term())
        return node

    def term(self):
        node = self.factor()
        while self.take("and", "&&"):
            node = ("and", node, self.factor())
        return node

    def factor(self):
        if self.take("not", "!"):
            return ("not", self.factor())
        if self.take("("):
            node = self.expr()
            self.expect(")")
            return node
        agg = self.take("any", "all", "count")
        if agg:
            self.expect("(")
            inner = self.expr()
            self.expect(")")
            if agg != "count":
                return ("agg", agg, inner)
            op = self.take(*_CMP)
            if not op:
                raise InputError(f"{self.where}: count(...) needs a comparison, e.g. count(...)>=2")
            kind, text = self.peek()
            if kind != "num":
                raise InputError(f"{self.where}: count(...) compares with a number; got {text!r}")
            self.i += 1
            return ("count", inner, op, float(text))
        return self.comparison()

    def operand(self):
        kind, text = self.peek()
        if kind is None:
            raise InputError(f"{self.where}: expression ends where a value was expected")
        self.i += 1
        if kind == "num":
            return ("num", float(text))
        if kind == "str":
            return ("str", text[1:-1])
        if kind == "quoted":
            return ("name", text[1:-1])
        if kind == "name":
            return ("name", text)
        if kind == "kw" and text in ("true", "false"):
            return ("bool", text == "true")
        raise InputError(f"{self.where}: expected a column or a value, got '{text}'")

    def _resolve(self, opnd):
        if opnd[0] == "name" and opnd[1] in self.names:
            return ("var", self.names[opnd[1]])
        return opnd

    def comparison(self):
        left = self.operand()
        op = self.take(*_CMP)
        if not op:
            got = self.peek()[1]
            raise InputError(f"{self.where}: expected a comparison like n_planets>=2"
                             + (f" after {left[1]!r}, got '{got}'" if got else f" after {left[1]!r}"))
        right = self.operand()
        left, right = self._resolve(left), self._resolve(right)
        if left[0] != "var" and right[0] != "var":
            unknown = left if left[0] == "name" else right
            if unknown[0] == "name":
                close = difflib.get_close_matches(unknown[1], list(self.names), n=1, cutoff=0.6)
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                raise InputError(f"{self.where}: unknown column '{unknown[1]}'{hint}")
            raise InputError(f"{self.where}: compares two constants; name a column")
        # a bare unknown word facing a variable is a string literal
        left = ("str", left[1]) if left[0] == "name" else left
        right = ("str", right[1]) if right[0] == "name" else right
        return ("cmp", op, left, right)


def parse_where(expr: str, names: dict, where: str | None = None):
    """Parse one selection expression into a small tuple tree (see module docstring).

    ``names`` maps every usable name to its key: ``("sys", "n_planets")`` or
    ``("col", column)``.
    """
    return _Parser(expr, names, where or f"--where {expr!r}").parse()


_TRUE = {"1", "true", "t", "yes", "y"}
_FALSE = {"0", "false", "f", "no", "n"}


#: Plain decimal notation, ASCII digits only ('1_0', '١٠' and '0x10' are not numbers).
_DECIMAL = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|[+-]?(?:inf|infinity|nan)", re.I | re.A)


def parse_number(x):
    """float of a cell in plain decimal notation (or a Python number); None otherwise."""
    if isinstance(x, bool):
        return None
    if isinstance(x, (int, float)):
        return float(x)
    try:
        import numpy as np
        if isinstance(x, np.number):
            return float(x)
    except ImportError:  # pragma: no cover
        pass
    if not isinstance(x, str):
        return None
    s = x.strip()
    if not _DECIMAL.fullmatch(s):
        return None
    try:
        return float(s)
    except (OverflowError, ValueError):  # pragma: no cover - the pattern admits only floats
        return None


def _num(x):
    if isinstance(x, bool):
        return float(x)
    v = parse_number(x)
    return None if v is None or math.isnan(v) else v


def as_bool(x):
    """Truth value of a cell (1/0, true/false, yes/no), or None."""
    if x is None:
        return None
    if isinstance(x, bool):
        return x
    v = _num(x)
    if v is not None:
        return True if v == 1 else False if v == 0 else None
    s = str(x).strip().lower()
    return True if s in _TRUE else False if s in _FALSE else None


def _compare(op, a, b):
    if op == "==":
        return a == b
    if op == "!=":
        return a != b
    if op == "<":
        return a < b
    if op == "<=":
        return a <= b
    if op == ">":
        return a > b
    return a >= b


def _value(opnd, row, sysvars):
    kind, val = opnd
    if kind != "var":
        return opnd
    scope, key = val
    x = sysvars.get(key) if scope == "sys" else row.get(key)
    return ("cell", x)


def _cmp(op, a, b):
    """Compare two operands ('cell', x) / ('num', v) / ('str', s) / ('bool', b)."""
    (ka, xa), (kb, xb) = a, b
    if xa is None or xb is None:
        return False
    if ka == "bool" or kb == "bool":
        va = xa if ka == "bool" else as_bool(xa)
        vb = xb if kb == "bool" else as_bool(xb)
        if va is None or vb is None or op not in ("==", "!="):
            return False
        return _compare(op, va, vb)
    na, nb = _num(xa), _num(xb)
    if na is not None and nb is not None and not (ka == "str" and kb == "str"):
        return _compare(op, na, nb)
    if ka == "num" or kb == "num":
        return False            # a number against a non-numeric cell
    return _compare(op, str(xa).casefold(), str(xb).casefold())


def evaluate(node, rows, i, sysvars):
    """Truth of ``node`` for row ``i`` of ``rows`` (list of cell dicts)."""
    kind = node[0]
    if kind == "or":
        return evaluate(node[1], rows, i, sysvars) or evaluate(node[2], rows, i, sysvars)
    if kind == "and":
        return evaluate(node[1], rows, i, sysvars) and evaluate(node[2], rows, i, sysvars)
    if kind == "not":
        return not evaluate(node[1], rows, i, sysvars)
    if kind == "agg":
        hits = (evaluate(node[2], rows, j, sysvars) for j in range(len(rows)))
        return any(hits) if node[1] == "any" else all(hits)
    if kind == "count":
        n = sum(1 for j in range(len(rows)) if evaluate(node[1], rows, j, sysvars))
        return _compare(node[2], float(n), node[3])
    _, op, left, right = node
    return _cmp(op, _value(left, rows[i], sysvars), _value(right, rows[i], sysvars))


def select(group: SystemRows, nodes) -> bool:
    """True when every expression holds for every row of the system."""
    rows = [r for _, r in group.rows]
    sysvars = {"n_planets": group.n_planets, "system": group.system}
    return all(evaluate(n, rows, i, sysvars) for n in nodes for i in range(len(rows)))
