"""Root cause 1 of issue 22: a damaged or foreign survey store.

README promises backed: "the store checks itself" (a checksum per system, verified on --resume;
what can be re-analysed is repaired, and the outputs equal an uninterrupted run's), "never a
partial table with exit status 0", "one line, exit 2" for a store that cannot be used (the file is
left untouched).  Behaviour checks of archsys itself; the catalogue is invented for the test.
"""
import sqlite3

import numpy as np
import pytest

from archsys.cli import main
from archsys.errors import InputError
from cli_checks import one_line_exit_2

CAT = ("system,planet,period,period_err,ecc,ecc_err,star_mass\n"
       "Alda,Alda b,3.1,0.001,0.10,0.03,0.9\nAlda,Alda c,7.4,0.001,0.05,0.02,0.9\n"
       "Brix,Brix b,5.2,0.001,0.20,0.05,1.1\nBrix,Brix c,11.9,0.001,0.10,0.04,1.1\n"
       "Cyra,Cyra b,2.2,0.001,0.02,0.01,0.8\nCyra,Cyra c,4.9,0.001,0.10,0.05,0.8\n")
SURVEY = ["--mode", "direct", "--draws", "50", "--jobs", "1", "--no-figures", "--quiet"]
OUTPUTS = ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json")


def _run(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


@pytest.fixture
def surveyed(tmp_path, capsys):
    """A finished survey: (catalogue, out, {output file: bytes})."""
    cat, out = tmp_path / "cat.csv", tmp_path / "out"
    cat.write_text(CAT)
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err
    return cat, out, {f: (out / f).read_bytes() for f in OUTPUTS}


def _sql(out, *statements):
    db = sqlite3.connect(str(out / "survey.sqlite"), isolation_level=None)
    try:
        for s in statements:
            db.execute(s)
    finally:
        db.close()


def _resume_repairs(cat, out, base, capsys, token):
    for f in OUTPUTS:
        (out / f).unlink()
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    assert rc == 0, err
    assert "Traceback" not in err
    notes = [x for x in err.splitlines() if "note:" in x]
    assert notes and any(token in x for x in notes), err
    for f in OUTPUTS:                       # repaired: the same bytes as the uninterrupted run
        assert (out / f).read_bytes() == base[f], f


# ------------------------------------------------------------------ damage --resume repairs
def test_dropped_pairs_table_is_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "DROP TABLE pairs")
    _resume_repairs(cat, out, base, capsys, "pairs")


def test_deleted_planet_rows_are_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "DELETE FROM planets WHERE system = 'Brix'")
    _resume_repairs(cat, out, base, capsys, "'Brix'")


def test_unknown_status_is_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "UPDATE systems SET status = 'half-done' WHERE system = 'Cyra'")
    _resume_repairs(cat, out, base, capsys, "unknown status")


def test_malformed_json_row_is_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "UPDATE pairs SET row_json = '{\"system\": ' WHERE system = 'Alda'")
    _resume_repairs(cat, out, base, capsys, "malformed JSON")


def test_short_sample_blob_is_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "UPDATE planets SET ecc_samples = X'0102030405' WHERE system = 'Alda' AND idx = 0")
    _resume_repairs(cat, out, base, capsys, "5 bytes")


def test_nan_samples_are_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    db = sqlite3.connect(str(out / "survey.sqlite"), isolation_level=None)
    db.execute("UPDATE planets SET ecc_samples = ? WHERE system = 'Brix' AND idx = 1",
               (np.full(100, np.nan).tobytes(),))
    db.close()
    _resume_repairs(cat, out, base, capsys, "non-finite")


def test_changed_value_fails_the_checksum_and_is_repaired(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "UPDATE systems SET n_planets = 2, row_json = replace(row_json, '\"n_pairs\": 1', "
              "'\"n_pairs\": 1 ') WHERE system = 'Alda'")
    _resume_repairs(cat, out, base, capsys, "checksum")


# ------------------------------------------------------------------ stores that are refused (untouched)
def _refused_untouched(cat, out, capsys, *tokens):
    before = (out / "survey.sqlite").read_bytes()
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    one_line_exit_2(rc, err, "survey.sqlite", *tokens)
    assert (out / "survey.sqlite").read_bytes() == before          # never changed by the refusal


def test_random_bytes_as_store_refused(tmp_path, capsys):
    cat, out = tmp_path / "cat.csv", tmp_path / "out"
    cat.write_text(CAT)
    out.mkdir()
    (out / "survey.sqlite").write_bytes(np.random.default_rng(1).bytes(8192))
    _refused_untouched(cat, out, capsys, "not an SQLite database", "move survey.sqlite")


