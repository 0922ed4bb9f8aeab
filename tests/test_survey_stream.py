"""Catalogues read as a stream (issue 23: bounded memory): the same table whatever the chunk size.

The reference readings are independent of archsys: the whole file parsed at once by Python's ``csv``
module and hashed by ``hashlib``, or read whole by ``pyarrow`` (``Table.to_pylist``).  Cells are cleaned
the documented way (README, "Surveys": surrounding spaces stripped, the missing-value tokens mean
unknown).  Invented tables are written by the tests themselves (values invented for the test); the real
table is the open catalogue extract in tests/data/oec (MIT licence, Rein 2012; see its README).
"""
import csv
import hashlib
import io
import math
import pathlib
import pickle

import pytest

from archsys.errors import InputError
from archsys.limits import MAX_CELL_CHARS
from archsys.model.inputfile import open_input_stream
from archsys.survey import catalog
from archsys.survey.catalog import (MISSING_TOKENS, SystemRows, group_systems, pack_row, read_catalog,
                                    unpack_row)
from archsys.survey.where import parse_where, select

OEC = pathlib.Path(__file__).parent / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"


def _clean(v):
    s = v.strip()
    return None if s in MISSING_TOKENS else s


def _reference_csv(path):
    """Header, cleaned rows and SHA-256 of a well-formed CSV file read whole (csv module, hashlib)."""
    blob = pathlib.Path(path).read_bytes()
    text = blob.decode("utf-8")
    if text.startswith("\ufeff"):
        text = text[1:]
    recs = [r for r in csv.reader(io.StringIO(text, newline="")) if r and any(c.strip() for c in r)]
    return [h.strip() for h in recs[0]], [tuple(_clean(c) for c in r) for r in recs[1:]], \
        hashlib.sha256(blob).hexdigest()


def _reference_groups(header, rows, system_col):
    """system id -> [(row number, dict)], rows with an empty id left out (the documented grouping)."""
    j = header.index(system_col)
    out = {}
    for n, r in enumerate(rows, start=1):
        if r[j] is not None:
            out.setdefault(r[j], []).append((n, dict(zip(header, r))))
    return out


def _snapshot(cat, system_col):
    groups, orphans = group_systems(cat, system_col)
    return (cat.columns, [cat.row_cells(i) for i in range(cat.n_rows)], cat.malformed, cat.malformed_cells,
            cat.sha256, [(g.system, g.rows, list(g.broken), g.spellings) for g in groups], orphans)


@pytest.fixture
def tiny_chunks(monkeypatch):
    """Read 7 bytes at a time, report progress every 3 rows: every row straddles chunk boundaries."""
    monkeypatch.setattr(catalog, "_READ_CHUNK", 7)
    monkeypatch.setattr(catalog, "PROGRESS_ROWS", 3)


def test_open_catalogue_streamed_equals_whole_file_reading(monkeypatch):
    """The open catalogue extract: cells, digest and systems as the whole file read by the csv module."""
    header, rows, digest = _reference_csv(OEC)
    cat = read_catalog(OEC)
    assert cat.columns == header and cat.sha256 == digest and not cat.malformed
    assert [cat.row_cells(i) for i in range(cat.n_rows)] == rows
    groups, orphans = group_systems(cat, "system_id")
    ref = _reference_groups(header, rows, "system_id")
    assert [g.system for g in groups] == sorted(ref) and not orphans
    assert all(g.rows == ref[g.system] for g in groups)
    # the same again with a 7-byte read chunk: no row depends on where a chunk ends
    monkeypatch.setattr(catalog, "_READ_CHUNK", 7)
    assert _snapshot(read_catalog(OEC), "system_id") == _snapshot(cat, "system_id")


# invented rows that cross chunk boundaries in every way the csv module allows: a byte-order mark,
# CRLF endings, a quoted comma, a quoted line break, a byte that is not UTF-8, short and long rows,
# blank lines, a row without a system, one id in two Unicode spellings, an over-long cell, no final newline
TRICKY = (b"\xef\xbb\xbfsystem, planet ,period,mass,note\r\n"
          b"Al,Al b,1.5,NA,\"quoted, with comma\"\r\n"
          b"Al,Al c,3.2,  4.0 ,\"two\nlines\"\r\n"
          b"Bo,Bo b,\xff2,1,x\r\n"
          b"Bo,Bo c,2.0\r\n"
          b"Cy,Cy b,1,2,3,4\r\n"
          b",orphan,1,2,3\r\n"
          b"\r\n"
          b",,,,\r\n"
          b"Caf\xc3\xa9,p1,1,2,3\r\n"
          b"Cafe\xcc\x81,p2,2,2,3\r\n"
          b"  Dd  ,Dd b, nan ,--,N/A\r\n"
          b"Ee,Ee b,1," + b"x" * (MAX_CELL_CHARS + 1) + b",3\r\n"
          b"Ff,Ff b,1,2,3")


