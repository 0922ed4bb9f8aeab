"""Layout of every figure at every preset, measured with matplotlib's renderer.

No two text bounding boxes overlap (``fig.canvas.get_renderer()``,
``Text.get_window_extent``), no text leaves the figure, the corner plots'
value block touches no panel, legends sit clear of the data, and drawing
figures leaves pyplot and the global matplotlib settings alone.  The
six-planet system is the invented demo system Velmora.
"""
import pathlib

import matplotlib
import numpy as np
import pytest

from archsys.errors import InputError
from archsys.output import figures as F
from archsys.output.figures import survey as S
from archsys.output.figures.common import overlaps_axes, text_overlaps
from archsys.output.style import PRESETS

ROOT = pathlib.Path(__file__).resolve().parents[1]
PRESET_NAMES = list(PRESETS)


@pytest.fixture(scope="module")
def velmora():
    """Direct draws of the six-planet demo system, plus invented tilts, nodes and a dispersion so the
    system corner holds sigma and five mutual inclinations (13 parameters)."""
    import archsys
    from archsys.pipeline import AnalysisOptions, analyze
    res = analyze(archsys.read_system(ROOT / "demo_systems" / "velmora.toml"),
                  AnalysisOptions(mode="direct", n_draws=500, quiet=True, seed=1))
    draws = dict(res.posterior.draws)
    rng = np.random.default_rng(5)
    n, k = draws["ecc"].shape
    sigma = np.radians(np.abs(rng.normal(1.0, 0.4, n)))
    draws["sigma_mutual"] = sigma
    draws["psi"] = sigma[:, None] * np.sqrt(-2 * np.log(rng.uniform(size=(n, k))))
    draws["node"] = rng.normal(0.0, 0.03, (n, k))
    return draws, res.document


def _panels(fig):
    return [ax for ax in fig.axes if ax.get_frame_on()]


class _LazySets(dict):
    """Figures of one preset drawn on first use, so xdist workers share the presets out."""

    def __init__(self, velmora):
        super().__init__()
        self._velmora = velmora

    def __missing__(self, preset):
        draws, doc = self._velmora
        self[preset] = F.make_figures(draws, doc, preset=preset)
        return self[preset]


@pytest.fixture(scope="module")
def figure_sets(velmora):
    return _LazySets(velmora)


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_system_figures_have_no_overlapping_text(figure_sets, preset):
    bad = {}
    for item in figure_sets[preset]:
        ov = text_overlaps(item.figure)
        if ov:
            bad[item.name] = ov[:3]
    assert not bad, bad


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_corner_value_block_touches_no_panel(figure_sets, preset):
    for item in figure_sets[preset]:
        if item.name.startswith("corner"):
            hits = overlaps_axes(item.figure, item.figure.texts)
            hits = [(t.get_text()[:30], ax) for t, ax in hits if ax.get_frame_on()]
            assert not hits, (item.name, hits)


def test_six_planet_corner_fits_one_column(figure_sets, velmora):
    p = PRESETS["one-column"]
    corners = [it for it in figure_sets["one-column"] if it.name.startswith("corner")]
    system = [it for it in corners if it.name.startswith("corner_system")]
    assert len(system) >= 3                                   # 13 parameters do not fit one 3.5 in figure
    assert all("figure 1 of" in system[0].caption for _ in [0])
    for it in corners:
        K = int(round(len(it.figure.axes) ** 0.5))
        assert K <= p.max_corner_params()
        assert tuple(it.figure.get_size_inches()) == pytest.approx((3.5, 3.5))
        axes = np.array(it.figure.axes).reshape(K, K)
        for k in range(K):                                   # every column and row keeps a labelled tick
            assert any(t.get_text() for t in axes[K - 1, k].get_xticklabels())
            if k:
                assert any(t.get_text() for t in axes[k, 0].get_yticklabels())


def test_slide_corners_fit_the_slide_height(figure_sets):
    for it in figure_sets["slide"]:
        if it.name.startswith("corner"):
            assert it.figure.get_size_inches()[1] <= PRESETS["slide"].page_height_in + 1e-9


def test_oversized_corner_says_so():
    rng = np.random.default_rng(0)
    params = [F.CornerParam(f"x{k}", f"x_{{{k}}}", "", rng.normal(k, 1, 500)) for k in range(7)]
    with pytest.warns(UserWarning, match="larger than the one-column preset"):
        fig = F.corner_figure(params, preset="one-column")
    assert fig.get_size_inches()[0] > 3.5
    assert text_overlaps(fig) == []


