"""Peak memory of reading and grouping a large catalogue: ``python -m benchmarks.catalog_memory``.

Each reading runs in a fresh Python process (``resource.getrusage`` maxima are per process), on invented
three-planet systems (``archsys simulate --planets 3``, canonical columns, CSV and Parquet) at two sizes.
The figures of this tree and of a "before" reference (a git ref exported with ``git archive`` into a
temporary folder, the main branch when the streamed reading was taken up by default) come from the same
run on the same files.  Printed per tree, format and size:

``*_import_mib``
    peak resident memory after importing the catalogue module (the floor of every figure);
``*_read_mib`` / ``*_group_mib``
    peak after ``read_catalog`` / after ``group_systems`` as well;
``*_bytes_per_row``
    (group peak - import peak) / rows: what one catalogue row costs in memory;
``*_read_s`` / ``*_group_s``
    wall seconds of each step (noisy on a shared machine: compare ratios, not seconds).

The last lines extrapolate the group peak linearly in the number of rows, through the two sizes (the slope
is the memory of one more row; fixed costs such as pyarrow's buffers stay in the intercept), to 10^6
systems of 3 planets.  No figure is a pass/fail test.
"""
from __future__ import annotations

import argparse
import json
import os
import pathlib
import shutil
import subprocess
import sys
import tempfile

if __package__ in (None, ""):             # python benchmarks/catalog_memory.py: make the repository importable
    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
    __package__ = "benchmarks"

from .paths import REPO  # noqa: E402
from .survey_scale import export_tree  # noqa: E402

#: The main branch when catalogues were first streamed (issue 23, part 3).
BEFORE = "188efc5"
PLANETS = 3

_RUN = r"""
import json, resource, sys, time
def peak():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
from archsys.survey.catalog import group_systems, read_catalog
out = {"import_mib": peak()}
t0 = time.perf_counter()
cat = read_catalog(sys.argv[1])
out["read_s"] = time.perf_counter() - t0
out["read_mib"] = peak()
t0 = time.perf_counter()
groups, orphans = group_systems(cat, "system")
out["group_s"] = time.perf_counter() - t0
out["group_mib"] = peak()
out["rows"] = cat.n_rows
out["systems"] = len(groups)
print("@@" + json.dumps(out))
"""


def measure(tree, path):
    """Figures of one reading of ``path`` by source tree ``tree`` in a fresh process."""
    env = dict(os.environ, PYTHONPATH=str(tree), MPLBACKEND="Agg")
    # cwd: ``python -c`` puts the working folder first on sys.path, before PYTHONPATH
    r = subprocess.run([sys.executable, "-c", _RUN, str(path)], capture_output=True, text=True, env=env,
                       cwd=str(tree))
    line = [ln for ln in r.stdout.splitlines() if ln.startswith("@@")]
    if r.returncode != 0 or not line:
        raise RuntimeError(f"reading failed ({tree}, {path}): {r.stderr.strip()[-400:]}")
    res = json.loads(line[-1][2:])
    res["bytes_per_row"] = (res["group_mib"] - res["import_mib"]) * (1 << 20) / max(res["rows"], 1)
    return res


def catalogue(work, n, ext):
    """Invented systems of PLANETS planets each (``archsys simulate``), written once per size and format."""
    path = pathlib.Path(work) / f"synthetic{PLANETS}_{n}.{ext}"
    if not path.exists():
        from archsys.survey.synthetic import PopulationLaws, write_population
        write_population(path, n, PopulationLaws(planets=PLANETS), seed=1)
    return path


def run(sizes=(100_000, 300_000), formats=("csv", "parquet"), before=BEFORE, repo=None, log=None, work=None):
    log = log or (lambda k, v: None)
    out = {}
    tmp = tempfile.mkdtemp(prefix="archsys-catmem-")
    work = pathlib.Path(work) if work else pathlib.Path(tmp)
    try:
        trees = {"this": REPO}
        if before:
            try:
                trees["before"] = export_tree(before, pathlib.Path(tmp) / "before", repo=repo)
            except (subprocess.CalledProcessError, OSError) as exc:
                out["before_note"] = f"no '{before}' tree ({type(exc).__name__}); 'this' figures only"
                log("before_note", out["before_note"])
        for ext in formats:
            for n in sizes:
                path = catalogue(work, n, ext)
                out[f"{ext}_{n}_file_mib"] = path.stat().st_size / (1 << 20)
                log(f"{ext}_{n}_file_mib", out[f"{ext}_{n}_file_mib"])
                for label, tree in trees.items():
                    res = measure(tree, path)
                    for k in ("import_mib", "read_mib", "group_mib", "bytes_per_row", "read_s", "group_s"):
                        key = f"{label}_{ext}_{n}_{k}"
                        out[key] = res[k]
                        log(key, res[k])
            n1, n2 = min(sizes), max(sizes)
            for label in trees:
                m1, m2 = out[f"{label}_{ext}_{n1}_group_mib"], out[f"{label}_{ext}_{n2}_group_mib"]
                if n2 > n1:
                    slope = (m2 - m1) / ((n2 - n1) * PLANETS)              # MiB per row
                    out[f"{label}_{ext}_bytes_per_row_slope"] = slope * (1 << 20)
                    log(f"{label}_{ext}_bytes_per_row_slope", slope * (1 << 20))
                else:
                    slope = out[f"{label}_{ext}_{n2}_bytes_per_row"] / (1 << 20)
                key = f"{label}_{ext}_1e6_systems_read_group_mib_extrapolated"
                out[key] = m2 + slope * (1_000_000 - n2) * PLANETS
                log(key, out[key])
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m benchmarks.catalog_memory", description=__doc__.split("\n")[0])
    ap.add_argument("--json", action="store_true")
    ap.add_argument("--sizes", type=int, nargs="+", default=[100_000, 300_000], help="numbers of systems")
    ap.add_argument("--formats", nargs="+", default=["csv", "parquet"], choices=["csv", "parquet"])
    ap.add_argument("--before", default=BEFORE, help="git ref of the 'before' reference ('' to skip)")
    ap.add_argument("--repo", default=None, help="git checkout holding that ref (default: this one)")
    ap.add_argument("--work", default=None, help="folder to keep the generated catalogues in (default: temporary)")
    args = ap.parse_args(argv)

    def log(k, v):
        if not args.json:
            print(f"{k:<56} {v:.4g}" if isinstance(v, float) else f"{k:<56} {v}", flush=True)

    res = run(tuple(args.sizes), tuple(args.formats), args.before, args.repo, log, args.work)
    if args.json:
        print(json.dumps(res, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
