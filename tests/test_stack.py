"""The stacked architecture figure (`archsys stack`) and the author's choice of corner parameters."""
import json
import pathlib

import numpy as np
import pytest

from archsys.cli import main
from archsys.errors import InputError
from archsys.output import figures as F
from archsys.output.figures.stack import collect_documents, sort_documents

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _survey_folder(tmp_path):
    """An invented survey result folder in the layout `archsys survey --out` writes."""
    d = tmp_path / "survey"
    d.mkdir()
    (d / "systems.csv").write_text(
        "system,n_planets,star_mass_msun_median,gap_complexity_median\n"
        "Aa,3,1.0,0.1\nBb,2,0.5,\nCc,4,0.8,0.3\n")
    rows = ["system,planet,period_days_median,a_au_median,mass_mearth_median,msini_mearth_median,ecc_median"]
    for sid, n, m in (("Aa", 3, 1.0), ("Bb", 2, 0.5), ("Cc", 4, 0.8)):
        for j in range(n):
            P = 3.0 * 1.7 ** j
            a = (m * (P / 365.25) ** 2) ** (1 / 3)
            rows.append(f"{sid},{sid} {'bcde'[j]},{P},{a},{3 + j},,0.0{j}")
    (d / "planets.csv").write_text("\n".join(rows) + "\n")
    (d / "pairs.csv").write_text("system,inner,outer,hill_stable_probability,hill_separation_median\n"
                                 "Aa,Aa b,Aa c,0.99,20\nAa,Aa c,Aa d,0.5,9\nBb,Bb b,Bb c,0.01,3\n"
                                 "Cc,Cc b,Cc c,,\nCc,Cc c,Cc d,0.97,15\nCc,Cc d,Cc e,0.96,16\n")
    return d


def test_stack_from_a_survey_folder_with_selection_and_sort(tmp_path, capsys):
    d = _survey_folder(tmp_path)
    docs = collect_documents([d], where=["n_planets>=3"])
    assert sorted(x["system"] for x in docs) == ["Aa", "Cc"]
    assert [x["system"] for x in sort_documents(docs, "-n_planets")] == ["Cc", "Aa"]
    assert [x["system"] for x in sort_documents(collect_documents([d]), "star_mass")] == ["Bb", "Cc", "Aa"]
    # a numeric survey column works as a key; systems without a value go last
    assert [x["system"] for x in sort_documents(collect_documents([d]), "gap_complexity_median")][-1] == "Bb"
    code = main(["stack", str(d), "--where", "n_planets>=3", "--sort-by", "n_planets", "--descending",
                 "--figures", str(tmp_path / "figs"), "--name", "rows"])
    assert code == 0
    out = capsys.readouterr().out.split()
    assert sorted(pathlib.Path(p).name for p in out) == ["rows.pdf", "rows.png"]
    assert (tmp_path / "figs" / "rows.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    fig = F.architecture_figure(sort_documents(docs, "-n_planets"))
    assert [t.get_text() for t in fig.axes[0].get_yticklabels()] == ["Aa", "Cc"]   # first row on top


def test_stack_errors_are_one_line(tmp_path, capsys):
    d = _survey_folder(tmp_path)
    assert main(["stack", str(d), "--sort-by", "colour", "--figures", str(tmp_path / "f")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "unknown key 'colour'" in err[0]
    assert main(["stack", str(tmp_path), "--figures", str(tmp_path / "f")]) == 2
    assert "not a survey folder" in capsys.readouterr().err
    assert main(["stack", str(d), "--where", "n_planets>=9", "--figures", str(tmp_path / "f")]) == 2
    assert "no system to draw" in capsys.readouterr().err


def test_stack_from_documents_and_system_files(tmp_path, capsys):
    import archsys
    from archsys.pipeline import AnalysisOptions, analyze
    doc = analyze(archsys.read_system(ROOT / "demo_systems" / "ondrel.toml"),
                  AnalysisOptions(mode="direct", n_draws=200, quiet=True)).document
    (tmp_path / "ondrel.json").write_text(json.dumps(doc))
    code = main(["stack", str(tmp_path / "ondrel.json"), str(ROOT / "demo_systems" / "korrin.toml"),
                 "--mode", "direct", "--draws", "200", "--sort-by=-a_inner", "--figures", str(tmp_path / "f")])
    assert code == 0
    docs = sort_documents(collect_documents([tmp_path / "ondrel.json"]) + [doc], "name")
    assert [d["system"] for d in docs] == ["Ondrel", "Ondrel"]


@pytest.fixture(scope="module")
def korrin():
    import archsys
    from archsys.pipeline import AnalysisOptions, analyze
    res = analyze(archsys.read_system(ROOT / "demo_systems" / "korrin.toml"),
                  AnalysisOptions(mode="direct", n_draws=400, quiet=True))
    return res.posterior.draws, res.document


def test_corner_params_choose_the_paper_figure(korrin):
    draws, doc = korrin
    chosen = F.choose_parameters(draws, doc, "m_*,e_b")
    keys = [q.key for q in chosen]
    assert keys[-1] == "e_b" and all(k.startswith("m_") for k in keys[:-1]) and len(keys) >= 3
    with pytest.raises(InputError, match="available: .*e_b"):
        F.choose_parameters(draws, doc, "x_b")
    items = F.make_figures(draws, doc, corner_params="e_b,m_b")
    sel = [it for it in items if it.name == "corner_selected"]
    assert len(sel) == 1 and len(sel[0].figure.axes) == 4
    many = ",".join(q.key for q in F.choose_parameters(draws, doc, "*"))
    if len(many.split(",")) > 3:
        with pytest.raises(InputError, match="do not fit one slide figure"):
            F.make_figures(draws, doc, preset="slide", corner_params=many)
    assert np.all(np.isfinite(sel[0].figure.get_size_inches()))


@pytest.mark.parametrize("preset", ["one-column", "slide"])
def test_many_systems_are_split_into_pages_that_fit(tmp_path, preset):
    import matplotlib.image
    from archsys.output.style import PRESETS
    from archsys.output.figures.stack import write_stacked_figure
    d = _survey_folder(tmp_path)
    docs = collect_documents([d]) * 12                      # 36 rows
    paths = write_stacked_figure(docs, tmp_path / "f", stem="many", preset=preset)
    pngs = sorted(p for p in paths if p.suffix == ".png")
    assert len(pngs) >= 2 and pngs[0].name == "many_1.png"
    p = PRESETS[preset]
    for png in pngs:
        h_in = matplotlib.image.imread(str(png)).shape[0] / p.dpi
        assert h_in <= p.page_height_in + 0.05, (png.name, h_in)