def test_split_keeps_groups_together():
    mk = lambda n, g: F.CornerParam(n, n, "", np.arange(10.0), group=g)   # noqa: E731
    params = [mk("e", "orbit"), mk("w", "orbit"), mk("i", "orientation"), mk("psi", "orientation"), mk("m", "mass")]
    parts = F.split_parameters(params, 3)
    assert [[q.name for q in part] for part in parts] == [["e", "w"], ["i", "psi", "m"]]
    assert F.split_parameters(params, 5) == [params]


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_architecture_legend_smaller_than_data(velmora, preset):
    fig = F.architecture_figure([velmora[1]], preset=preset)
    r = fig.canvas.get_renderer()
    fig.canvas.draw()
    leg = fig.legends[0].get_window_extent(r)
    ax = fig.axes[0].get_window_extent(r)
    assert leg.height < ax.height and leg.width * leg.height < ax.width * ax.height
    assert text_overlaps(fig) == []


def test_architecture_shades_period_intervals(velmora):
    # Kepler III: P = 365.25 d around 1 M_sun gives a = 1.000 au (common practice: Earth's orbit);
    # shading is placed with the system's median stellar mass, here set to 1 M_sun.
    doc = dict(velmora[1])
    doc["star"] = {"mass_msun": {"median": 1.0}}
    fig = F.architecture_figure([doc], shade_periods={"Velmora": [(10.0, 365.25)]}, shade_label="room for a planet")
    polys = [c for c in fig.axes[0].collections if len(c.get_paths())]
    xs = np.concatenate([c.get_paths()[0].vertices[:, 0] for c in polys])
    assert xs.max() == pytest.approx(1.0, rel=2e-3)
    assert "room for a planet" in [t.get_text() for t in fig.legends[0].get_texts()]
    with pytest.raises(InputError, match="shaded"):
        F.architecture_figure([doc], shade_periods=[[(1, 2)], [(3, 4)]])


def _survey_rows():
    """Invented survey rows (planet/pair/system medians) with a spread like a real catalogue."""
    rng = np.random.default_rng(2)
    pairs = [{"period_ratio_median": float(r), "hill_separation_median": float(h)}
             for r, h in zip(np.exp(rng.uniform(0.05, 1.6, 120)), np.exp(rng.normal(3.0, 0.7, 120)))]
    planets = [{"ecc_median": float(e), "ecc_measured": True} for e in rng.beta(0.9, 4.0, 150)]
    systems = [{"gap_complexity_median": float(g)} for g in rng.uniform(0, 0.6, 40)]
    mult = {"n_systems": 358, "fractions": {
        "1": {"value": 0.82, "lo": 0.80, "hi": 0.84}, "2": {"value": 0.13, "lo": 0.11, "hi": 0.15},
        "3": {"value": 0.042, "lo": 0.03, "hi": 0.053}, "4": {"value": 0.008, "lo": 0.003, "hi": 0.014},
        "5": {"value": 0.0056, "lo": 0.0028, "hi": 0.0084}}}
    ecc_pop = {"beta": {"alpha": {"median": 0.9}, "beta": {"median": 4.2}}, "rayleigh": {"sigma": {"median": 0.17}}}
    return pairs, planets, systems, mult, ecc_pop


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_survey_figures_layout(preset):
    pairs, planets, systems, mult, ecc_pop = _survey_rows()
    figs = {"period_ratios": S.plot_period_ratios(pairs, preset=preset),
            "hill": S.plot_hill_separations(pairs, preset=preset),
            "multiplicity": S.plot_multiplicity(mult, preset=preset),
            "gap": S.plot_gap_complexity(systems, preset=preset),
            "ecc": S.plot_eccentricity_population(planets, ecc_pop, preset=preset)}
    for name, fig in figs.items():
        assert fig.get_size_inches()[0] == pytest.approx(PRESETS[preset].width_in), name
        assert text_overlaps(fig) == [], name
        assert overlaps_axes(fig, fig.legends) == [], name            # no legend covers data or lines
    ax = figs["multiplicity"].axes[0]
    assert len([t for t in ax.get_yticklabels() if t.get_text()]) >= 3
    assert [t.get_text() for t in ax.get_xticklabels()] == ["1", "2", "3", "4", "5"]


