"""Report formats (Markdown, HTML, LaTeX, JSON, text) and write_outputs."""
import copy
import hashlib
import json
import re
import shutil
import subprocess
from html.parser import HTMLParser

import pytest

from archsys import read_system
from archsys.errors import InputError
from archsys.output import figures as figures_mod
from archsys.output.formats import latex as latex_mod
from archsys.output.formats import document_tables, format_cell, render, write_outputs
from archsys.output.formats.html import render_html
from archsys.output.formats.latex import escape, latex_cell, render_latex, standalone
from archsys.output.formats.markdown import render_markdown
from archsys.output.formats.terminal import render_text
from archsys.pipeline import AnalysisOptions, analyze

# Invented two-planet transiting system (values made up for the test).
SYSTEM = """
name = "Testa"
[star]
mass = { value = 1.0, err = 0.05 }
radius = { value = 1.0, err = 0.03 }
[[planet]]
name = "Testa b"
period = { value = 5.0, err = 0.001 }
mass = { value = 6.0, err = 1.0 }
secosw = { value = 0.1, err = 0.05 }
sesinw = { value = 0.1, err = 0.05 }
b = { value = 0.3, err = 0.1 }
transiting = true
[[planet]]
name = "Testa c"
period = { value = 7.6, err = 0.002 }
mass = { value = 9.0, err = 2.0 }
b = { value = 0.5, err = 0.1 }
transiting = true
"""


@pytest.fixture(scope="module")
def source(tmp_path_factory):
    f = tmp_path_factory.mktemp("sys") / "testa.toml"
    f.write_text(SYSTEM)
    return f


@pytest.fixture(scope="module")
def result(source):
    return analyze(read_system(source), AnalysisOptions(n_draws=400, mode="direct"))


@pytest.fixture(scope="module")
def written(result, tmp_path_factory):
    out = tmp_path_factory.mktemp("out")
    return out, write_outputs(result, out_dir=out)


def _summ(med, lo, hi):
    return {"median": med, "lo": lo, "hi": hi}


# --- numbers ---------------------------------------------------------------
def test_worked_rounding_example_in_latex_cell():
    # Worked example of the two-significant-figure rule (archsys.output.numbers docstring;
    # common practice in journals): 0.12345 +0.00123 -0.00098 -> 0.1235^{+0.0012}_{-0.0010}
    cell = format_cell(_summ(0.12345, 0.12345 - 0.00098, 0.12345 + 0.00123))
    assert latex_cell(cell) == "$0.1235^{+0.0012}_{-0.0010}$"


def test_symmetric_errors_use_pm():
    # 1.234 +/- 0.056 rounds to 1.234 +/- 0.056 (two significant figures; common practice)
    assert latex_cell(format_cell(_summ(1.234, 1.178, 1.290))) == r"$1.234 \pm 0.056$"


def test_probabilities_never_round_to_certainty():
    assert format_cell(0.9996, "hill_stable_probability") == ("percent", ">99.9 %")
    assert format_cell(1.0, "hill_stable_probability") == ("percent", "100 %")
    assert format_cell(0.42, "near_resonance_probability") == ("percent", "42 %")


# --- files of write_outputs ---------------------------------------------------
def test_every_format_written_and_non_empty(written):
    out, files = written
    for suffix in (".json", ".md", ".html", ".tex", ".txt", ".chains.npz", ".provenance.json"):
        p = out / f"Testa{suffix}"
        assert p.is_file() and p.stat().st_size > 0, suffix
        assert files[p.name] == p
    figs = sorted(p.name for p in (out / "figures").iterdir())
    assert "Testa_architecture.pdf" in figs and "Testa_architecture.png" in figs
    assert "Testa_period_ratios.png" in figs and "Testa_corner_b.png" in figs


def test_no_temporary_files_left(written):
    out, _ = written
    leftovers = [p for p in out.rglob("*") if p.name.startswith(".") or p.name.endswith(".tmp")]
    assert leftovers == []


def test_json_is_the_document(written, result):
    out, _ = written
    assert json.loads((out / "Testa.json").read_text()) == json.loads(json.dumps(result.document))


def test_text_is_the_terminal_report(written, result):
    out, _ = written
    assert (out / "Testa.txt").read_text() == render_text(result.document)


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.urls = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for k, v in attrs:
            if k in ("src", "href", "srcset", "action", "data"):
                self.urls.append(v or "")


