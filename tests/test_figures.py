"""Figures: corner plots, architecture and period-ratio diagrams, presets, plot_saved."""
import math

import matplotlib
import matplotlib.image
import numpy as np
import pytest
from matplotlib.figure import Figure

from archsys.errors import InputError
from archsys.inference.posterior import Posterior
from archsys.output import figures as F
from archsys.output.chains import save_posterior
from archsys.output.style import PRESETS, VERDICT_STYLES, get_preset
from archsys.physics.constants import MEARTH_MSUN

N = 300


def _summ(x):
    lo, med, hi = np.quantile(x, (0.158655, 0.5, 0.841345))
    return {"median": float(med), "lo": float(lo), "hi": float(hi)}


@pytest.fixture(scope="module")
def synthetic():
    """Invented two-planet posterior (draws in internal units) and a matching document."""
    rng = np.random.default_rng(3)
    P = np.column_stack([rng.normal(5.0, 0.001, N), rng.normal(7.6, 0.002, N)])
    a = 0.0587 * (P / 5.0) ** (2 / 3)
    m = np.column_stack([rng.normal(6, 1, N), rng.lognormal(np.log(300), 1.0, N)]) * MEARTH_MSUN
    draws = {"m_star": rng.normal(1, 0.05, N), "period": P, "a": a,
             "ecc": rng.uniform(0.0, 0.1, (N, 2)), "omega": rng.uniform(-np.pi, np.pi, (N, 2)),
             "mass": m, "msini": np.full((N, 2), np.nan),
             "inc": np.radians(rng.normal(88, 0.5, (N, 2))), "node": np.full((N, 2), np.nan),
             "psi": np.radians(np.abs(rng.normal(0, 1.0, (N, 2)))),
             "sigma_mutual": np.radians(np.abs(rng.normal(1.0, 0.3, N)))}
    planets = []
    for j, name in enumerate(["Testa b", "Testa c"]):
        planets.append({"name": name, "period_days": _summ(P[:, j]), "a_au": _summ(a[:, j]),
                        "mass_mearth": _summ(m[:, j] / MEARTH_MSUN), "mass_basis": "true",
                        "ecc": _summ(draws["ecc"][:, j]), "omega_deg": _summ(np.degrees(draws["omega"][:, j]) % 360),
                        "inclination_deg": _summ(np.degrees(draws["inc"][:, j]))})
    doc = {"system": "Testa", "star": {"mass_msun": _summ(draws["m_star"])}, "planets": planets,
           "pairs": [{"inner": "Testa b", "outer": "Testa c", "period_ratio": _summ(P[:, 1] / P[:, 0]),
                      "hill_stable_probability": 0.99}],
           "provenance": {"seed": 3, "draws": N}}
    return draws, doc


def _png(fig, preset=None):
    import io
    data = F.FigureItem("x", fig, "", preset).data("png")
    return matplotlib.image.imread(io.BytesIO(data), format="png")


def _params(n=3, seed=0):
    rng = np.random.default_rng(seed)
    return [F.CornerParam(f"x{k}", f"x_{{{k}}}", "M_\\oplus", rng.normal(k, 1 + k, N)) for k in range(n)]


# --- corner ---------------------------------------------------------------------
def test_corner_has_n_by_n_axes():
    fig = F.corner_figure(_params(3))
    assert len(fig.axes) == 9


def test_corner_skips_constant_and_undefined_parameters():
    ps = _params(2) + [F.CornerParam("c", "c", "", np.full(N, 0.0)),
                       F.CornerParam("u", "u", "", np.full(N, np.nan))]
    fig = F.corner_figure(ps)
    assert len(fig.axes) == 4                                   # corner fails on zero dynamic range
    texts = " ".join(t.get_text() for t in fig.texts)
    assert "skipped $c$: constant" in texts and "skipped $u$: no finite draws" in texts


def test_corner_all_constant_is_an_input_error():
    with pytest.raises(InputError, match="no parameter varies"):
        F.corner_figure([F.CornerParam("c", "c", "", np.ones(N))])


def test_corner_states_contour_levels():
    # A 2-D Gaussian holds 1 - exp(-k^2/2) within k sigma: 39.3 % (k=1), 86.5 % (k=2)
    # (standard result; corner.py documentation, Foreman-Mackey 2016).
    assert F.CONTOUR_LEVELS == pytest.approx((0.3935, 0.8647), abs=1e-4)
    fig = F.corner_figure(_params(2))
    assert "39.3 %, 86.5 %" in " ".join(t.get_text() for t in fig.texts)