def test_tricky_csv_is_the_same_in_chunks_of_any_size(tmp_path, monkeypatch):
    path = tmp_path / "t.csv"
    path.write_bytes(TRICKY)
    ref = _snapshot(read_catalog(path), "system")
    cols, rows, malformed, raw, digest, groups, orphans = ref
    assert cols == ["system", "planet", "period", "mass", "note"]
    assert digest == hashlib.sha256(TRICKY).hexdigest()
    assert rows[0] == ("Al", "Al b", "1.5", None, "quoted, with comma")
    assert rows[1] == ("Al", "Al c", "3.2", "4.0", "two\nlines")
    assert rows[8] == ("Dd", "Dd b", None, None, None)          # blank lines are not rows
    # malformed rows keep their 1-based row numbers and name the line (the quoted line break counts)
    assert [r for r, _ in malformed] == [3, 4, 5, 10]
    whys = dict(malformed)
    assert "line 5 is not UTF-8" in whys[3] and "line 6 has 3 cells" in whys[4]
    assert "line 7 has 6 cells" in whys[5] and f"line 14: column 'mass': {MAX_CELL_CHARS + 1} characters" in whys[10]
    assert raw[4] == ["Bo", "Bo c", "2.0"]
    assert orphans == [6]
    by_id = {g[0]: g for g in groups}
    assert [n for n, _ in by_id["Bo"][1]] == [] and [r for r, _ in by_id["Bo"][2]] == [3, 4]
    assert [n for n, _ in by_id["Café"][1]] == [7, 8] and len(by_id["Café"][3]) == 2
    for size in (1, 2, 3, 5, 64):
        monkeypatch.setattr(catalog, "_READ_CHUNK", size)
        assert _snapshot(read_catalog(path), "system") == ref, size


def test_malformed_rows_across_chunks_and_progress_from_the_first_rows(tmp_path, tiny_chunks):
    lines = ["system,planet,period"]
    for i in range(40):
        lines.append(f"S{i // 3},S{i // 3} {'bcd'[i % 3]},{1 + i}.5" + (",9" if i % 7 == 3 else ""))
    path = tmp_path / "m.csv"
    path.write_text("\n".join(lines) + "\n")
    calls = []
    cat = read_catalog(path, progress=calls.append)
    assert sum(calls) == cat.n_rows == 40
    assert calls[0] == 3 and len(calls) == 40 // 3 + 1          # every 3 rows, then the rest
    assert [r for r, _ in cat.malformed] == [i + 1 for i in range(40) if i % 7 == 3]
    assert all(cat.row_cells(r - 1) == (None, None, None) for r, _ in cat.malformed)
    groups, _ = group_systems(cat, "system")
    broken = {g.system: [r for r, _ in g.broken] for g in groups if g.broken}
    assert broken == {f"S{i // 3}": [i + 1] for i in range(40) if i % 7 == 3}


def test_streaming_errors_are_the_whole_file_errors(tmp_path, tiny_chunks):
    cases = {b"": "file is empty", b"  \n\t\n": "file is empty", b"\xef\xbb\xbf": "only a byte-order mark",
             b"system,planet\nA,A\x00b\n": "NUL bytes", "system\nA\n".encode("utf-16"): "UTF-16",
             b"system,pl\xffanet\nA,b\n": "header line is not UTF-8", b"system,system\nA,b\n": "appears twice"}
    for blob, msg in cases.items():
        path = tmp_path / "e.csv"
        path.write_bytes(blob)
        with pytest.raises(InputError, match=msg):
            read_catalog(path)


def test_a_file_that_grows_while_it_is_read_is_refused(tmp_path):
    path = tmp_path / "g.csv"
    path.write_bytes(b"x" * 100)
    with open_input_stream(path, "catalogue table", max_bytes=150) as stream:
        with open(path, "ab") as fh:
            fh.write(b"y" * 100)
        with pytest.raises(InputError, match="more than 150 bytes"):
            stream.drain(size=64)


def _parquet(path, row_group_size):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq
    n = 23
    table = pa.table({
        "system": pa.array([f"P{i // 3}".encode() if i != 10 else b"P\xff" for i in range(n)], pa.binary()),
        "planet": [f"p{i}" if i % 5 else f" p{i} " for i in range(n)],
        "period": [float("nan") if i % 4 == 1 else 1.0 + i for i in range(n)],
        "count": pa.array([None if i % 6 == 2 else i for i in range(n)], pa.int64()),
        "flag": [None if i % 3 == 0 else bool(i % 2) for i in range(n)],
    })
    pq.write_table(table, path, row_group_size=row_group_size)
    return table