def test_html_parses_is_self_contained(written):
    out, _ = written
    text = (out / "Testa.html").read_text()
    p = _Collect()
    p.feed(text)
    p.close()
    assert "table" in p.tags and "img" in p.tags
    assert "script" not in p.tags and "link" not in p.tags
    for url in p.urls:
        # No external URL: nothing starting with http:, https: or // (protocol-relative), no scheme://.
        # Base64 data may itself contain "//"; that is data, not a URL.
        assert url.startswith(("data:image/png;base64,", "#")), url[:40]
        assert not url.startswith(("http:", "https:", "//"))
        assert "://" not in url
    assert "http://" not in text and "https://" not in text
    assert "@import" not in text and "url(" not in text
    assert text.count("<img") == len([f for f in (out / "figures").iterdir() if f.suffix == ".png"])


def test_markdown_tables_and_figure_links(written):
    out, _ = written
    md = (out / "Testa.md").read_text()
    assert md.startswith("# Testa")
    assert "| planet | P [d] | a [au]" in md
    rows = [ln for ln in md.splitlines() if ln.startswith("| b ") or ln.startswith("| c ")]
    assert len(rows) == 2
    assert "| b–c |" in md
    links = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", md)
    assert links and all((out / link).is_file() for link in links)


def _strip_comments(tex):
    return "\n".join(re.sub(r"(?<!\\)%.*$", "", ln) for ln in tex.splitlines())


def _check_balanced(tex):
    body = _strip_comments(tex)
    stack = []
    for kind, env in re.findall(r"\\(begin|end)\{([A-Za-z*]+)\}", body):
        if kind == "begin":
            stack.append(env)
        else:
            assert stack and stack.pop() == env, env
    assert stack == []
    depth = 0
    for m in re.finditer(r"(?<!\\)[{}]", body):
        depth += 1 if m.group() == "{" else -1
        assert depth >= 0
    assert depth == 0
    for ln in body.splitlines():
        assert len(re.findall(r"(?<!\\)\$", ln)) % 2 == 0, ln


def test_latex_table_balanced_with_units(written):
    out, _ = written
    tex = (out / "Testa.tex").read_text()
    _check_balanced(tex)
    assert r"\begin{tabular}" in tex and r"\hline" in tex
    assert "booktabs" not in _strip_comments(tex)
    assert "(d) & (au) & ($M_\\oplus$)" in tex                # unit row of the planet table
    assert re.search(r"\$[0-9.]+\^\{\+[0-9.]+\}_\{-[0-9.]+\}\$|\$[0-9.]+ \\pm [0-9.]+\$", tex)


def _compile(tmp_path, fragment):
    (tmp_path / "t.tex").write_text(standalone(fragment))
    run = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", "t.tex"],
                         cwd=tmp_path, capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stdout[-2000:]
    assert (tmp_path / "t.pdf").stat().st_size > 0


@pytest.mark.skipif(shutil.which("pdflatex") is None, reason="pdflatex not installed")
def test_latex_compiles(written, tmp_path):
    out, _ = written
    _compile(tmp_path, (out / "Testa.tex").read_text())


def test_provenance_sidecar(written, source):
    out, _ = written
    prov = json.loads((out / "Testa.provenance.json").read_text())
    assert prov["input_sha256"] == hashlib.sha256(source.read_bytes()).hexdigest()
    assert prov["seed"] == 0 and prov["draws"] == 400
    assert prov["sampler"]["method"]
    assert "priors" in prov and "options" in prov
    assert {"numpy", "matplotlib", "corner"} <= set(prov["versions"])
    for name, info in prov["outputs"].items():                 # checksums match the files
        data = (out / name).read_bytes()
        assert hashlib.sha256(data).hexdigest() == info["sha256"], name
        assert len(data) == info["bytes"]


