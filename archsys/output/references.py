r"""What to cite: the papers whose methods, constants or priors produced a run's numbers.

The library is the project's BibTeX file ``archsys/data/references.bib``.  The
short citation forms archsys writes in its outputs ("Gladman 1993", "Laskar &
Petit 2017", "Petit, Laskar & Boue 2017", "Van Eylen et al. 2019") are derived
from each entry's authors and year; an optional ``archsys`` field adds others.  :func:`run_references`
reads a report document (or a survey's ``population.json``) and returns the
entries its numbers rest on, each with the reason; :func:`render_bib` writes
``NAME.bib``; :func:`cite_latex` turns citation texts inside LaTeX into
``\citet`` / ``\citealt`` commands with those keys; :func:`render_citations` is
what ``archsys cite`` prints.

Which entries a run needs is decided from structured parts of the document:
always Kepler's third law with the IAU 2015 nominal constants; the sampler
block (emcee when the orientation chain ran, the Pareto-smoothed importance
diagnostic when importance weights were used); the priors that ran; each
structured verdict's ``citation``; the citation fields of the timing and
packing blocks; masses from the mass-radius relation (the ``estimated`` codes);
transit probabilities; N-body checks.  A citation text no entry matches is kept
and listed as "not in the library" (never silently dropped).
"""
from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["Entry", "library", "keys_in", "run_references", "render_bib", "cite_latex", "render_citations",
           "LATEX_FALLBACK"]

_BIB = Path(__file__).resolve().parents[1] / "data" / "references.bib"

#: Lines for a fragment that must compile without natbib (the plain ``.tex``).
LATEX_FALLBACK = [r"\providecommand{\citet}[1]{\cite{#1}}", r"\providecommand{\citealt}[1]{\cite{#1}}"]


@dataclass
class Entry:
    key: str
    kind: str
    fields: dict
    text: str                                # the entry as written in the library (without the archsys field)
    forms: list = field(default_factory=list)

    @property
    def short(self):
        return self.forms[0] if self.forms else self.key


def _norm(text):
    t = unicodedata.normalize("NFKD", str(text))
    return "".join(ch for ch in t if ch.isalnum()).lower()


def _split_entries(text):
    """(kind, key, body) of each ``@kind{key, ...}`` in BibTeX text (balanced braces)."""
    out, i = [], 0
    while True:
        m = re.compile(r"@(\w+)\s*\{\s*([^,\s]+)\s*,").search(text, i)
        if not m:
            return out
        depth, j = 1, m.end()
        while j < len(text) and depth:
            depth += {"{": 1, "}": -1}.get(text[j], 0)
            j += 1
        out.append((m.group(1).lower(), m.group(2), text[m.start():j]))
        i = j


def _fields(body):
    out = {}
    for m in re.finditer(r"(\w+)\s*=\s*\{", body):
        depth, j = 1, m.end()
        while j < len(body) and depth:
            depth += {"{": 1, "}": -1}.get(body[j], 0)
            j += 1
        out[m.group(1).lower()] = body[m.end():j - 1]
    return out


_LIBRARY = None


def _plain(text):
    """A BibTeX name without LaTeX accents and braces: 'Pr{\\v{s}}a' -> 'Prsa', 'Bou{\\'e}' -> 'Boue'."""
    t = re.sub(r"\\[a-zA-Z]+\s*|\\.", "", str(text))
    return t.replace("{", "").replace("}", "").strip()


def _author_forms(fields):
    """Short citation forms of an entry from its authors and year: 'A Y', 'A & B Y', 'A, B & C Y',
    'A et al. Y'."""
    year = fields.get("year", "").strip()
    authors = [a.strip() for a in re.split(r"\s+and\s+", fields.get("author", "")) if a.strip()]
    names = []
    for a in authors:
        if a.lower() == "others":
            names.append(None)
            continue
        sur = a.split(",")[0] if "," in a else a.split()[-1]
        names.append(_plain(sur))
    if not year or not names or names[0] is None:
        return []
    first = names[0]
    forms = [f"{first} et al. {year}"]
    real = [n for n in names if n]
    if len(names) == 1:
        forms.insert(0, f"{first} {year}")
    elif len(names) == 2 and None not in names:
        forms.insert(0, f"{names[0]} & {names[1]} {year}")
    elif None not in names:
        forms.insert(0, f"{', '.join(real[:-1])} & {real[-1]} {year}")
    return forms


