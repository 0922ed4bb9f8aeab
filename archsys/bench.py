"""``python -m archsys.bench``: the survey-at-scale benchmark figures, side by side in one run.

The figures (fast mode on invented catalogues at two sizes and the per-system slope, the open
catalogue extract end to end, full mode, Dask against local processes, each against v0.1.0 or the
main branch of before in the same run) are produced by ``benchmarks/survey_scale.py`` of a source
checkout: the older versions are exported from the checkout's git tags, so the benchmark needs the
repository, not only the installed package.  Arguments are those of
``python -m benchmarks.survey_scale`` (``--quick``, ``--only ...``, ``--json``).
"""
from __future__ import annotations

import pathlib
import sys

__all__ = ["main"]


def main(argv=None) -> int:
    root = pathlib.Path(__file__).resolve().parents[1]
    if not (root / "benchmarks" / "survey_scale.py").is_file():
        sys.stderr.write("archsys.bench: the benchmarks need a source checkout of archsys (its benchmarks/ "
                         "folder beside archsys/ and its git tags); run it from a clone of the repository\n")
        return 2
    sys.path.insert(0, str(root))
    from benchmarks.survey_scale import main as survey_scale
    return survey_scale(argv)


if __name__ == "__main__":
    sys.exit(main())
