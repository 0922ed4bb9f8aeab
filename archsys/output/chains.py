"""Saved posterior chains: one NumPy ``.npz`` file per system, never pickled.

Layout of the file (format ``archsys-chains``, version 1):

``draws.<key>``
    every array of :attr:`Posterior.draws` in internal units (day, M_sun, au,
    rad), shape ``(n_draws,)`` or ``(n_draws, n_planets)``, float64.
``meta``
    a UTF-8 JSON string stored as a ``uint8`` array: format and version,
    system and planet names, method, seed, sampler settings, notes, prior and
    the full report document.

Reading uses ``np.load(..., allow_pickle=False)``, so a file cannot run code;
anything malformed is rejected with a one-line :class:`InputError`: the
metadata JSON within the depth limit of :mod:`archsys.limits` (and at most
256 MiB), names and the document as :mod:`archsys.output.doc_check` wants
them, draws finite where known and within their physical ranges.
"""
from __future__ import annotations

import dataclasses
import io
import json
import math
import pathlib
import zipfile

import numpy as np

from ..errors import InputError
from .files import atomic_write

__all__ = ["save_posterior", "load_posterior", "posterior_bytes", "FORMAT", "FORMAT_VERSION"]

FORMAT = "archsys-chains"
FORMAT_VERSION = 1
_PREFIX = "draws."
_MAX_META_BYTES = 256 << 20


def _jsonable(obj):
    """Fallback for json.dumps: numpy scalars/arrays, dataclasses, sets; else str."""
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)}
    if isinstance(obj, (set, frozenset, tuple)):
        return list(obj)
    if isinstance(obj, pathlib.PurePath):
        return str(obj)
    return str(obj)


def _planet_names(post, document):
    names = getattr(getattr(post, "system", None), "planet_names", None)
    if names is None and document:
        names = [p["name"] for p in document.get("planets", [])]
    return list(names or [])


def posterior_bytes(post, document=None) -> bytes:
    """The ``.npz`` file content of ``post`` (and its report document), in memory."""
    document = document or {}
    names = _planet_names(post, document)
    arrays, kinds = {}, {}
    for key, val in post.draws.items():
        arr = np.asarray(val)
        if arr.dtype.kind not in "fiub" or arr.ndim not in (1, 2):
            raise ValueError(f"draws[{key!r}] must be a numeric 1-D or 2-D array; got {arr.dtype} {arr.shape}")
        arrays[_PREFIX + key] = arr.astype(float)
        kinds[key] = "planet" if arr.ndim == 2 else "system"
    meta = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "system": document.get("system") or getattr(getattr(post, "system", None), "name", None),
        "planet_names": names,
        "method": post.method,
        "seed": post.seed,
        "n_draws": post.n_draws,
        "keys": kinds,
        "sampler": post.sampler,
        "notes": post.notes,
        "prior": post.prior,
        "document": document,
    }
    text = json.dumps(meta, default=_jsonable, sort_keys=False)
    arrays["meta"] = np.frombuffer(text.encode("utf-8"), dtype=np.uint8)
    buf = io.BytesIO()
    np.savez_compressed(buf, **arrays)
    return buf.getvalue()


def save_posterior(path, post, document=None):
    """Write ``post`` and ``document`` to ``path`` (``.npz``) atomically; returns the path."""
    return atomic_write(path, posterior_bytes(post, document), mode="wb")


def _bad(path, why):
    return InputError(f"not a valid archsys chains file: {why}", source=str(path))


