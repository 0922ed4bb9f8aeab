"""Figures read as a referee would: what each mark means is on the figure, estimates look like
estimates, nothing is drawn where the prior allows nothing, and survey figures take the presets.

Systems are the invented demos (demo_systems/) and invented documents built here.
"""
import pathlib

import numpy as np
import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def ondrel():
    import archsys
    from archsys.pipeline import AnalysisOptions, analyze
    return analyze(archsys.read_system(ROOT / "demo_systems" / "ondrel.toml"),
                   AnalysisOptions(n_draws=300, seed=2, quiet=True))


def _texts(fig):
    out = []
    for ax in fig.axes:
        out += [t.get_text() for t in ax.texts if t.get_visible()]
        leg = ax.get_legend()
        if leg is not None:
            out += [t.get_text() for t in leg.get_texts()]
    return out


def test_timing_figure_of_second_order_pairs_only(ondrel):
    # Ondrel b-c is near 3:1 (second order): a super-period but no amplitude. The figure is a strip on
    # the period axis, with a legend and several tick labels, never an empty amplitude axis.
    from archsys.output.figures.timing import timing_figure
    from archsys.output.figures.common import layout_problems
    fig = timing_figure(ondrel.document, preset="one-column")
    assert fig is not None and len(fig.axes) == 1
    ax = fig.axes[0]
    assert ax.get_ylabel() == "" and ax.get_xlabel().startswith("super-period")
    assert "second-order pair: super-period only" in _texts(fig)
    fig.canvas.draw()
    assert len([t for t in ax.get_xticklabels() if t.get_text()]) >= 3
    assert layout_problems(fig) == []


def test_timing_figure_names_every_pair_and_its_markers():
    from archsys.output.figures.timing import timing_figure
    s = lambda m: {"median": m, "lo": 0.8 * m, "hi": 1.2 * m}          # noqa: E731
    pairs = [{"inner": "X b", "outer": "X c", "super_period_days": s(400.0), "super_period_resonance": "3:2",
              "ttv_amplitude_inner_min": s(5.0), "ttv_amplitude_outer_min": s(6.0)},
             {"inner": "X c", "outer": "X d", "super_period_days": s(900.0), "super_period_resonance": "3:2",
              "ttv_amplitude_inner_min": s(20.0), "ttv_amplitude_outer_min": s(25.0)},
             {"inner": "X d", "outer": "X e", "super_period_days": s(60.0), "super_period_resonance": "5:3"}]
    fig = timing_figure({"system": "X", "pairs": pairs}, preset="two-column")
    texts = _texts(fig)
    assert {"inner planet", "outer planet", "second-order pair: super-period only"} <= set(texts)
    assert {"b–c (3:2)", "c–d (3:2)", "d–e (5:3)"} <= set(texts)
    assert len(fig.axes) == 2                                    # second-order pairs in a strip of their own
    strip = fig.axes[1]
    assert strip.get_yticks().size == 0


def test_transit_odds_figure_marks_known_transiting_planets_and_keeps_the_band(ondrel):
    from archsys.output.figures.transit_odds import transit_odds_figure
    doc = ondrel.document
    fig = transit_odds_figure(doc, preset="one-column")
    ax = fig.axes[0]
    assert "known to transit" in _texts(fig)
    known = [p for p in doc["planets"] if p.get("transiting")]
    tri = [ln for ln in ax.lines if ln.get_marker() == "v"]
    assert len(tri) == len(known) >= 2
    lo = ax.get_ylim()[0]
    band = ax.collections[0].get_paths()[0].vertices
    assert band[:, 1].min() >= lo * (1 - 1e-9)                 # the band stays on the axis


def test_slide_figures_fit_the_slide(ondrel):
    from archsys.output.figures import make_figures
    from archsys.output.style import PRESETS
    for it in make_figures(ondrel.posterior.draws, ondrel.document, preset="slide"):
        assert it.figure.get_size_inches()[1] <= PRESETS["slide"].page_height_in + 1e-9, it.name


