"""Names of output files and printable user text: safe, distinct stems and escaped control characters.
"""
from __future__ import annotations

import hashlib
import re

__all__ = ["safe_name", "unique_stems", "printable"]

_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_name(name, fallback="system"):
    """A file-name stem from a system or planet name: no separators, no traversal, no hidden files."""
    s = _UNSAFE.sub("_", str(name)).strip("._-")
    s = s.replace("..", "_")
    return (s or fallback)[:80]


def _short_hash(text):
    return hashlib.sha256(str(text).encode("utf-8", "surrogatepass")).hexdigest()[:8]


def unique_stems(names, fallback="system", reserved=()):
    """Distinct file-name stems for ``names``, the same whatever else is in the run's order.

    A name whose stem is already unique keeps :func:`safe_name`'s stem.  When
    stems collide (compared without case, for case-insensitive file systems),
    every name that sanitising changed gets ``-`` and the first 8 hex digits of
    the SHA-256 of the name ("Col/X" -> "Col_X-1c2d...", "Col_X" stays), and so
    does every unchanged name but the first in code-point order ("korrin" gets
    a hash beside "Korrin", in whatever order they come); stems
    still equal after that (the same name twice) get ``-2``, ``-3``, ... in
    order.  ``reserved``: stems taken already (e.g. ``"system"``).

    Returns
    -------
    stems : list of str
    renamed : list of (name, stem) for the names whose stem is not plain
        ``safe_name(name)``, so that a caller can say so.
    """
    names = [str(n) for n in names]
    base = [safe_name(n, fallback) for n in names]
    taken = {r.lower() for r in reserved}
    counts = {}
    for b in base:
        counts[b.lower()] = counts.get(b.lower(), 0) + 1
    # among distinct names whose stems collide, only the first in code-point order of those that
    # sanitising left unchanged keeps the plain stem ("Korrin" vs "korrin"): the same in any argument order
    keeper = {}
    for n, b in zip(names, base):
        if b == n and b.lower() not in taken:
            keeper[b.lower()] = min(keeper.get(b.lower(), n), n)
    stems = []
    for n, b in zip(names, base):
        if (counts[b.lower()] > 1 and keeper.get(b.lower()) != n) or (b.lower() in taken and b != n):
            b = f"{b[:71]}-{_short_hash(n)}"
        stems.append(b)
    seen, out = set(taken), []
    for s in stems:
        cand, k = s, 1
        while cand.lower() in seen:
            k += 1
            cand = f"{s}-{k}"
        seen.add(cand.lower())
        out.append(cand)
    renamed = [(n, s) for n, s, b in zip(names, out, base) if s != b]
    return out, renamed


_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def printable(text, keep_newlines=False):
    """``text`` with control characters escaped as ``\\xNN`` / ``\\uNNNN``.

    NUL, ESC (terminal escape sequences), other C0/C1 controls, DEL, line and
    paragraph separators and bidirectional overrides are escaped; tabs stay,
    and line ends (LF, CR) stay when ``keep_newlines`` (otherwise they are escaped too).
    """
    s = str(text)

    def esc(m):
        c = m.group(0)
        return f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}"
    s = _CONTROL.sub(esc, s)
    if not keep_newlines:
        s = s.replace("\n", "\\n").replace("\r", "\\r")
    return s
