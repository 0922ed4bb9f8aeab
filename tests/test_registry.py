"""The score registry and the one table model: a registered score reaches every format, every key
has column metadata, and one run shows the same numbers and percentages in every format."""
import ast
import copy
import json
import pathlib
import re

import numpy as np
import pytest

import archsys
from archsys.inference.summary import probability, summarize
from archsys.output.formats import render
from archsys.output.numbers import fmt_percent, plain_cell
from archsys.output.table_model import document_tables
from archsys.pipeline import AnalysisOptions, analyze
from archsys.scores import Column, Score, ScoreResult, column, registered, registered_scores, verdict

ROOT = pathlib.Path(__file__).resolve().parents[1]
HUMAN = ("text", "markdown", "html", "latex", "aastex")


@pytest.fixture(scope="module")
def velmora():
    return analyze(archsys.read_system(archsys.demo_path("velmora")), AnalysisOptions(n_draws=600, mode="fast"))


class ToyScore(Score):
    """A made-up score for the test: twice the period ratio, and a fixed system probability."""

    name = "toy_widget"
    order = 95
    columns = (
        Column("toy_doubled_ratio", "toy doubled ratio ζ", r"$\zeta_\mathrm{toy}$", "au", "au", table="pair"),
        Column("toy_criterion_probability", "toy criterion holds", r"Toy criterion $\zeta$", fmt="percent",
               table="system"),
    )

    def per_draw(self, ctx):
        return {"toy": 2.0 * ctx.arrays["period_ratio"]}

    def summarise(self, ctx, arrays):
        return ScoreResult(pairs=[{"toy_doubled_ratio": summarize(arrays["toy"][:, j])} for j in range(ctx.n_pairs)],
                           system={"toy_criterion_probability": probability(arrays["toy"][:, 0] > 3.0)})

    def verdicts(self, ctx):
        return [verdict("toy_code", ctx.system["toy_criterion_probability"], ctx.names,
                        criterion="toy criterion on the inner pair", citation="invented for this test")]


def test_registered_toy_score_appears_in_every_format():
    system = archsys.read_system(archsys.demo_path("velmora"))
    with registered(ToyScore()):
        res = analyze(system, AnalysisOptions(n_draws=300, mode="fast"))
        outs = {f: render(res, f, figures=[]) for f in HUMAN + ("json",)}
    doc = json.loads(outs["json"])
    assert "toy_doubled_ratio" in doc["pairs"][0] and "toy_criterion_probability" in doc
    assert any(v["code"] == "toy_code" for v in doc["structured_verdicts"])
    # 2 x the b-c period ratio 1.5049 (velmora.toml periods 3.102139 and 4.668512 d)
    assert doc["pairs"][0]["toy_doubled_ratio"]["median"] == pytest.approx(2 * 4.668512 / 3.102139, rel=1e-4)
    pct = fmt_percent(doc["toy_criterion_probability"])
    for f in ("text", "markdown", "html"):
        assert "toy doubled ratio ζ" in outs[f], f
        assert "toy criterion holds" in outs[f] and pct in outs[f], f
        assert "toy criterion on the inner pair" in outs[f], f
    for f in ("latex", "aastex"):
        assert r"$\zeta_\mathrm{toy}$" in outs[f] and r"Toy criterion $\zeta$" in outs[f], f
        assert pct.replace(" %", r"\,\%") in outs[f], f
    # unregistered again afterwards: the next run has no toy keys
    assert "toy_widget" not in {s.name for s in registered_scores()}
    assert "toy_doubled_ratio" not in analyze(system, AnalysisOptions(n_draws=100, mode="fast")).document["pairs"][0]


def _flat_keys(block, prefix=""):
    for k, v in block.items():
        if isinstance(v, dict) and not {"median", "lo", "hi"} <= set(v):
            yield from _flat_keys(v, f"{prefix}{k}.")
        else:
            yield f"{prefix}{k}"


@pytest.mark.parametrize("demo", ["velmora", "korrin", "ondrel"])
def test_every_document_key_has_column_metadata(demo):
    res = analyze(archsys.read_system(archsys.demo_path(demo)), AnalysisOptions(n_draws=300, mode="fast"))
    doc = res.document
    for q in doc["pairs"]:
        for k in set(q) - {"inner", "outer"}:
            assert column(k, "pair") is not None, k
    for p in doc["planets"]:
        for k in set(p) - {"name", "not_constrained_by_data", "data_or_prior"}:
            assert column(k, "planet") is not None, k
    meta = {"schema_version", "system", "star", "planets", "pairs", "sampler", "disclaimer", "provenance",
            "verdicts", "structured_verdicts", "posterior_usability", "data_or_prior"}
    for k in _flat_keys({k: v for k, v in doc.items() if k not in meta}):
        assert column(k, "system") is not None, k
    for v in doc["structured_verdicts"]:
        assert {"code", "subjects", "probability", "criterion", "citation"} <= set(v)