def test_same_planet_same_marker_in_every_mode():
    # Ondrel d: an RV planet with no orientation data. In MCMC mode its true mass rests on a prior
    # inclination; the architecture figure draws it as m sin i (open) in every mode.
    import archsys
    from archsys.output.figures.architecture import _planet_mass
    from archsys.pipeline import AnalysisOptions, analyze
    system = archsys.read_system(ROOT / "demo_systems" / "ondrel.toml")
    bases = []
    for mode in ("direct", "auto"):
        doc = analyze(system, AnalysisOptions(n_draws=300, seed=2, quiet=True, mode=mode)).document
        bases.append(_planet_mass(doc["planets"][2])[1])
        if "mass_mearth" in doc["planets"][2]:
            assert doc["planets"][2]["estimated"]["mass_mearth"] == "prior_inclination"
    assert bases == ["minimum", "minimum"]


def test_mass_radius_masses_drawn_as_estimates():
    from archsys.output.figures.architecture import _planet_mass
    pl = {"mass_mearth": {"median": 4.0, "lo": 3.0, "hi": 5.0}, "estimated": {"mass_mearth": "mass_radius_relation"}}
    assert _planet_mass(pl) == (4.0, "estimate")
    from archsys.output.figures.params import planet_parameters
    draws = {"mass": np.full((50, 1), 4.0 * 3.0e-6) * np.linspace(0.9, 1.1, 50)[:, None]}
    doc = {"system": "X", "planets": [dict(pl, name="X b")]}
    (m,) = planet_parameters(draws, doc, 0)
    assert "\\ddagger" in m.symbol                               # the tables' mark for the same estimate


def test_sigma_density_not_drawn_below_the_prior_support():
    from archsys.inference.prior_files import load_prior
    from archsys.output.figures import CornerParam, corner_figure
    prior = load_prior("incl-loguniform")                       # support 0.1-60 deg
    rng = np.random.default_rng(4)
    sigma = np.clip(np.abs(rng.normal(0.15, 0.08, 2000)), 0.1, None)
    e = rng.uniform(0, 0.1, 2000)
    params = [CornerParam("sigma_mutual", "\\sigma", "^\\circ", sigma, lower=0.0, upper=180.0),
              CornerParam("e_0", "e_{b}", "", e, lower=0.0, upper=1.0)]
    fig = corner_figure(params, priors={"sigma_mutual": prior}, preset="two-column")
    diag = fig.axes[0]
    assert diag.get_xlim()[0] >= 0.1 - 1e-9
    line = diag.lines[0].get_xdata()
    assert line.min() >= 0.1 - 1e-9
    assert any("prior" in t.get_text() for t in fig.texts)
    fig2 = corner_figure(params, priors={"unrelated": prior}, preset="two-column")
    assert not any("prior" in t.get_text() for t in fig2.texts)   # no legend for a prior not drawn


def test_survey_preset_option(tmp_path):
    from archsys.errors import InputError
    from archsys.options import SurveyOptions
    assert SurveyOptions(preset="slide").preset == "slide"
    with pytest.raises(InputError, match="preset"):
        SurveyOptions(preset="poster")
    from archsys.cli_parser import build_parser
    args = build_parser().parse_args(["survey", "x.csv", "--out", str(tmp_path), "--preset", "two-column"])
    assert args.preset == "two-column"


def test_multiplicity_panel_of_a_one_multiplicity_survey_draws_without_warnings():
    """Every system with three planets (fraction 1 +- 0): the log axis still spans a decade, no warning."""
    import warnings
    import matplotlib.pyplot as plt
    from archsys.output.figures.survey import plot_multiplicity
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fig = plot_multiplicity({"n_systems": 50, "fractions": {"3": {"value": 1.0, "lo": 1.0, "hi": 1.0}}})
        lo, hi = fig.axes[0].get_ylim()
        fig.canvas.draw()
    plt.close(fig)
    assert lo == 0.1 and hi == 1.0
