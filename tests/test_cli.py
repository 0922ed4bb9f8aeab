"""`archsys report`: demos, the JSON contract, reproducibility, the console entry point."""
import hashlib
import importlib
import json
import math
import os
import pathlib
import subprocess
import sys

import pytest

from archsys.compat import tomllib

import archsys
from archsys.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[1]
DEMOS = sorted((ROOT / "demo_systems").glob("*.toml"))
FAST = ["--mode", "direct", "--draws", "300"]   # direct draws keep this file fast
KORRIN = ROOT / "demo_systems" / "korrin.toml"



def _run(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def _env():
    return dict(os.environ, PYTHONPATH=str(ROOT))


def test_demo_files_exist():
    assert len(DEMOS) >= 3


def test_report_without_files_runs_every_demo(capsys):
    rc, out, err = _run(["report", *FAST], capsys)
    assert rc == 0, err
    for f in DEMOS:
        name = tomllib.loads(f.read_text())["name"]
        assert name in out


def _check_numbers(node, path=""):
    """JSON contract (archsys.output.json_document): every uncertain number is a
    {median, lo, hi} summary; bare floats are only probabilities in [0, 1]; bare
    integers are counts or orders; no NaN or infinity anywhere."""
    if isinstance(node, dict):
        if "median" in node:
            assert {"median", "lo", "hi"} <= set(node), path
            m, lo, hi = node["median"], node["lo"], node["hi"]
            if node.get("infinite_fraction"):          # README "Infinite values": infinite percentiles are null
                assert 0 < node["infinite_fraction"] <= 1, path
                vals = [v for v in (lo, m, hi) if v is not None]
                assert vals == sorted(vals) and (hi is None), path
                return
            assert all(isinstance(v, (int, float)) and math.isfinite(v) for v in (m, lo, hi)), path
            assert lo <= m <= hi, path
            return
        for k, v in node.items():
            if path == "" and k in ("provenance", "sampler", "schema_version", "posterior_usability"):
                continue
            if k == "data_or_prior":        # diagnostics (README "Data or prior?"): ratios, not summaries
                continue
            if isinstance(v, float):
                assert "probability" in k, f"{path}/{k} is a bare float, not a summary"
                assert math.isfinite(v) and 0.0 <= v <= 1.0, f"{path}/{k}"
            _check_numbers(v, f"{path}/{k}")
    elif isinstance(node, list):
        for i, v in enumerate(node):
            _check_numbers(v, f"{path}[{i}]")


@pytest.mark.parametrize("demo", DEMOS, ids=[d.stem for d in DEMOS])
def test_json_contract(demo, capsys):
    rc, out, err = _run(["report", str(demo), "--json", "--seed", "3", *FAST], capsys)
    assert rc == 0, err
    doc = json.loads(out)
    src = tomllib.loads(demo.read_text())
    assert doc["system"] == src["name"]
    assert "mass_msun" in doc["star"]
    names = [p["name"] for p in doc["planets"]]
    assert sorted(names) == sorted(p["name"] for p in src["planet"])
    for p in doc["planets"]:
        assert {"name", "period_days", "a_au"} <= set(p)
        assert "msini_mearth" in p or "mass_mearth" in p
    periods = [p["period_days"]["median"] for p in doc["planets"]]
    assert periods == sorted(periods)                      # planets sorted by period
    assert len(doc["pairs"]) == len(names) - 1
    for q, (inner, outer) in zip(doc["pairs"], zip(names, names[1:])):
        assert (q["inner"], q["outer"]) == (inner, outer)
        assert {"period_ratio", "hill_separation"} <= set(q)
        assert q["period_ratio"]["median"] > 1
    prov = doc["provenance"]
    assert prov["input_sha256"] == hashlib.sha256(demo.read_bytes()).hexdigest()
    assert prov["seed"] == 3
    assert prov["package_version"] == archsys.__version__
    assert prov["draws"] == 300
    _check_numbers(doc)
    assert "NaN" not in out and "Infinity" not in out


def test_several_files_give_a_json_list(capsys):
    rc, out, _ = _run(["report", *map(str, DEMOS[:2]), "--json", *FAST], capsys)
    assert rc == 0
    docs = json.loads(out)
    assert isinstance(docs, list) and len(docs) == 2


def test_seed_reproducible_byte_identical(capsys):
    argv = ["report", str(KORRIN), "--json", "--seed", "42", *FAST]
    outs = [_run(argv, capsys)[1] for _ in range(2)]
    assert outs[0] == outs[1]
    other = _run(["report", str(KORRIN), "--json", "--seed", "43", *FAST], capsys)[1]
    assert other != outs[0]
    assert json.loads(other)["provenance"]["seed"] == 43


def test_text_report(capsys):
    rc, out, _ = _run(["report", str(KORRIN), *FAST], capsys)
    assert rc == 0
    assert "Korrin" in out and "Korrin b" not in out.splitlines()[0]
    assert "\033[" not in out                  # no colour when not a terminal


def test_python_m_archsys_subprocess_matches_in_process(capsys):
    # Same input and seed in a fresh interpreter: byte-identical JSON (document.py
    # promises nothing depends on the clock).
    argv = ["report", str(KORRIN), "--json", "--seed", "5", *FAST]
    proc = subprocess.run([sys.executable, "-m", "archsys", *argv], capture_output=True, text=True,
                          cwd=ROOT, env=_env(), timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout == _run(argv, capsys)[1]


def test_console_script_entry_point(capsys):
    # pyproject.toml declares the `archsys` console script; its target must be main().
    spec = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["scripts"]["archsys"]
    mod, func = spec.split(":")
    assert getattr(importlib.import_module(mod), func) is main
    rc, out, _ = _run(["priors"], capsys)
    assert rc == 0 and out.strip()


def test_bad_option_values(capsys):
    rc, _, err = _run(["report", str(KORRIN), "--draws", "5"], capsys)
    assert rc == 2 and "--draws" in err and "Traceback" not in err
    with pytest.raises(SystemExit) as exc:        # argparse usage error
        main(["report", "--mode", "sideways"])
    assert exc.value.code == 2
    capsys.readouterr()
