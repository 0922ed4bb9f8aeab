"""Prior files: the bundled priors (``priors/*.toml``), users' own files, and the defaults.

The id accepted by ``--prior`` / ``--incl-prior`` is a bundled file's name without ``.toml``,
which is also the file's ``name`` field; a path to a ``.toml`` file in the same format works
the same way.  The distributions themselves are :class:`archsys.inference.priors.Prior`.

File format
-----------
::

    name = "ecc-kipping2013-rv"      # id; for bundled files = file name
    quantity = "eccentricity"        # or "mutual_inclination_sigma" (deg)
    family = "beta"                  # see FAMILIES below
    description = "one line"         # optional
    [parameters]                     # exactly the family's parameters
    alpha = 0.867
    beta = 3.03
    [uncertainty]                    # optional, published 1-sigma errors
    alpha = {value = 0.867, err = 0.044}
    beta = {value = 3.03, err_plus = 0.17, err_minus = 0.16}
    [source]                         # required
    citation = "Kipping, D. M. 2013, MNRAS 434, L51"
    from_memory = false              # true: numbers not checked in the paper
    note = "free text"               # optional
    [applies]                        # optional, all keys optional
    period_min_days = 0.0
    period_max_days = 382.3
    n_planets_min = 2
    n_planets_max = 1
    population = "free text"

Any problem with a file raises :class:`archsys.errors.InputError` with one
line naming the file and the field.
"""
from __future__ import annotations

import functools
import importlib.resources
import pathlib

from archsys.errors import InputError

from .priors import DEFAULT_PRIORS, Prior

__all__ = ["load_prior", "list_priors", "default_prior"]

_TOP_KEYS = {"name", "quantity", "family", "description", "parameters",
             "uncertainty", "source", "applies"}
_SOURCE_KEYS = {"citation", "from_memory", "note"}
_APPLIES_KEYS = {"period_min_days": float, "period_max_days": float,
                 "n_planets_min": int, "n_planets_max": int, "population": str}
_UNCERTAINTY_KEYS = {"value", "err", "err_plus", "err_minus"}


def _require(table, key, kind, src, prefix=""):
    field = prefix + key
    if key not in table:
        raise InputError(f"field '{field}': missing", source=src, field=field)
    v = table[key]
    if not isinstance(v, kind) or (kind is str and not v.strip()):
        raise InputError(f"field '{field}': must be a non-empty {kind.__name__}; got {v!r}",
                         source=src, field=field)
    return v


def _check_unknown(table, allowed, src, prefix=""):
    extra = sorted(set(table) - set(allowed))
    if extra:
        field = prefix + extra[0]
        raise InputError(f"field '{field}': unknown key; allowed: {', '.join(sorted(allowed))}",
                         source=src, field=field)


def _table(doc, key, src, required):
    if key not in doc:
        if required:
            raise InputError(f"field '[{key}]': missing table", source=src, field=key)
        return {}
    if not isinstance(doc[key], dict):
        raise InputError(f"field '{key}': must be a table", source=src, field=key)
    return doc[key]


def _check_uncertainty(unc, params, src):
    for k, entry in unc.items():
        field = f"uncertainty.{k}"
        if k not in params:
            raise InputError(f"field '{field}': no parameter of that name", source=src, field=field)
        if not isinstance(entry, dict):
            raise InputError(f"field '{field}': must be a table like "
                             "{value = 1.0, err = 0.1}", source=src, field=field)
        _check_unknown(entry, _UNCERTAINTY_KEYS, src, prefix=field + ".")
        for sub, v in entry.items():
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise InputError(f"field '{field}.{sub}': must be a number; got {v!r}",
                                 source=src, field=f"{field}.{sub}")
        if "err" not in entry and not {"err_plus", "err_minus"} <= set(entry):
            raise InputError(f"field '{field}': give err, or err_plus and err_minus",
                             source=src, field=field)
    return unc


def _check_applies(app, src):
    _check_unknown(app, _APPLIES_KEYS, src, prefix="applies.")
    for k, v in app.items():
        kind = _APPLIES_KEYS[k]
        ok = isinstance(v, str) if kind is str else (
            not isinstance(v, bool) and isinstance(v, int if kind is int else (int, float)))
        if not ok or (kind is not str and v < 0):
            raise InputError(f"field 'applies.{k}': must be a non-negative {kind.__name__}; "
                             f"got {v!r}", source=src, field=f"applies.{k}")
    return app