def test_corner_labels_carry_units(synthetic):
    draws, doc = synthetic
    kept, _ = F.usable_parameters(F.planet_parameters(draws, doc, 0))
    assert [p.name for p in kept] == ["e_0", "omega_0", "inc_0", "psi_0", "mass_0"]
    fig = F.corner_figure(kept)
    xlabels = [ax.get_xlabel() for ax in np.array(fig.axes).reshape(5, 5)[-1]]
    assert r"m_{\mathrm{b}}" in xlabels[-1] and r"[M_\oplus]" in xlabels[-1]
    assert r"[^\circ]" in xlabels[1]


def test_wide_mass_posterior_is_shown_as_log(synthetic):
    draws, doc = synthetic
    mass_c = [p for p in F.planet_parameters(draws, doc, 1) if p.name == "mass_1"][0]
    assert mass_c.log and r"\log_{10}" in mass_c.label


def test_system_parameters_include_sigma_and_masses(synthetic):
    draws, doc = synthetic
    names = [p.name for p in F.system_parameters(draws, doc)]
    assert names == ["sigma_mutual", "mass_0", "mass_1"]        # nodes unknown: no mutual inclination


def test_mutual_inclination_matches_spherical_trigonometry():
    # Angle between orbit normals: cos(Phi) = cos i1 cos i2 + sin i1 sin i2 cos(dOmega)
    # (spherical law of cosines; common practice). Same node -> |i1 - i2|; i = 90 deg, dOmega = 90 deg -> 90 deg.
    assert F._mutual_inclination(np.radians(88.0), np.radians(85.0), 0.3, 0.3) == pytest.approx(np.radians(3.0))
    assert F._mutual_inclination(np.pi / 2, np.pi / 2, 0.0, np.pi / 2) == pytest.approx(np.pi / 2)


def test_truth_and_prior_overlays():
    ps = _params(2)
    fig = F.corner_figure(ps, truths={"x0": 0.0}, priors={"x0": lambda x: np.exp(-x ** 2 / 2) / math.sqrt(2 * math.pi)})
    diag = np.array(fig.axes).reshape(2, 2)[0, 0]
    colours = [matplotlib.colors.to_hex(ln.get_color()) for ln in diag.lines]
    assert "#e69f00" in colours                                  # prior curve (orange)
    assert "#d55e00" in colours                                  # truth line (vermillion)


def test_fig_argument_is_used():
    fig = Figure(figsize=(3.5, 3.5))
    assert F.corner_figure(_params(2), fig=fig) is fig


# --- presets and rendering ---------------------------------------------------------
def test_presets_widths():
    # Common practice for AAS/A&A/MNRAS: one column ~3.5 in, two columns ~7.1 in.
    assert get_preset("one-column").width_in == 3.5
    assert get_preset("two-column").width_in == 7.1
    with pytest.raises(InputError, match="preset"):
        get_preset("poster")


@pytest.mark.parametrize("preset", ["one-column", "two-column"])
def test_figure_size_matches_preset_and_png_not_blank(synthetic, preset):
    draws, doc = synthetic
    p = PRESETS[preset]
    fig = F.architecture_figure([doc], preset=preset)
    assert fig.get_size_inches()[0] == pytest.approx(p.width_in)
    img = _png(fig, preset)
    assert img.shape[1] == round(p.width_in * p.dpi)           # saved without tight-bbox cropping
    assert img[..., :3].var() > 0


def test_corner_size_matches_preset_and_png_not_blank():
    fig = F.corner_figure(_params(2), preset="one-column")
    assert tuple(fig.get_size_inches()) == pytest.approx((3.5, 3.5))
    assert _png(fig)[..., :3].var() > 0


# --- architecture ---------------------------------------------------------------------
def _pair_doc(name, p_hill):
    return {"system": name, "star": {"mass_msun": {"median": 1.0, "lo": 0.95, "hi": 1.05}},
            "planets": [{"name": f"{name} b", "a_au": {"median": 0.05, "lo": 0.049, "hi": 0.051},
                         "mass_mearth": {"median": 5, "lo": 4, "hi": 6}},
                        {"name": f"{name} c", "a_au": {"median": 0.08, "lo": 0.079, "hi": 0.081},
                         "msini_mearth": {"median": 300, "lo": 280, "hi": 320},
                         "ecc": {"median": 0.2, "lo": 0.15, "hi": 0.25}}],
            "pairs": [{"inner": f"{name} b", "outer": f"{name} c", "hill_stable_probability": p_hill,
                       "period_ratio": {"median": 2.03, "lo": 2.02, "hi": 2.04}}]}


