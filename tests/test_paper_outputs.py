"""The paper outputs in real tools: every generated .tex through pdflatex, the HTML report in headless Chromium.

Both are skipped only where the tool is absent on a developer's machine;
``.ci/run`` installs TeX Live (with the AASTeX class from Debian's
texlive-publishers) and Chromium, so CI runs them.
"""
import json
import pathlib
import re
import shutil
import subprocess

import numpy as np
import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
PDFLATEX = shutil.which("pdflatex")
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """Every report format of the invented demo system Korrin, written by ``write_outputs``."""
    import archsys
    from archsys.output.formats import format_names, render, write_outputs
    from archsys.pipeline import AnalysisOptions, analyze
    out = tmp_path_factory.mktemp("paper")
    res = analyze(archsys.read_system(ROOT / "demo_systems" / "korrin.toml"),
                  AnalysisOptions(mode="direct", n_draws=600, quiet=True))
    write_outputs(res, out_dir=out)
    extra = {}
    for fmt in format_names():                       # every LaTeX-like format the renderer offers (plain, AASTeX, ...)
        if "latex" in fmt or "aastex" in fmt or "deluxe" in fmt:
            extra[fmt] = render(res, fmt)
    return out, extra


def _has_class(name):
    kpse = shutil.which("kpsewhich")
    return bool(kpse) and subprocess.run([kpse, name], capture_output=True, text=True).stdout.strip() != ""


def _wrap(body):
    """A complete document around a table fragment: AASTeX 6.31 for deluxetable, else a two-column article."""
    if "\\documentclass" in body:
        return body, "as written"
    if "deluxetable" in body:
        if _has_class("aastex631.cls"):
            return "\\documentclass{aastex631}\n\\begin{document}\n" + body + "\n\\end{document}\n", "aastex631"
        pytest.skip("AASTeX class aastex631.cls not installed (Debian: texlive-publishers)")
    return ("\\documentclass[twocolumn]{article}\n\\usepackage{amsmath}\n\\begin{document}\n" + body
            + "\n\\end{document}\n", "article")


def _compile(tex, where):
    where.mkdir(parents=True, exist_ok=True)
    (where / "doc.tex").write_text(tex, encoding="utf-8")
    r = subprocess.run([PDFLATEX, "-interaction=nonstopmode", "-halt-on-error", "doc.tex"], cwd=where,
                       capture_output=True, text=True, timeout=120)
    log = (where / "doc.log").read_text(errors="replace") if (where / "doc.log").exists() else r.stdout
    return r.returncode, log, where / "doc.pdf"


@pytest.mark.skipif(PDFLATEX is None, reason="pdflatex not installed (CI installs it)")
def test_every_generated_tex_compiles(outputs, tmp_path):
    out, extra = outputs
    sources = {p.name: p.read_text(encoding="utf-8") for p in sorted(out.glob("*.tex"))}
    sources.update({f"render-{k}": v for k, v in extra.items()})
    assert sources
    for name, body in sources.items():
        tex, how = _wrap(body)
        code, log, pdf = _compile(tex, tmp_path / re.sub(r"\W", "_", name))
        assert code == 0 and pdf.exists(), f"{name} ({how}) failed:\n" + log[-2500:]
        assert "Undefined control sequence" not in log and "Missing $" not in log, name


@pytest.mark.skipif(PDFLATEX is None or not _has_class("aastex631.cls"),
                    reason="pdflatex with the AASTeX class not installed (CI installs both)")
def test_plain_tables_also_compile_in_aastex(outputs, tmp_path):
    # The plain tabular output must drop into an AAS manuscript unchanged.
    out, _ = outputs
    for p in sorted(out.glob("*.tex")):
        body = p.read_text(encoding="utf-8")
        if "\\documentclass" in body:
            continue
        tex = "\\documentclass{aastex631}\n\\begin{document}\n" + body + "\n\\end{document}\n"
        code, log, _ = _compile(tex, tmp_path / p.stem)
        assert code == 0, log[-2500:]