def _parse_file(path, bundled=False):
    path = pathlib.Path(path)
    src = str(path)
    from archsys.limits import parse_toml
    from archsys.model.inputfile import read_input_bytes
    if not path.exists():
        raise InputError("prior file not found", source=src)
    blob = read_input_bytes(path, "prior file (.toml)")
    try:
        text = blob.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("not valid TOML: not UTF-8 text", source=src) from None
    doc = parse_toml(text, src, "prior file")
    _check_unknown(doc, _TOP_KEYS, src)
    name = _require(doc, "name", str, src)
    if bundled and name != path.stem:
        raise InputError(f"field 'name': {name!r} must equal the file name {path.stem!r}",
                         source=src, field="name")
    quantity = _require(doc, "quantity", str, src)
    family = _require(doc, "family", str, src)
    description = doc.get("description", "")
    if not isinstance(description, str):
        raise InputError("field 'description': must be a string", source=src, field="description")
    params = _table(doc, "parameters", src, required=True)
    source = _table(doc, "source", src, required=True)
    _check_unknown(source, _SOURCE_KEYS, src, prefix="source.")
    citation = _require(source, "citation", str, src, prefix="source.")
    from_memory = _require(source, "from_memory", bool, src, prefix="source.")
    note = source.get("note", "")
    if not isinstance(note, str):
        raise InputError("field 'source.note': must be a string", source=src, field="source.note")
    unc = _check_uncertainty(_table(doc, "uncertainty", src, required=False), params, src)
    applies = _check_applies(_table(doc, "applies", src, required=False), src)
    return Prior(name=name, quantity=quantity, family=family, parameters=params,
                 citation=citation, from_memory=from_memory, description=description,
                 note=note, applies=applies, uncertainty=unc, path=src)


# ---- bundled files -----------------------------------------------------------
def _bundled_files():
    """{name: path} of the bundled TOML files (installed package, else source tree)."""
    try:
        root = importlib.resources.files("archsys.data.priors")
        files = {p.name[:-5]: p for p in root.iterdir() if p.name.endswith(".toml")}
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError, TypeError):
        files = {}
    if not files:  # running from the source tree
        root = pathlib.Path(__file__).resolve().parents[2] / "priors"
        files = {p.stem: p for p in root.glob("*.toml")}
    return dict(sorted(files.items()))


@functools.lru_cache(maxsize=None)
def _load_bundled(name):
    path = _bundled_files()[name]
    with importlib.resources.as_file(path) as real:
        return _parse_file(real, bundled=True)


def load_prior(name_or_path):
    """Load a bundled prior by id (e.g. ``"ecc-kipping2013-rv"``) or a user TOML file.

    A value that names an existing file, ends in ``.toml`` or contains a path
    separator is read as a path; anything else must be a bundled id.
    """
    if isinstance(name_or_path, Prior):
        return name_or_path
    text = str(name_or_path)
    p = pathlib.Path(text)
    if isinstance(name_or_path, pathlib.PurePath) or text.endswith(".toml") \
            or "/" in text or "\\" in text or p.is_file():
        return _parse_file(p)
    bundled = _bundled_files()
    if text not in bundled:
        raise InputError(f"unknown prior {text!r}; bundled priors: {', '.join(bundled)} "
                         "(or give a path to a .toml file)", field="prior")
    return _load_bundled(text)


def list_priors():
    """All bundled priors, sorted by quantity then name."""
    priors = [_load_bundled(n) for n in _bundled_files()]
    return sorted(priors, key=lambda p: (p.quantity, p.name))


def default_prior(quantity, n_planets=None):
    """The prior used when the user chooses none.

    ``eccentricity`` -> ``ecc-uniform`` (flat on [0, 1), least informative);
    ``mutual_inclination_sigma`` -> ``incl-loguniform`` (log-uniform sigma on
    [0.1, 60] deg, weakly informative about the scale).  The defaults do not
    depend on multiplicity, so a published population is never applied
    without being asked for; ``n_planets`` is only checked (a mutual
    inclination needs at least two planets).
    """
    if quantity not in DEFAULT_PRIORS:
        raise ValueError(f"quantity must be one of {', '.join(DEFAULT_PRIORS)}; got {quantity!r}")
    if n_planets is not None:
        if int(n_planets) < 1:
            raise ValueError(f"n_planets must be >= 1; got {n_planets}")
        if quantity == "mutual_inclination_sigma" and int(n_planets) < 2:
            raise ValueError(f"a mutual-inclination prior needs >= 2 planets; got {n_planets}")
    return load_prior(DEFAULT_PRIORS[quantity])
