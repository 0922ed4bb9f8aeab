"""The v0.1.0 engine as a baseline, run from the repository's history, never from the package.

The baseline is the tree of the ``v0.1.0`` tag (the last state with the first posterior engine: one
emcee run over every parameter), extracted with ``git archive`` into a temporary folder and run in a
child Python process whose ``PYTHONPATH`` points there, so the installed or checked-out archsys is not
touched.  Without git or the tag (e.g. an unpacked source archive) the v0.1.0 figures are left out
and a ``*_v010_note`` says why.
"""
from __future__ import annotations

import contextlib
import json
import os
import shutil
import subprocess
import sys
import tarfile
import tempfile

from .paths import REPO

__all__ = ["TAG", "FALLBACK_COMMIT", "v010_tree", "run_v010"]

#: The tag of the baseline; the commit it names, for clones made without tags.
TAG = "v0.1.0"
FALLBACK_COMMIT = "80e69f13d722556531b11508dd149a4245c8a7ed"


class BaselineUnavailable(RuntimeError):
    """The v0.1.0 tree cannot be extracted (no git, no history)."""


@contextlib.contextmanager
def v010_tree():
    """Yield a temporary folder holding the v0.1.0 package (``archsys/``, ``priors/``, ``demo_systems/``)."""
    if shutil.which("git") is None:
        raise BaselineUnavailable("git is not installed")
    ref = None
    for cand in (TAG, FALLBACK_COMMIT):
        ok = subprocess.run(["git", "-C", str(REPO), "rev-parse", "--verify", "--quiet", f"{cand}^{{commit}}"],
                            capture_output=True)
        if ok.returncode == 0:
            ref = cand
            break
    if ref is None:
        raise BaselineUnavailable(f"neither the tag {TAG} nor commit {FALLBACK_COMMIT[:12]} is in this clone")
    with tempfile.TemporaryDirectory(prefix="archsys-v010-") as tmp:
        archive = os.path.join(tmp, "v010.tar")
        subprocess.run(["git", "-C", str(REPO), "archive", "--format=tar", "-o", archive, ref,
                        "archsys", "priors", "demo_systems"], check=True)
        with tarfile.open(archive) as tf:
            tf.extractall(tmp)
        yield tmp


def run_v010(tree, code, timeout=3600):
    """Run ``code`` (Python source printing one JSON object on its last line) against the v0.1.0 tree."""
    env = dict(os.environ, PYTHONPATH=tree, PYTHONWARNINGS="ignore")
    res = subprocess.run([sys.executable, "-c", code], cwd=tree, env=env, capture_output=True, text=True,
                         timeout=timeout)
    if res.returncode != 0:
        tail = (res.stderr.strip().splitlines() or ["no output"])[-1]
        raise RuntimeError(f"v0.1.0 run failed: {tail}")
    return json.loads(res.stdout.strip().splitlines()[-1])