def _external_refs(html):
    """src/href/url() references that leave the file: http(s) or protocol-relative URLs."""
    refs = re.findall(r"""(?:src|href)\s*=\s*["']([^"']*)["']""", html, flags=re.I)
    refs += re.findall(r"""url\(\s*["']?([^"')]*)""", html, flags=re.I)
    refs += re.findall(r"""@import\s+["']([^"']*)""", html, flags=re.I)
    return [r for r in refs if re.match(r"(?i)(https?:)?//", r.strip())]


def test_html_report_references_nothing_external(outputs):
    out, _ = outputs
    html = next(out.glob("*.html")).read_text(encoding="utf-8")
    assert _external_refs(html) == []
    assert _external_refs('<img src="https://example.org/x.png">') == ["https://example.org/x.png"]


def _chromium(page, tmp_path, tag):
    """Screenshot and network log of ``page`` in headless Chromium; DNS is mapped to nothing, so no
    request can leave the machine (it would still be logged)."""
    shot, netlog = tmp_path / f"{tag}.png", tmp_path / f"{tag}.json"
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
           "--disable-default-apps", "--disable-extensions", "--host-resolver-rules=MAP * ~NOTFOUND",
           f"--user-data-dir={tmp_path / ('profile-' + tag)}", f"--log-net-log={netlog}",
           "--window-size=1100,5000", f"--screenshot={shot}", page.resolve().as_uri()]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert shot.exists(), r.stderr[-2000:]
    return shot, netlog


def _page_requests(netlog):
    """URLs the page asked for: URL requests whose network isolation key is the file:// page
    (the browser's own update and clock queries carry no page origin and are not the report's)."""
    text = netlog.read_text(errors="replace")
    try:
        log = json.loads(text)
    except ValueError:                                     # log not closed when the browser exits
        log = json.loads(text.rstrip().rstrip(",") + "]}")
    names = {v: k for k, v in log["constants"]["logEventTypes"].items()}
    out = []
    for ev in log["events"]:
        p = ev.get("params") or {}
        if names.get(ev["type"]) == "URL_REQUEST_START_JOB" and "file://" in str(p.get("network_isolation_key", "")):
            out.append(p.get("url", ""))
    return out


@pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed (CI installs it)")
def test_html_report_renders_in_headless_chromium(outputs, tmp_path):
    out, _ = outputs
    page = next(out.glob("*.html"))
    n_img = page.read_text(encoding="utf-8").count("<img")
    assert n_img >= 2
    shot, netlog = _chromium(page, tmp_path, "report")
    import matplotlib.image
    img = matplotlib.image.imread(str(shot))[..., :3]
    # Figures are visible: the report's figures draw their data in the Okabe & Ito (2008) blue #0072B2,
    # which nothing else on the page uses; every figure adds thousands of such pixels.
    blue = np.array([0x00, 0x72, 0xB2]) / 255.0
    near = (np.abs(img - blue) < 0.08).all(axis=-1)
    assert near.sum() > 2000 * n_img, near.sum()
    rows = np.flatnonzero(near.any(axis=1))
    assert rows.size and np.ptp(rows) > 300                 # blue over a tall stretch: several figures, not one
    # No external URL requested by the page.
    external = [u for u in _page_requests(netlog) if re.match(r"(?i)(https?|wss?|ftp)://", u)]
    assert external == [], external
    # The check sees a request when there is one: the same page with one external image.
    bad = tmp_path / "bad.html"
    bad.write_text(page.read_text(encoding="utf-8").replace("<body>", '<body><img src="http://example.invalid/x.png">', 1),
                   encoding="utf-8")
    _, badlog = _chromium(bad, tmp_path, "bad")
    assert "http://example.invalid/x.png" in _page_requests(badlog)