def test_foreign_sqlite_file_refused(tmp_path, capsys):
    cat, out = tmp_path / "cat.csv", tmp_path / "out"
    cat.write_text(CAT)
    out.mkdir()
    db = sqlite3.connect(str(out / "survey.sqlite"))
    db.execute("CREATE TABLE observations (id INTEGER, flux REAL)")
    db.execute("INSERT INTO observations VALUES (1, 2.5)")
    db.commit()
    db.close()
    _refused_untouched(cat, out, capsys, "unknown table 'observations'")


def test_foreign_schema_with_the_same_table_name_refused(tmp_path, capsys):
    cat, out = tmp_path / "cat.csv", tmp_path / "out"
    cat.write_text(CAT)
    out.mkdir()
    db = sqlite3.connect(str(out / "survey.sqlite"))
    db.execute("CREATE TABLE systems (id INTEGER, label TEXT)")
    db.commit()
    db.close()
    _refused_untouched(cat, out, capsys, "table 'systems' has columns id, label")


def test_store_without_manifest_refused(surveyed, capsys):
    cat, out, _ = surveyed
    _sql(out, "DELETE FROM manifest")
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    one_line_exit_2(rc, err, "manifest is missing")


def test_store_with_unreadable_pages_refused(surveyed, capsys):
    cat, out, _ = surveyed
    _sql(out, "PRAGMA wal_checkpoint(TRUNCATE)")
    p = out / "survey.sqlite"
    blob = bytearray(p.read_bytes())
    page = 4096
    assert len(blob) > 3 * page
    blob[2 * page:3 * page] = np.random.default_rng(2).bytes(page)   # one page of random bytes
    p.write_bytes(bytes(blob))
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    one_line_exit_2(rc, err, "survey.sqlite")


# ------------------------------------------------------------------ never a partial table with exit 0
def test_reconcile_refuses_missing_rows():
    from archsys.survey.store_check import reconcile
    status = [("Alda", "ok", 2, None, {"n_pairs": 1}), ("Brix", "rejected", 2, "input", None)]
    planets = [{"system": "Alda", "planet": "Alda b"}]
    with pytest.raises(InputError, match="lacks some of its planet or pair rows"):
        reconcile(status, planets, [{"system": "Alda"}])
    with pytest.raises(InputError, match="unknown status"):
        reconcile([("Cyra", "odd", 1, None, None)], [], [])
    reconcile(status, planets + [{"system": "Alda", "planet": "Alda c"}], [{"system": "Alda"}])


def test_damaged_store_between_store_and_finish_writes_nothing(tmp_path, capsys, monkeypatch):
    # rows vanish after the systems were stored and before the tables are written: exit 2, no table
    from archsys.survey import run as survey_run
    cat, out = tmp_path / "cat.csv", tmp_path / "out"
    cat.write_text(CAT)
    real = survey_run._finish

    def damaged_finish(store, *a, **k):
        store.db.execute("DELETE FROM pairs WHERE system = 'Alda'")
        return real(store, *a, **k)
    monkeypatch.setattr(survey_run, "_finish", damaged_finish)
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    one_line_exit_2(rc, err, "'Alda'", "--resume")
    assert sorted(p.name for p in out.iterdir() if not p.name.startswith("survey.sqlite")) == []
    monkeypatch.setattr(survey_run, "_finish", real)
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    assert rc == 0, err
    assert (out / "pairs.csv").read_text().count("\nAlda,") == 1


def test_store_is_sealed_per_system(surveyed):
    from archsys.survey.store import SurveyStore
    _, out, _ = surveyed
    st = SurveyStore(out)
    try:
        seals = dict(st.db.execute("SELECT system, digest FROM checks"))
        assert sorted(seals) == ["Alda", "Brix", "Cyra"]
        assert all(len(d) == 64 for d in seals.values())
    finally:
        st.close()


# ------------------------------------------------------------------ compressed documents
def test_documents_are_stored_compressed_and_read_back(surveyed):
    import json

    from archsys.survey.store import SurveyStore, unpack_document
    _, out, _ = surveyed
    db = sqlite3.connect(str(out / "survey.sqlite"))
    raw = db.execute("SELECT document FROM systems WHERE system = 'Alda'").fetchone()[0]
    db.close()
    assert isinstance(raw, bytes)
    store = SurveyStore(out)
    try:
        doc = store.document("Alda")
    finally:
        store.close()
    assert doc["system"] == "Alda" and len(doc["planets"]) == 2
    assert len(raw) < len(json.dumps(doc)) / 2                      # zlib: well under the text size
    assert unpack_document(json.dumps(doc)) == doc                   # a text document (older store) reads too


def test_damaged_compressed_document_is_repaired_on_resume(surveyed, capsys):
    cat, out, base = surveyed
    _sql(out, "UPDATE systems SET document = X'789c0001' WHERE system = 'Brix'")
    _resume_repairs(cat, out, base, capsys, "'Brix'")