def test_figures_only_when_only_fig_dir(result, tmp_path, monkeypatch):
    monkeypatch.setattr(figures_mod, "make_figures", lambda d, doc, preset=None: [
        figures_mod.FigureItem("architecture", figures_mod.architecture_figure([doc]), "cap")])
    files = write_outputs(result, fig_dir=tmp_path / "figs")
    assert sorted(files) == ["Testa_architecture.pdf", "Testa_architecture.png"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["figs"]


def test_no_partial_outputs_when_rendering_fails(result, tmp_path, monkeypatch):
    monkeypatch.setattr(figures_mod, "make_figures", lambda d, doc, preset=None: [])

    def boom(doc):
        raise RuntimeError("renderer failed")

    monkeypatch.setattr(latex_mod, "render_latex", boom)
    out = tmp_path / "out"
    with pytest.raises(RuntimeError):
        write_outputs(result, out_dir=out)
    assert not out.exists() or list(out.rglob("*")) == []


def test_bad_preset_writes_nothing(result, tmp_path):
    with pytest.raises(InputError, match="preset"):
        write_outputs(result, out_dir=tmp_path / "o", preset="poster")
    assert not (tmp_path / "o").exists()


def test_out_dir_that_is_a_file(result, tmp_path):
    f = tmp_path / "file"
    f.write_text("x")
    with pytest.raises(InputError, match="not a folder"):
        write_outputs(result, out_dir=f)


# --- render -------------------------------------------------------------------
@pytest.mark.parametrize("fmt", ["markdown", "latex", "json", "text"])
def test_render_formats(result, fmt):
    s = render(result, fmt)
    assert isinstance(s, str) and "Testa" in s


def test_render_html_from_document(result):
    s = render(result.document, "html", figures=[])
    p = _Collect()
    p.feed(s)
    assert "table" in p.tags


def test_render_unknown_format(result):
    with pytest.raises(InputError, match="format"):
        render(result, "docx")


# --- keys present or absent ---------------------------------------------------------
def _rich(doc):
    d = copy.deepcopy(doc)
    q = d["pairs"][0]
    q.update(nearest_mmr="3:2", mmr_offset=_summ(0.004, 0.003, 0.005), near_resonance_probability=0.42,
             mutual_inclination_deg=_summ(1.7, 1.1, 2.6), amd_stable_probability=0.03, foo_widget_deg=12.5)
    d["planets"][0]["tilt_deg"] = _summ(0.9, 0.4, 1.6)
    d["flatness"] = {"basis": "orientation posterior", "max_mutual_inclination_deg": _summ(2.2, 1.5, 3.3)}
    d["gap_complexity"] = _summ(0.11, 0.09, 0.13)
    d["mutual_inclination_sigma_deg"] = _summ(1.2, 0.8, 1.9)
    d["sampler"] = {"method": "MCMC", "walkers": 32, "autocorrelation_time": {f"x{i}": 10.0 + i for i in range(9)}}
    d["verdicts"] = ["A new verdict sentence."]
    return d


def test_new_keys_rendered_everywhere(result, tmp_path):
    d = _rich(result.document)
    md, ht, tex = render_markdown(d), render_html(d), render_latex(d)
    for s in (md, ht):
        assert "3:2" in s and "42 %" in s and "A new verdict sentence." in s
        assert "0.40 ± 0.10" in s                                # offset 0.004 +/- 0.001 as percent
        assert "largest mutual inclination" in s                  # label from the column metadata
        assert "flatness: max mutual inclination" not in s        # never a label made from the JSON key
        assert "foo_widget_deg" in s and "tilt_deg" in s          # keys nobody describes: shown, under the raw key
    assert "3:2" in tex and r"$0.40 \pm 0.10$" in tex and "42\\,\\%" in tex
    assert r"$\sigma_\mathrm{mut}$" in tex
    _check_balanced(tex)
    if shutil.which("pdflatex"):
        _compile(tmp_path, tex)


def test_absent_keys_skipped():
    d = {"system": "Solo", "star": {"mass_msun": _summ(1.0, 0.95, 1.05)},
         "planets": [{"name": "Solo b", "period_days": _summ(3.0, 2.99, 3.01)}], "pairs": []}
    md, ht, tex = render_markdown(d), render_html(d), render_latex(d)
    assert "Single planet" in md and "Adjacent pairs" not in md
    assert "Solo" in ht
    _check_balanced(tex)
    t = document_tables(d)
    assert [c.key for c in t.planets.columns] == ["name", "period_days"]
    assert t.pairs is None


def test_latex_escapes_names(result, tmp_path):
    d = copy.deepcopy(result.document)
    d["system"] = "A&B_1 %#"
    d["planets"][0]["name"] = "τ Boo b"
    tex = render_latex(d)
    assert r"A\&B\_1 \%\#" in tex
    assert escape("τ Boo") == r"$\tau$ Boo"
    _check_balanced(tex)
    if shutil.which("pdflatex"):
        _compile(tmp_path, tex)