def test_labels_are_not_json_keys_and_probabilities_have_no_unit(velmora):
    t = document_tables(velmora.document)
    rows = [c for c in t.planets.columns + t.pairs.columns] + [c for c, _ in t.system]
    for c in rows:
        if c.fmt == "percent":
            assert c.unit == "" and "deg" not in c.unit_latex, c.key
        assert "_" not in c.label, c.key                     # human labels, not keys
    labels = [c.label for c, _ in t.system]
    assert sum("dispersion σ" in lab for lab in labels) <= 1  # sigma listed once


def _numbers(cell):
    return re.findall(r"\d+(?:\.\d+)?", plain_cell(cell))


def test_same_numbers_and_percentages_in_every_format(velmora):
    outs = {f: render(velmora, f, figures=[]) for f in HUMAN}
    t = document_tables(velmora.document)
    cells = [c for row in t.planets.rows + t.pairs.rows for c in row] + [c for _, c in t.star + t.system]
    checked = 0
    for cell in cells:
        if cell[0] not in ("pm", "percent", "number"):
            continue
        for num in _numbers(cell):
            for f, s in outs.items():
                assert num in s, (f, cell)
            checked += 1
    assert checked > 50
    # every percentage of the tables appears, formatted the same way, in text, Markdown and HTML
    for cell in cells:
        if cell[0] == "percent":
            for f in ("text", "markdown"):
                assert cell[1] in outs[f], (f, cell)
            assert cell[1].replace(">", "&gt;").replace("<", "&lt;") in outs["html"]


def test_small_and_large_probabilities_agree_across_formats(velmora):
    # The regression of issue 12: text said AMD "0 %" and Hill "100 %" where Markdown said "0.2 %" and "> 99.9 %".
    doc = copy.deepcopy(velmora.document)
    doc["pairs"][0]["amd_stable_probability"] = 0.002
    doc["pairs"][0]["hill_stable_probability"] = 0.9996
    outs = {f: render(doc, f, figures=[]) for f in HUMAN}
    for f in ("text", "markdown"):
        assert "0.2 %" in outs[f] and ">99.9 %" in outs[f], f
    assert "0.2 %" in outs["html"] and "&gt;99.9 %" in outs["html"]
    for f in ("latex", "aastex"):
        assert r"0.2\,\%" in outs[f] and r"$>$99.9\,\%" in outs[f], f


def test_renderers_never_import_formats():
    # the formats package imports the renderers; a renderer importing it back would be a cycle
    out_dir = ROOT / "archsys" / "output"
    for rel in ("formats/terminal", "formats/markdown", "formats/html", "formats/latex", "table_model",
                "numbers", "wording", "latex_escape", "json_document"):
        package = ("archsys.output." + rel.replace("/", ".")).rsplit(".", 1)[0]
        tree = ast.parse((out_dir / f"{rel}.py").read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package.split(".")[: len(package.split(".")) - node.level + 1]
                    target = ".".join(base + ([node.module] if node.module else []))
                else:
                    target = node.module
                assert target != "archsys.output.formats", rel
                if target == "archsys.output":
                    assert "formats" not in [a.name for a in node.names], rel


def test_aastex_deluxetable_has_labels_and_units(velmora):
    tex = render(velmora, "aastex")
    assert tex.count(r"\begin{deluxetable*}") == tex.count(r"\end{deluxetable*}") == 3
    assert r"\colhead{$P$}" in tex and r"\colhead{$P_\mathrm{out}/P_\mathrm{in}$}" in tex
    assert r"\colhead{d}" in tex and r"\colhead{au}" in tex and r"\colhead{$M_\oplus$}" in tex
    assert r"\startdata" in tex and r"\enddata" in tex and r"\tablecomments{" in tex


def test_registry_order_and_columns_are_well_formed():
    scores = registered_scores()
    names = [s.name for s in scores]
    assert len(names) == len(set(names))
    keys = [(c.table, c.key) for s in scores for c in s.columns]
    assert len(keys) == len(set(keys))
    assert [s.order for s in scores] == sorted(s.order for s in scores)
    assert np.all([c.label and c.latex for s in scores for c in s.columns])


def test_developers_example_score_runs():
    # DEVELOPERS.md "A new score": the example module, imported as if it were archsys/scores/my_score.py
    text = (ROOT / "DEVELOPERS.md").read_text()
    code = re.search(r"### A new score.*?```python\n(.*?)```", text, re.S).group(1)
    code = code.replace("from ..", "from archsys.").replace("from .registry", "from archsys.scores.registry")
    code = code.replace("register(MyScore)", "")                  # registered below, for this test only
    ns = {}
    exec(compile(code, "DEVELOPERS.md", "exec"), ns)
    with registered(ns["MyScore"]()):
        res = analyze(archsys.read_system(archsys.demo_path("velmora")), AnalysisOptions(n_draws=200, mode="fast"))
        md = render(res, "markdown")
    assert "my_ratio" in res.document["pairs"][0] and "my_probability" in res.document
    assert "my ratio" in md and "P(my criterion)" in md
