"""The project's references: archsys/data/references.bib (package data) and docs/references.md agree, every
entry carries its mark, and every [Key] cited in the code, the tests and the docs is an entry."""
import pathlib
import re

ROOT = pathlib.Path(__file__).resolve().parents[1]
BIB = ROOT / "archsys" / "data" / "references.bib"
PAGE = ROOT / "docs" / "references.md"
CITE = re.compile(r"\[([A-Z][A-Za-z]+\d{4}[a-z]?|IAU2012|NSSDC)\]")


def _bib_entries():
    text = BIB.read_text(encoding="utf-8")
    entries = {}
    for m in re.finditer(r"@(\w+)\{([^,\s]+),(.*?)\n\}", text, flags=re.S):
        fields = dict(re.findall(r"^\s*(\w+) = \{(.*)\},$", m.group(3), flags=re.M))
        assert m.group(2) not in entries, f"duplicate key {m.group(2)}"
        entries[m.group(2)] = (m.group(1), fields)
    return entries


def test_every_entry_is_marked_and_complete():
    entries = _bib_entries()
    assert len(entries) >= 60
    for key, (kind, fields) in entries.items():
        assert fields.get("archsys_status") in ("verified", "from memory"), key
        assert fields.get("author"), key
        if kind == "article":
            assert fields.get("journal") and fields.get("year") and fields.get("volume"), key
        # balanced braces, or BibTeX stops reading the file
        assert all(v.count("{") == v.count("}") for v in fields.values()), key


def test_page_lists_exactly_the_bib_entries_with_the_same_mark():
    entries = _bib_entries()
    page = PAGE.read_text(encoding="utf-8")
    listed = dict(re.findall(r'<a id="([^"]+)"></a>\*\*\1\*\* — .*?\*(verified|from memory)\.\*', page))
    assert set(listed) == set(entries)
    for key, mark in listed.items():
        assert entries[key][1]["archsys_status"] == mark, key


def test_every_cited_key_exists():
    keys = set(_bib_entries())
    files = [*ROOT.joinpath("archsys").rglob("*.py"), *ROOT.joinpath("tests").rglob("*.py"),
             ROOT / "README.md", ROOT / "DEVELOPERS.md", PAGE]
    missing = {}
    for f in files:
        for key in CITE.findall(f.read_text(encoding="utf-8")):
            if key not in keys:
                missing.setdefault(key, f.name)
    assert not missing, missing


def test_bib_is_package_data():
    text = (ROOT / "pyproject.toml").read_text()
    assert '"archsys.data" = ["references.bib"]' in text
