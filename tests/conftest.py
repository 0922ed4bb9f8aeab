import sys, pathlib; sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))

import os  # noqa: E402

# The automatic N-body step of `archsys report` (--nbody auto) integrates 64 draws whenever a system is
# outside the analytic criteria's domain; most tests are about other things, so the suite turns the
# default off (the ARCHSYS_NBODY variable, README) and the dynamics tests ask for N-body explicitly.
os.environ.setdefault("ARCHSYS_NBODY", "0")

import pytest  # noqa: E402


@pytest.fixture(autouse=True)
def _every_importance_pool_is_accounted(monkeypatch):
    """Every test that runs the joint engine's importance path checks that the rejection counts and the
    accepted draws add up to the proposals (tests/importance_checks.py)."""
    from archsys.inference import joint
    from importance_checks import assert_proposals_accounted
    inner = joint._importance

    def checked(*args, **kwargs):
        out = inner(*args, **kwargs)
        assert_proposals_accounted(out)
        return out
    monkeypatch.setattr(joint, "_importance", checked)