def load_posterior(path):
    """(draws, meta) from a file written by :func:`save_posterior`.

    ``draws`` maps each key to a float array; ``meta`` is the metadata mapping
    (``meta["document"]`` is the report document).  Raises
    :class:`~archsys.errors.InputError` for a missing, unreadable or malformed file.
    """
    path = pathlib.Path(path)
    if not path.is_file():
        raise InputError("chains file not found", source=str(path))
    try:
        npz = np.load(path, allow_pickle=False)
    except (OSError, ValueError, EOFError, zipfile.BadZipFile) as exc:
        raise _bad(path, f"cannot be read as .npz ({type(exc).__name__})") from None
    if not isinstance(npz, np.lib.npyio.NpzFile):
        raise _bad(path, "a single .npy array, not an .npz archive")
    with npz:
        try:
            content = {k: npz[k] for k in npz.files}
        except (OSError, ValueError, EOFError, zipfile.BadZipFile) as exc:
            raise _bad(path, f"an array cannot be read without pickle ({type(exc).__name__})") from None
    raw = content.pop("meta", None)
    if raw is None:
        raise _bad(path, "no 'meta' entry")
    if raw.dtype != np.uint8 or raw.ndim != 1:
        raise _bad(path, "'meta' is not a UTF-8 byte array")
    if raw.size > _MAX_META_BYTES:
        raise _bad(path, f"'meta' has {raw.size} bytes; at most {_MAX_META_BYTES}")
    from ..limits import parse_json
    try:
        meta = parse_json(raw.tobytes().decode("utf-8"), f"{path}: 'meta'", "chains metadata", allow_nan=True)
    except UnicodeDecodeError:
        raise _bad(path, "'meta' is not valid JSON") from None
    except InputError as exc:
        raise _bad(path, str(exc).split(": ", 2)[-1]) from None
    if not isinstance(meta, dict) or meta.get("format") != FORMAT:
        raise _bad(path, f"'meta.format' is not {FORMAT!r}")
    if meta.get("format_version") != FORMAT_VERSION:
        raise _bad(path, f"format version {meta.get('format_version')!r} (this archsys reads {FORMAT_VERSION})")
    names = meta.get("planet_names")
    if not isinstance(names, list) or not all(isinstance(n, str) for n in names):
        raise _bad(path, "'meta.planet_names' must be a list of names")
    if not isinstance(meta.get("document", {}), dict):
        raise _bad(path, "'meta.document' must be an object")
    from .doc_check import check_document, check_draws, check_name
    for i, nm in enumerate(names):
        check_name(nm, str(path), f"'meta.planet_names[{i}]'")
    if meta.get("system") is not None:
        check_name(meta["system"], str(path), "'meta.system'")
    if not names:
        raise _bad(path, "'meta.planet_names' is empty")
    if meta.get("document"):
        check_document(meta["document"], f"{path}: 'meta.document'", strict=False)
        if len(meta["document"]["planets"]) != len(names):
            raise _bad(path, f"'meta.document' has {len(meta['document']['planets'])} planets for "
                             f"{len(names)} planet names")
    draws = {}
    n = None
    for key, arr in content.items():
        if not key.startswith(_PREFIX):
            raise _bad(path, f"unexpected entry {key!r}")
        name = key[len(_PREFIX):]
        if arr.dtype.kind not in "fiub" or arr.ndim not in (1, 2):
            raise _bad(path, f"draws {name!r} must be a numeric 1-D or 2-D array; got {arr.dtype} {arr.shape}")
        if n is None:
            n = arr.shape[0]
        if arr.shape[0] != n:
            raise _bad(path, f"draws {name!r} has {arr.shape[0]} rows, others {n}")
        if arr.ndim == 2 and arr.shape[1] != len(names):
            raise _bad(path, f"draws {name!r} has {arr.shape[1]} columns for {len(names)} planets")
        draws[name] = arr.astype(float, copy=False)
    if "period" not in draws:
        raise _bad(path, "no 'period' draws")
    if not n:
        raise _bad(path, "no draws")
    check_draws(draws, str(path))
    meta_n = meta.get("n_draws")
    if isinstance(meta_n, (int, float)) and not (isinstance(meta_n, float) and math.isnan(meta_n)) and meta_n != n:
        raise _bad(path, f"'meta.n_draws' is {meta_n} but the arrays have {n} rows")
    return draws, meta