def library(path=None):
    """{key: Entry} of the project's BibTeX library (read once)."""
    global _LIBRARY
    if path is None and _LIBRARY is not None:
        return _LIBRARY
    text = Path(path or _BIB).read_text(encoding="utf-8")
    lib = {}
    for kind, key, body in _split_entries(text):
        f = _fields(body)
        forms = _author_forms(f) + [s.strip() for s in f.get("archsys", "").split(";") if s.strip()]
        clean = re.sub(r"\n\s*archsys\s*=\s*\{[^{}]*\},?", "", body)
        lib[key] = Entry(key, kind, f, clean, forms)
    if path is None:
        _LIBRARY = lib
    return lib


def _index():
    idx = {}
    for e in library().values():
        for form in e.forms:
            idx[_norm(form)] = e.key
    return idx


_YEAR = re.compile(r"(19|20)\d\d[a-z]?")


def _spans(text):
    """(start, end, citation text) of each 'Author[, Author & Author | et al.] YEAR' in ``text``."""
    out = []
    for m in _YEAR.finditer(text):
        start = m.start()
        # walk back over the author list: words, commas, '&', 'and', 'et al.', initials
        k = start
        seg = text[:start]
        mm = re.search(r"((?:[A-Z]\.(?:-[A-Z]\.)?,?\s*(?:&\s*|and\s+)?|"
                       r"[A-Z][\w'\-\u00c0-\u017f]*\.?,?\s*(?:&\s*|and\s+)?|(?:et al\.?)\s*)+)$", seg)
        if mm:
            k = mm.start(1)
        if k < start:
            out.append((k, m.end(), text[k:m.end()]))
    return out


def keys_in(text):
    """(keys, unmatched): library keys of the citation texts in ``text``, and texts no entry matches."""
    idx = _index()
    keys, missing = [], []
    for _, _, cite in _spans(str(text or "")):
        key = _match(cite, idx)
        if key:
            if key not in keys:
                keys.append(key)
        elif cite not in missing:
            missing.append(cite.strip())
    return keys, missing


def _match(cite, idx):
    n = _norm(cite)
    if n in idx:
        return idx[n]
    for form, key in idx.items():        # the text may carry more words before the authors
        if n.endswith(form) and form[-4:] == n[-4:]:
            return key
    # 'Kipping, D. M. 2013' or 'Fabrycky, D. C. et al. 2014': drop initials, compare surname + year
    year = cite.strip()[-4:]
    sur = re.match(r"\s*([A-Z][\w'\-\u00c0-\u017f]+(?:\s+[A-Z][\w'\-]+)?)", cite)
    if sur and len(_norm(sur.group(1))) >= 2:
        for key, e in library().items():
            if e.fields.get("year", "") == year and _norm(e.forms[0] if e.forms else "").startswith(
                    _norm(sur.group(1))):
                return key
    return None


# --- what a run needs ------------------------------------------------------------------------
def _texts(doc):
    """(reason, citation text) pairs read from the structured parts of a document."""
    out = []
    prov = doc.get("provenance") or {}
    for q, pr in (prov.get("priors") or {}).items():
        if isinstance(pr, dict) and pr.get("citation"):
            out.append((f"prior on {q.replace('_', ' ')} ({pr.get('name', '?')})", pr["citation"]))
        elif isinstance(pr, str):
            out.append((q.replace("_", " "), pr))
    for v in doc.get("structured_verdicts") or []:
        if v.get("citation"):
            out.append((str(v.get("criterion") or v.get("code") or "verdict"), v["citation"]))
    for block, what in (("timing", "super-periods and TTV amplitudes"), ("packing", "room for planets"),
                        ("amd", "AMD stability"), ("spacing_heuristic", "instability-time heuristic")):
        b = doc.get(block)
        if isinstance(b, dict):
            for k in ("citation", "criterion", "label"):
                if isinstance(b.get(k), str):
                    out.append((what, b[k]))
    if doc.get("gap_complexity") is not None:
        out.append(("gap complexity", "Gilbert & Fabrycky 2020"))
    if any(p.get("transit_probability") is not None for p in doc.get("planets") or []):
        out.append(("transit probabilities", "Winn 2010"))
    if any("mass_radius_relation" in (p.get("estimated") or {}).values() for p in doc.get("planets") or []):
        out.append(("masses from the mass-radius relation", "Weiss & Marcy 2014; Chen & Kipping 2017"))
    if isinstance(doc.get("nbody"), dict):
        out.append(("N-body check (WHFast, MEGNO)", "Rein & Liu 2012; Rein & Tamayo 2015; Cincotta & Simo 2000"))
    return out