def test_figures_leave_pyplot_and_rcparams_alone(velmora):
    import sys
    before = dict(matplotlib.rcParams)
    backend = matplotlib.get_backend()
    F.make_figures(None, velmora[1], preset="two-column")
    S.plot_multiplicity(_survey_rows()[3], preset="slide")
    assert matplotlib.get_backend() == backend
    assert {k: v for k, v in matplotlib.rcParams.items() if before.get(k) != v and k != "backend"} == {}
    if "matplotlib.pyplot" in sys.modules:
        assert sys.modules["matplotlib.pyplot"].get_fignums() == []


def test_text_overlaps_detects_a_collision():
    from matplotlib.figure import Figure
    fig = Figure(figsize=(2, 2))
    fig.text(0.5, 0.5, "2.5")
    fig.text(0.52, 0.5, "5.0")
    assert len(text_overlaps(fig)) == 1


# --- nothing leaves the canvas; slide figures fit the slide ---------------------------------------
from archsys.output.figures.common import layout_problems, leaves_canvas  # noqa: E402


def test_layout_check_catches_a_clipped_axis_label():
    from matplotlib.figure import Figure
    fig = Figure(figsize=(3.5, 2.5))
    ax = fig.add_subplot(111)
    ax.plot([1, 2, 3], [1, 4, 9])
    ax.set_xlabel("period [d]")
    fig.subplots_adjust(bottom=0.02)                 # the x-axis label below the bottom edge, on purpose
    found = leaves_canvas(fig)
    assert any("period [d]" in f for f in found), found
    assert layout_problems(fig)
    fig.subplots_adjust(bottom=0.25)                 # the same figure laid out properly passes
    assert layout_problems(fig) == []
    leg = ax.legend(["data"], loc="upper left", bbox_to_anchor=(1.5, 1.0))   # a legend pushed off the canvas
    assert any("legend" in f for f in leaves_canvas(fig)), leaves_canvas(fig)
    leg.remove()
    tall = Figure(figsize=(10.0, 7.2))               # the slide preset promises at most 5.6 in of height
    tall.add_subplot(111)
    assert any("tall" in f for f in layout_problems(tall, PRESETS["slide"].page_height_in))


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_every_system_figure_stays_on_the_canvas_and_the_page(figure_sets, preset):
    names = {it.name for it in figure_sets[preset]}
    assert {"timing", "architecture"} <= names, names
    bad = {}
    for item in figure_sets[preset]:
        probs = layout_problems(item.figure, PRESETS[preset].page_height_in)
        if probs:
            bad[item.name] = probs[:3]
    assert not bad, bad


def _transit_block():
    """An invented transit_multiplicity block (observed counts and posterior-predictive ranges)."""
    labels = ["1", "2", "3", "4", "5", "6+"]
    counts = [1820, 370, 120, 45, 15, 4]

    def pp(scale):
        med = [c * scale for c in counts]
        return {"median": med, "lo": [m * 0.8 for m in med], "hi": [m * 1.2 for m in med],
                "lo95": [m * 0.6 for m in med], "hi95": [m * 1.4 for m in med]}
    return {"observed": {"labels": labels, "counts": counts},
            "fit": {"one_population": {"posterior_predictive": pp(0.9)},
                    "two_populations": {"posterior_predictive": pp(1.05)}}}


@pytest.mark.parametrize("preset", PRESET_NAMES)
def test_survey_figures_stay_on_the_canvas(preset):
    from archsys.output.figures.multiplicity import plot_transit_multiplicity
    pairs, planets, systems, mult, ecc_pop = _survey_rows()
    figs = {"period_ratios": S.plot_period_ratios(pairs, preset=preset),
            "hill": S.plot_hill_separations(pairs, preset=preset),
            "multiplicity": S.plot_multiplicity(mult, preset=preset),
            "gap": S.plot_gap_complexity(systems, preset=preset),
            "ecc": S.plot_eccentricity_population(planets, ecc_pop, preset=preset),
            "transit_multiplicity": plot_transit_multiplicity(_transit_block(), preset=preset)}
    for name, fig in figs.items():
        assert layout_problems(fig, PRESETS[preset].page_height_in) == [], name
