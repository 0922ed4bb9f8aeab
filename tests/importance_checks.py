"""Shared checks of the joint engine's importance sampling (issue: every proposal accounted for).

``assert_proposals_accounted`` is applied to every importance pool that any test builds (the
autouse fixture in conftest.py wraps the engine's ``_importance``) and to the sampler record of a
posterior directly in the tests that read it (behaviour checks, no outside source).
"""


def assert_proposals_accounted(record):
    """accepted + sum(rejected) == proposals, for an engine pool dict or a ``sampler["importance"]`` block."""
    if "pool" in record:            # the engine's internal pool (joint._importance)
        proposals, accepted, rejected = record["pool"], record["accepted"], record["rejected"]
    else:
        imp = record.get("importance", record)
        proposals, accepted, rejected = imp["proposals"], imp["accepted"], imp.get("rejected", {})
    assert accepted >= 0 and all(v >= 0 for v in rejected.values())
    assert accepted + sum(rejected.values()) == proposals, (accepted, rejected, proposals)
