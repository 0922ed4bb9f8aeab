"""The figure set of one analysis, its files, and redrawing from saved chains."""
from __future__ import annotations

import pathlib

from ...errors import InputError
from ..style import get_preset
from .architecture import ARCHITECTURE_CAPTION, architecture_figure
from .common import FigureItem, letter
from .corner import CONTOUR_NOTE, RANGE_NOTE, corner_figure, split_parameters
from .params import choose_parameters, planet_parameters, system_parameters, usable_parameters
from .period_ratio import period_ratio_figure

__all__ = ["make_figures", "figure_files", "plot_saved"]


def _document_priors(document):
    """Prior overlays {parameter name: Prior} from the priors recorded in the document (MCMC runs)."""
    rec = (document.get("provenance") or {}).get("priors") or {}
    if not rec:
        return None
    from ...inference.prior_files import load_prior
    out = {}
    try:
        ecc = rec.get("eccentricity", {}).get("name")
        if ecc:
            pr = load_prior(ecc)
            for j, pl in enumerate(document.get("planets", [])):
                if pl.get("ecc_origin") != "fixed":
                    out[f"e_{j}"] = pr
        sig = rec.get("mutual_inclination_sigma", {}).get("name")
        if sig:
            out["sigma_mutual"] = load_prior(sig)      # degrees, as plotted
    except Exception:  # a user prior file that moved since the run: draw no overlay
        return None
    return out or None


def _plain_label(label):
    label = label.replace("^{\\dagger}", "†").replace("^{\\ddagger}", "‡").replace("^{\\S}", "§")
    label = label.replace("M_\\oplus", "M⊕").replace("\\log_{10}\\,", "log10 ").replace("\\Phi", "Φ")
    label = label.replace("\\oplus", "⊕").replace("^\\circ", "°").replace("\\sigma", "σ").replace(
        "\\omega", "ω").replace("\\psi", "ψ").replace("\\sin", "sin")
    return (label.replace("$", "").replace("\\mathrm", "").replace("\\,", " ").replace("\\", "")
            .replace("{", "").replace("}", ""))


def _corner_item(fname, label, kept, skipped, truths, priors, p, part=None):
    fig = corner_figure(kept, truths=truths, priors=priors, preset=p)
    cap = f"Posterior of {label}"
    if part:
        cap += f" (figure {part[0]} of {part[1]}: at most {p.max_corner_params()} parameters per figure keep " \
               f"panels at least {p.min_panel_in:.2f} in wide at the {p.name} size)"
    cap += ": " + ", ".join(_plain_label(q.label) for q in kept) + ". " + CONTOUR_NOTE + ". " + RANGE_NOTE + "."
    if any(q.name.startswith("imut_") for q in kept):
        cap += " Φ: mutual inclination of adjacent orbits, from sky inclinations and nodes."
    if any(q.log for q in kept):
        cap += " Parameters spanning a wide range are shown as log10."
    if skipped:
        cap += " Skipped: " + ", ".join(f"{_plain_label(a)} ({b})" for a, b in skipped) + "."
    dropped = getattr(fig, "archsys_values_not_drawn", None)
    if dropped:
        cap += " Values: " + "; ".join(_plain_label(v) for v in dropped) + "."
    return FigureItem(fname, fig, cap, p)


