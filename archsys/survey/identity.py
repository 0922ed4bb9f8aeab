"""Identity of catalogue rows and systems: text that is not UTF-8, over-long cells, Unicode spellings.

* Every format is held to the rule of CSV files: a cell whose bytes are not
  UTF-8 (a Parquet binary id ``b'Al\\xff'``) is never decoded with
  replacement characters -- two different ids would become one -- but
  rejects its row (:func:`screen_rows`), and the row's system when the
  system cell itself is readable.
* A cell longer than :data:`archsys.limits.MAX_CELL_CHARS` characters rejects
  its row, never the survey.
* System ids are compared in Unicode normal form C (:func:`system_key`), so
  "Café" typed with a precomposed é and with e + combining accent is one
  system; :func:`merge_notes` says when two spellings were merged.
"""
from __future__ import annotations

import re
import unicodedata

from ..limits import MAX_CELL_CHARS

__all__ = ["decode_cell", "screen_rows", "system_key", "merge_notes", "bad_text"]

_NOT_UTF8 = re.compile("[\udc80-\udcff]")


def decode_cell(b: bytes) -> str:
    """Bytes of a cell as text; bytes that are not UTF-8 stay marked (surrogate escapes), never replaced."""
    return bytes(b).decode("utf-8", "surrogateescape")


def bad_text(s):
    """Why the text cell ``s`` cannot be used, or None."""
    if not isinstance(s, str) or s.isascii() and len(s) <= MAX_CELL_CHARS:
        return None
    m = _NOT_UTF8.search(s)
    if m:
        return f"not UTF-8 text (byte 0x{ord(m.group(0)) - 0xdc00:02x})"
    if len(s) > MAX_CELL_CHARS:
        return f"{len(s)} characters; a cell may have at most {MAX_CELL_CHARS}"
    return None


def screen_rows(header, cols, malformed, raw, offset=0):
    """Mark rows with an unusable cell as malformed (reason names the column); blank their cells.

    ``cols``: column -> list of cells (changed in place); ``malformed``: list of
    (row, reason), extended; ``raw``: row -> raw cells of a malformed row, extended.
    ``offset``: rows of the table before ``cols`` (a table screened block by block):
    cell ``i`` of a column is row ``offset + i + 1``.
    """
    known = {r for r, _ in malformed}
    found = {}
    for h in header:
        col = cols[h]
        # the common case (short ASCII text, numbers) is one pass without a call per cell
        suspects = [i for i, v in enumerate(col)
                    if v.__class__ is str and not (len(v) <= MAX_CELL_CHARS and v.isascii())]
        for i in suspects:
            row = offset + i + 1
            if row not in known and row not in found:
                why = bad_text(col[i])
                if why:
                    found[row] = f"column '{h[:60]}': {why}; the row is skipped"
    for row in sorted(found):
        raw[row] = [cols[h][row - offset - 1] for h in header]
        for h in header:
            cols[h][row - offset - 1] = None
        malformed.append((row, found[row]))
    malformed.sort()
    return malformed, raw


def system_key(sid: str) -> str:
    """The grouping key of a system id: Unicode normal form C."""
    return unicodedata.normalize("NFC", sid)


def merge_notes(spellings):
    """One note per system whose id appeared in several Unicode spellings.

    ``spellings``: NFC id -> set of spellings seen in the table.
    """
    out = []
    for key in sorted(spellings):
        seen = spellings[key]
        if len(seen) > 1:
            forms = " and ".join(ascii(s) for s in sorted(seen))
            out.append(f"survey: note: system ids {forms} are one name in different Unicode spellings; "
                       f"their rows are one system {ascii(key)}")
    return out
