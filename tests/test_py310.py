"""Python 3.10 is declared supported (pyproject ``requires-python``).  Without a 3.10
interpreter on the build machine this checks what differs: the grammar of every module
(``ast.parse(feature_version=(3, 10))``), the TOML parser (``tomllib`` is 3.11+; 3.10 uses
the ``tomli`` package, declared for ``python_version < '3.11'``), and the fallback itself
with ``tomllib`` hidden.  Behaviour checks of archsys itself (common practice).
"""
import ast
import os
import pathlib
import subprocess
import sys

import pytest

from archsys.compat import tomllib

ROOT = pathlib.Path(__file__).resolve().parents[1]
SOURCES = sorted((ROOT / "archsys").rglob("*.py"))


@pytest.mark.parametrize("path", SOURCES, ids=[str(p.relative_to(ROOT)) for p in SOURCES])
def test_grammar_is_python_310(path):
    ast.parse(path.read_text(encoding="utf-8"), filename=str(path), feature_version=(3, 10))


def test_tomllib_only_through_a_fallback():
    # `import tomllib` must sit inside try/except (archsys.compat or the same pattern)
    for path in SOURCES:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        guarded = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.Try):
                for sub in ast.walk(node):
                    guarded.add(id(sub))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import) and any(a.name == "tomllib" for a in node.names):
                assert id(node) in guarded, f"{path}: unguarded 'import tomllib'"


def test_dependencies_declared():
    deps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["dependencies"]
    assert any(d.replace(" ", "").startswith("tomli>=") and "python_version<'3.11'" in d.replace(" ", "")
               for d in deps), deps
    assert any(d.startswith("tqdm") for d in deps)


def test_reader_runs_with_tomli_when_tomllib_is_missing():
    pytest.importorskip("tomli")
    code = ("import sys; sys.modules['tomllib'] = None\n"
            "from archsys.compat import tomllib; assert tomllib.__name__ == 'tomli', tomllib\n"
            "from archsys import read_system\n"
            f"s = read_system({str(ROOT / 'demo_systems' / 'korrin.toml')!r}); print(s.n_planets)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120,
                          env=dict(os.environ, PYTHONPATH=str(ROOT)))
    assert proc.returncode == 0, proc.stderr
    assert int(proc.stdout.strip()) >= 2