def test_parquet_batches_equal_the_whole_table(tmp_path):
    """Row groups of 4 read in batches of 1, 2, 5 and 64 rows: pyarrow's whole-table values, cleaned."""
    path = tmp_path / "t.parquet"
    table = _parquet(path, row_group_size=4)
    ref_rows = []
    for rec in table.to_pylist():
        cells = []
        for v in rec.values():
            if isinstance(v, bytes):
                v = v.decode("utf-8", "surrogateescape")
            if isinstance(v, str):
                v = _clean(v)
            if isinstance(v, float) and math.isnan(v):
                v = None
            cells.append(v)
        ref_rows.append(tuple(cells))
    ref_rows[10] = (None,) * 5                                   # the id that is not UTF-8 rejects its row
    snaps = []
    for batch in (1, 2, 5, 64):
        calls = []
        cat = read_catalog(path, progress=calls.append, parquet_batch_rows=batch)
        assert sum(calls) == 23 and len(calls) >= math.ceil(23 / batch)      # one report per batch
        assert cat.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
        assert [cat.row_cells(i) for i in range(cat.n_rows)] == ref_rows
        assert [r for r, _ in cat.malformed] == [11] and "not UTF-8" in cat.malformed[0][1]
        snaps.append(_snapshot(cat, "system"))
    assert all(s == snaps[0] for s in snaps)
    # integers stay integers (pyarrow's values), also in a column with missing cells
    assert [type(c) for c in read_catalog(path).column("count") if c is not None] == [int] * 18


def test_rows_of_unpackable_values_stay_tuples(tmp_path):
    pa = pytest.importorskip("pyarrow")
    import datetime

    import pyarrow.parquet as pq
    when = datetime.datetime(2020, 1, 2, 3, 4, 5)
    pq.write_table(pa.table({"system": ["A", "A"], "seen": [when, None]}), tmp_path / "d.parquet")
    cat = read_catalog(tmp_path / "d.parquet")
    assert cat.rows[0] == ("A", when) and isinstance(cat.rows[1], bytes)
    groups, _ = group_systems(cat, "system")
    assert groups[0].rows == [(1, {"system": "A", "seen": when}), (2, {"system": "A", "seen": None})]


def test_system_rows_unpack_on_access_and_pickle_small(tmp_path):
    """A system sent to a worker is its packed rows: about the size of its CSV lines, not of dicts."""
    cat = read_catalog(OEC)
    groups, _ = group_systems(cat, "system_id")
    g = max(groups, key=lambda g: g.n_planets)
    assert isinstance(g.row_numbers, range) and g.n_planets == len(g.rows) >= 5
    assert g.rows == [(n, cat.row(n - 1)) for n in g.row_numbers]
    back = pickle.loads(pickle.dumps(g))
    assert back.rows == g.rows and back.system == g.system
    lines = OEC.read_bytes().splitlines()
    own = sum(len(lines[n]) for n in g.row_numbers)             # line n is data row n (one header line)
    header = len(lines[0])
    assert len(pickle.dumps(g)) < 1.5 * own + 2 * header         # its lines and the column names
    # many systems in one message (a batch of tasks) share the column names: near the file's size
    assert len(pickle.dumps(groups)) < 1.5 * len(OEC.read_bytes())
    # the selection language reads the unpacked rows
    names = {c: ("col", c) for c in cat.columns}
    names.update({"n_planets": ("sys", "n_planets"), "system": ("sys", "system")})
    assert select(g, [parse_where(f"n_planets == {g.n_planets}", names)])


def test_packed_rows_and_catalog_views():
    cells = ("A", None, 1.5, 3, True, "é")
    assert unpack_row(pack_row(cells)) == cells
    g = SystemRows.from_rows("A", [(4, {"system": "A", "p": "1"}), (9, {"system": "A", "p": None})])
    assert g.rows == [(4, {"system": "A", "p": "1"}), (9, {"system": "A", "p": None})]
    assert g.n_planets == 2 and g.row_numbers == (4, 9) and not g.broken
    cat = catalog.Catalog("t.csv", "t.csv", "", ["system", "p"], [pack_row(("A", "1")), pack_row(("B", None))])
    assert cat.cells == {"system": ["A", "B"], "p": ["1", None]}
    cat.add_columns({"q": [1, 2]})
    assert cat.columns == ["system", "p", "q"] and cat.row(1) == {"system": "B", "p": None, "q": 2}
    with pytest.raises(ValueError):
        cat.add_columns({"r": [1]})