def make_figures(draws, document, preset=None, truths=None, priors=None, corner_params=None):
    """All figures of one analysis as a list of :class:`FigureItem`.

    ``draws`` may be None (document only): then only the architecture and
    period-ratio figures are drawn.  Corner sets larger than the preset holds
    are split into several figures (``corner_system_1``, ``corner_system_2``,
    ...), each caption saying so.  ``corner_params`` (keys such as
    ``"e_b,m_b,m_c"``, see :func:`~archsys.output.figures.params.choose_parameters`)
    adds the author's chosen paper figure ``corner_selected``.
    """
    p = get_preset(preset)
    name = document.get("system", "system")
    if priors is None:
        priors = _document_priors(document)
    chosen, chosen_skipped = [], []
    limit = p.max_corner_params()
    if corner_params and draws is not None:          # check the author's choice before drawing anything
        chosen, chosen_skipped = usable_parameters(choose_parameters(draws, document, corner_params))
        if not chosen:
            raise InputError("--corner-params: none of the chosen parameters varies across the draws")
        if len(chosen) > limit:
            raise InputError(f"--corner-params: {len(chosen)} parameters do not fit one {p.name} figure "
                             f"(at most {limit} keep panels at least {p.min_panel_in:.2f} in wide); "
                             "choose fewer or a wider --preset")
    from ...scores.packing import room_intervals
    room = room_intervals(document)
    arch = (architecture_figure([document], preset=p, shade_periods=[room],
                                shade_label="room for a planet (\u2265 50 % of draws)") if room
            else architecture_figure([document], preset=p))
    items = [FigureItem("architecture", arch, f"Architecture of {name}: {ARCHITECTURE_CAPTION}"
                        + (" Shaded: period ranges where a test planet fits (Hill spacing, Gladman 1993 and "
                           "AMD criteria) in at least half of the draws." if room else ""), p)]
    if document.get("pairs"):
        items.append(FigureItem("period_ratios", period_ratio_figure([document], preset=p),
                                f"Adjacent period ratios of {name} (median and 68.3 % interval) with first-, "
                                "second- and third-order mean-motion resonances.", p))
    from .transit_odds import CAPTION as TRANSIT_CAPTION, transit_odds_figure
    transit_fig = transit_odds_figure(document, preset=p)
    if transit_fig is not None:
        items.append(FigureItem("transit_odds", transit_fig, TRANSIT_CAPTION.format(name=name), p))
    from .timing import CAPTION as TIMING_CAPTION, timing_figure
    timing_fig = timing_figure(document, preset=p)
    if timing_fig is not None:
        items.append(FigureItem("timing", timing_fig, TIMING_CAPTION.format(
            name=name, assumption=(document.get("timing") or {}).get("assumptions", "see the report")), p))
    if draws is None:
        if corner_params:
            raise InputError("--corner-params needs posterior draws (a chains file or a new analysis)")
        return items
    sets = [("corner_system", system_parameters(draws, document), f"{name}: system parameters")]
    from ..file_names import unique_stems
    letters, _ = unique_stems([letter(pl["name"], name) for pl in document.get("planets", [])],
                              fallback="planet", reserved=("system",))   # "b/1" vs "b_1"; never "system"
    for j, pl in enumerate(document.get("planets", [])):
        sets.append((f"corner_{letters[j]}", planet_parameters(draws, document, j), pl["name"]))
    for fname, params, label in sets:
        kept, skipped = usable_parameters(params)
        if len(kept) < 2:
            continue
        parts = split_parameters(kept, limit)
        for i, part in enumerate(parts):
            stem = fname if len(parts) == 1 else f"{fname}_{i + 1}"
            items.append(_corner_item(stem, label, part, skipped if i == 0 else [], truths, priors, p,
                                      (i + 1, len(parts)) if len(parts) > 1 else None))
    if chosen:
        items.append(_corner_item("corner_selected", f"{name}: chosen parameters", chosen, chosen_skipped,
                                  truths, priors, p))
    return items


def figure_files(figures, stem):
    """{file name: bytes} of every figure as PDF and PNG, rendered in memory."""
    out = {}
    for f in figures:
        for fmt in ("pdf", "png"):
            out[f"{stem}_{f.name}.{fmt}"] = f.data(fmt)
    return out


def plot_saved(result_path, fig_dir, preset=None, corner_params=None):
    """Redraw the figures of a saved chains file (``.npz``) into ``fig_dir``; no resampling.

    Returns the list of written paths.
    """
    from ..chains import load_posterior
    from ..files import atomic_write
    from ..file_names import safe_name

    draws, meta = load_posterior(result_path)
    doc = meta.get("document") or {}
    if not doc.get("planets"):
        raise InputError("chains file has no report document to label the figures", source=str(result_path))
    figs = make_figures(draws, doc, preset=preset, corner_params=corner_params)
    blobs = figure_files(figs, safe_name(doc.get("system", "system")))
    out = pathlib.Path(fig_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"figure folder {str(out)!r} exists and is not a folder")
    return [atomic_write(out / name, data, mode="wb") for name, data in blobs.items()]
