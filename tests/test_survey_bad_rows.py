"""Catalogue rows that cannot be read are rejected with a reason, row by row; the rest of
the survey goes on (README: "Bad rows never stop the survey").  Behaviour checks of
archsys itself; the tables are invented for the test (not real planets).
"""
import csv
import io
import json

import pytest

from archsys.cli import main
from archsys.errors import InputError
from archsys.survey.catalog import parse_number, read_catalog
from archsys.survey.run import run_survey

HEADER = "system,planet,period,period_err,star_mass\n"
GOOD = ("Alda,Alda b,3.1,0.001,0.9\nAlda,Alda c,7.4,0.001,0.9\n"
        "Brix,Brix b,5.2,0.001,1.1\nBrix,Brix c,11.9,0.001,1.1\n")


def _survey(tmp_path, text, name="cat.csv", **kw):
    cat = tmp_path / name
    cat.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    out = tmp_path / "out"
    pop = run_survey(str(cat), str(out), mode="direct", draws=50, figures=False, jobs=1, **kw)
    rejects = list(csv.DictReader(io.StringIO((out / "rejects.csv").read_text())))
    systems = list(csv.DictReader(io.StringIO((out / "systems.csv").read_text())))
    return pop, rejects, systems


def test_truncated_last_line_is_rejected_not_padded(tmp_path):
    # the last line lost its period error and star mass: never read as 36.0 with defaults
    text = HEADER + GOOD + "Cyra,Cyra b,12.0,0.001,0.8\nCyra,Cyra c,36.0"
    pop, rejects, systems = _survey(tmp_path, text)
    assert [s["system"] for s in systems] == ["Alda", "Brix"]
    bad = [r for r in rejects if r["system"] == "Cyra"]
    assert len(bad) == 1 and bad[0]["row"] == "6"
    assert "has 3 cells but the header has 5 columns" in bad[0]["reason"]
    c = pop["counts"]
    assert c["systems_selected"] == c["systems_analysed"] + c["systems_rejected"] == 3


def test_short_row_in_the_middle(tmp_path):
    text = HEADER + "Alda,Alda b,3.1\n" + GOOD.split("\n", 1)[1]
    pop, rejects, systems = _survey(tmp_path, text)
    assert [s["system"] for s in systems] == ["Brix"]
    assert any(r["system"] == "Alda" and "truncated or short line" in r["reason"] for r in rejects)


def test_one_bad_utf8_byte_rejects_only_its_row(tmp_path):
    blob = (HEADER + GOOD).encode() + b"Cyra,Cyra b \xff,12.0,0.001,0.8\nDent,Dent b,4.0,0.001,1.0\n"
    pop, rejects, systems = _survey(tmp_path, blob)
    assert [s["system"] for s in systems] == ["Alda", "Brix", "Dent"]
    bad = [r for r in rejects if r["system"] == "Cyra"]
    assert len(bad) == 1 and "not UTF-8" in bad[0]["reason"] and "0xff" in bad[0]["reason"]


def test_bad_byte_in_the_system_cell_is_a_rowless_reject(tmp_path):
    blob = (HEADER + GOOD).encode() + b"Cy\xfera,Cyra b,12.0,0.001,0.8\n"
    pop, rejects, systems = _survey(tmp_path, blob)
    assert len(systems) == 2
    assert any(r["system"] == "" and r["row"] == "5" and "not UTF-8" in r["reason"] for r in rejects)


def test_bad_byte_in_the_header_is_fatal(tmp_path, capsys):
    cat = tmp_path / "c.csv"
    cat.write_bytes(b"system,pla\xffnet,period,star_mass\nA,A b,3,1\n")
    rc = main(["survey", str(cat), "--out", str(tmp_path / "o"), "--jobs", "1"])
    err = capsys.readouterr().err
    assert rc == 2 and err.count("\n") == 1 and "header line is not UTF-8" in err
    assert not (tmp_path / "o").exists()


def test_utf16_table_refused(tmp_path, capsys):
    cat = tmp_path / "c.csv"
    cat.write_bytes((HEADER + GOOD).encode("utf-16"))
    rc = main(["survey", str(cat), "--out", str(tmp_path / "o"), "--jobs", "1"])
    err = capsys.readouterr().err
    assert rc == 2 and "UTF-16" in err and err.count("\n") == 1


@pytest.mark.parametrize("cell", ["1_0", "3_1", "\u0663\u0666", "\uff13\uff16", "0x10", "1,0", "3.1.2", "1e",
                                  "--5", "٣.١", "12d"])
def test_not_plain_decimal_is_not_a_number(cell):
    assert parse_number(cell) is None


@pytest.mark.parametrize("cell, value", [("36.29", 36.29), (" 3 ", 3.0), ("-0.5", -0.5), ("+2e3", 2000.0),
                                         (".5", 0.5), ("5.", 5.0), ("1E-3", 1e-3), (7, 7.0)])
def test_plain_decimal_numbers(cell, value):
    assert parse_number(cell) == value


@pytest.mark.parametrize("cell", ["1_0", "\u0663\u0666"])
def test_underscore_and_non_ascii_digits_reject_their_system(tmp_path, cell):
    text = HEADER + GOOD + f"Cyra,Cyra b,{cell},0.001,0.8\n"
    pop, rejects, systems = _survey(tmp_path, text)
    assert [s["system"] for s in systems] == ["Alda", "Brix"]
    bad = [r for r in rejects if r["system"] == "Cyra"]
    assert bad and bad[0]["field"] == "period" and "not a number" in bad[0]["reason"]


def test_control_characters_in_names_are_rejected_and_escaped(tmp_path):
    text = HEADER + GOOD + "Cy\x1b[31mra,Cyra b,12.0,0.001,0.8\n"
    pop, rejects, systems = _survey(tmp_path, text)
    assert [s["system"] for s in systems] == ["Alda", "Brix"]
    raw = (tmp_path / "out" / "rejects.csv").read_text()
    assert "\x1b" not in raw and "\\x1b" in raw
    assert any("control characters" in r["reason"] for r in rejects)


def test_special_files_refused_as_catalogues(tmp_path, capsys):
    import os
    fifo = tmp_path / "c.csv"
    os.mkfifo(fifo)
    rc = main(["survey", str(fifo), "--out", str(tmp_path / "o"), "--jobs", "1"])
    err = capsys.readouterr().err
    assert rc == 2 and "named pipe" in err and err.count("\n") == 1
    assert not (tmp_path / "o").exists()


def test_oversized_catalogue_refused(tmp_path, monkeypatch):
    from archsys.survey import catalog
    monkeypatch.setattr(catalog, "MAX_TABLE_BYTES", 64)
    cat = tmp_path / "c.csv"
    cat.write_text(HEADER + GOOD)
    with pytest.raises(InputError, match="at most 64 bytes"):
        read_catalog(cat)


def test_counts_reconcile_with_bad_rows(tmp_path):
    blob = (HEADER + GOOD).encode() + b"Cyra,Cyra b,\xff,0.001,0.8\nDent,Dent b,4.0\nEsk,Esk b,1_0,0.1,1\n"
    pop, rejects, systems = _survey(tmp_path, blob)
    c = pop["counts"]
    assert c["systems_selected"] == 5 and c["systems_analysed"] == 2 and c["systems_rejected"] == 3
    assert c["rows_malformed"] == 2
    doc = json.loads((tmp_path / "out" / "population.json").read_text())
    assert doc["counts"] == c