def test_architecture_stacks_systems_with_verdict_styles():
    docs = [_pair_doc("Aa", 0.99), _pair_doc("Bb", 0.5), _pair_doc("Cc", 0.01), _pair_doc("Dd", None)]
    fig = F.architecture_figure(docs)
    ax = fig.axes[0]
    assert [t.get_text() for t in ax.get_yticklabels()] == ["Dd", "Cc", "Bb", "Aa"]
    colours = {matplotlib.colors.to_hex(ln.get_color()) for ln in ax.lines}
    for key in ("stable", "uncertain", "unstable", "unknown"):
        assert VERDICT_STYLES[key]["color"].lower() in colours, key
    # colour and line style both differ, so the cue survives greyscale printing
    assert len({str(v["linestyle"]) for v in VERDICT_STYLES.values()}) == 4
    assert ax.get_xscale() == "log"


def test_architecture_orbit_bar_spans_periapsis_to_apoapsis():
    fig = F.architecture_figure([_pair_doc("Aa", 0.99)])
    spans = [tuple(ln.get_xdata()) for ln in fig.axes[0].lines if len(ln.get_xdata()) == 2]
    assert any(s == pytest.approx((0.08 * 0.8, 0.08 * 1.2)) for s in spans)     # a(1 - e), a(1 + e)


# --- period ratios ------------------------------------------------------------------------
def test_resonances_between():
    # Order k of p:q is p - q with p, q coprime (Murray & Dermott 1999, ch. 8; common practice).
    first = [(p, q) for p, q, k in F.resonances_between(1.2, 2.1, max_order=1)]
    assert first == [(6, 5), (5, 4), (4, 3), (3, 2), (2, 1)]
    second = [(p, q) for p, q, k in F.resonances_between(1.25, 3.1, max_order=2) if k == 2]
    assert second == [(9, 7), (7, 5), (5, 3), (3, 1)]            # 4:2 is 2:1, excluded
    third = [(p, q) for p, q, k in F.resonances_between(1.5, 4.1, max_order=3) if k == 3]
    assert third == [(8, 5), (7, 4), (5, 2), (4, 1)]


def test_period_ratio_figure_lines_and_labels():
    fig = F.period_ratio_figure([_pair_doc("Aa", 0.9)])
    ax = fig.axes[0]
    xs = {round(ln.get_xdata()[0], 6) for ln in ax.lines if len(set(ln.get_xdata())) == 1}
    assert round(2.0, 6) in xs
    labels = {t.get_text() for t in ax.texts}
    assert "2:1" in labels
    styles = {str(F.ORDER_STYLES[k]["linestyle"]) for k in (1, 2, 3)}
    assert len(styles) == 3


def test_period_ratio_needs_pairs():
    d = _pair_doc("Aa", 0.9)
    d["pairs"] = []
    with pytest.raises(InputError, match="no adjacent pairs"):
        F.period_ratio_figure([d])


# --- from saved chains -------------------------------------------------------------------
def test_plot_saved_redraws_without_resampling(synthetic, tmp_path, monkeypatch):
    draws, doc = synthetic
    post = Posterior(None, draws, "mcmc", seed=3)
    path = save_posterior(tmp_path / "Testa.chains.npz", post, doc)

    def no(*a, **k):
        raise AssertionError("plot_saved must not resample")

    import archsys.inference.draws as dr
    import archsys.pipeline as pl
    monkeypatch.setattr(pl, "analyze", no)
    monkeypatch.setattr(dr, "direct_draws", no)
    monkeypatch.setattr(matplotlib.pyplot, "show", no)
    out = F.plot_saved(path, tmp_path / "figs", preset="one-column")
    names = sorted(p.name for p in out)
    assert "Testa_architecture.pdf" in names and "Testa_corner_system.png" in names
    assert "Testa_corner_b.png" in names and "Testa_period_ratios.png" in names
    for p in out:
        head = p.read_bytes()[:8]
        assert head.startswith(b"%PDF") if p.suffix == ".pdf" else head == b"\x89PNG\r\n\x1a\n"


def test_figure_files_are_reproducible():
    # No creation dates in PDF/PNG metadata: the same input gives byte-identical files
    # (the provenance sidecar lists their SHA-256).
    docs = [_pair_doc("Aa", 0.99), _pair_doc("Bb", 0.5)]
    one = F.figure_files([F.FigureItem("architecture", F.architecture_figure(docs), "")], "s")
    two = F.figure_files([F.FigureItem("architecture", F.architecture_figure(docs), "")], "s")
    assert sorted(one) == ["s_architecture.pdf", "s_architecture.png"]
    assert one == two
