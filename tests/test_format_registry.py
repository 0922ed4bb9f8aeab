"""Report formats are registered like scores: a new format is one module, and the command line,
``archsys.render`` and ``--out`` pick it up (behaviour checks of archsys's own design; no outside source)."""
import pytest

import archsys
from archsys.cli_parser import build_parser
from archsys.cli import main
from archsys.errors import InputError
from archsys.output.formats import (RenderContext, ReportFormat, format_names, registered_format, render,
                                    write_outputs)
from archsys.pipeline import AnalysisOptions, analyze


@pytest.fixture(scope="module")
def korrin():
    return analyze(archsys.read_system(archsys.demo_path("korrin")), AnalysisOptions(mode="direct", n_draws=100))


def test_builtin_formats_in_file_order():
    assert format_names() == ["json", "markdown", "html", "latex", "aastex", "verdicts", "bib", "text"]


def test_command_line_offers_every_registered_format_including_aastex(capsys):
    rc = main(["report", archsys.demo_path("korrin"), "--mode", "direct", "--draws", "100", "--format",
               "aastex", "--quiet"])
    assert rc == 0
    assert r"\begin{deluxetable*}" in capsys.readouterr().out


def test_one_module_adds_a_format_everywhere(korrin, tmp_path):
    def render_count(doc, ctx):
        assert isinstance(ctx, RenderContext)
        return f"{len(doc['planets'])} planets\n"

    with registered_format(ReportFormat("count", ".count.txt", render_count, aliases=("cnt",))):
        assert "count" in format_names()
        assert render(korrin, "cnt") == "3 planets\n"
        written = write_outputs(korrin, out_dir=tmp_path)
        (count_file,) = [path for name, path in written.items() if name.endswith(".count.txt")]
        assert count_file.read_text() == "3 planets\n"
        args = build_parser().parse_args(["report", "--format", "count"])
        assert args.format == "count"
    assert "count" not in format_names()


def test_unknown_format_is_one_line_naming_the_choices(korrin):
    with pytest.raises(InputError, match="unknown report format 'docx'; choose one of json, markdown"):
        render(korrin, "docx")