def _sampler_texts(doc):
    smp = doc.get("sampler") or {}
    out = []
    if "walkers" in smp or "emcee" in str(smp.get("method", "")).lower():
        out.append(("MCMC sampling", "Foreman-Mackey et al. 2013"))
    if smp.get("importance") or smp.get("orientation_pilot"):
        out.append(("importance weights: Pareto k-hat diagnostic", "Vehtari et al. 2024"))
    if doc.get("eccentricity_population") or doc.get("mutual_inclination_population"):
        out.append(("hierarchical population fits (importance sampling of per-system posteriors, emcee)",
                    "Hogg, Myers & Bovy 2010; Foreman-Mackey et al. 2013"))
    if isinstance(doc.get("transit_multiplicity"), dict) and doc["transit_multiplicity"].get("fit"):
        out.append(("transit-multiplicity fit (emcee)", "Foreman-Mackey et al. 2013"))
    if doc.get("counts") and "systems_analysed" in (doc.get("counts") or {}):
        out.append(("per-system analyses (Hill stability)", "Gladman 1993"))
    return out


def run_references(doc):
    """(entries, unmatched): ``[(Entry, [reasons])]`` a run's numbers rest on, in order of first use,
    and ``[(reason, citation text)]`` no library entry matches."""
    lib = library()
    pairs = [("Kepler's third law with the IAU 2015 nominal constants", "Prsa et al. 2016")]
    pairs += _sampler_texts(doc) + _texts(doc)
    used, unmatched = {}, []
    for reason, text in pairs:
        keys, missing = keys_in(text)
        for k in keys:
            used.setdefault(k, [])
            if reason not in used[k]:
                used[k].append(reason)
        for m in missing:
            if (reason, m) not in unmatched:
                unmatched.append((reason, m))
    return [(lib[k], why) for k, why in used.items()], unmatched


def render_bib(doc) -> str:
    """``NAME.bib``: the library entries of :func:`run_references`, each with a comment on why."""
    entries, unmatched = run_references(doc)
    name = doc.get("system") or "survey"
    L = [f"% References of the archsys run on {name}: the papers whose methods, constants or priors",
         "% produced its numbers. Each entry's archsys_status says whether it was verified against the",
         "% paper or is from memory.", ""]
    for e, why in entries:
        L += [f"% used for: {'; '.join(why)}", e.text.strip(), ""]
    for reason, text in unmatched:
        L.append(f"% not in the archsys library (cite by hand): {text} ({reason})")
    return "\n".join(L).rstrip() + "\n"


def cite_latex(escaped_text, parenthetical=None):
    r"""LaTeX text with every citation text of the library replaced by its key.

    A citation inside parentheses becomes ``\citealt{Key}``, elsewhere ``\citet{Key}``; a text no
    entry matches is kept as written.  ``escaped_text`` is already LaTeX-escaped (``\&``).
    """
    text = str(escaped_text)
    plain = text.replace(r"\&", "&")
    idx = _index()
    out, pos = [], 0
    for a, b, cite in _spans(plain):
        key = _match(cite, idx)
        if not key:
            continue
        # map plain offsets back onto the escaped text (only '\&' differs)
        ea, eb = _escaped_offset(text, a), _escaped_offset(text, b)
        if ea < pos:
            continue
        inside = parenthetical if parenthetical is not None else plain[:a].count("(") > plain[:a].count(")")
        out.append(text[pos:ea])
        out.append(("\\citealt{%s}" if inside else "\\citet{%s}") % key)
        pos = eb
    out.append(text[pos:])
    return "".join(out)


def _escaped_offset(text, plain_offset):
    i = p = 0
    while p < plain_offset and i < len(text):
        i += 2 if text.startswith(r"\&", i) else 1
        p += 1
    return i


def render_citations(doc) -> str:
    """What ``archsys cite`` prints: one line per paper (key, short form, why), then the BibTeX."""
    entries, unmatched = run_references(doc)
    name = doc.get("system") or "survey"
    L = [f"What to cite for the archsys run on {name}:"]
    for e, why in entries:
        L.append(f"  \\citet{{{e.key}}}  {e.short}: {'; '.join(why)}")
    for reason, text in unmatched:
        L.append(f"  (not in the library) {text}: {reason}")
    return "\n".join(L) + "\n\n" + render_bib(doc)
