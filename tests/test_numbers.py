"""Rounding by the uncertainty (archsys.output.numbers).

Rule (common practice in journals): two significant figures on the larger error; the
value and the other error are rounded to the same decimal place.
"""
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from archsys.output.numbers import decimals_for, fmt_plain, fmt_summary, round_uncertain


def test_issue_worked_example():
    # The issue's worked case (and the module docstring): 0.12345 +0.00123 -0.00098
    # -> 0.1235 +0.0012 -0.0010 (common practice).
    assert round_uncertain(0.12345, 0.00098, 0.00123) == ("0.1235", "0.0010", "0.0012")
    s = {"median": 0.12345, "lo": 0.12345 - 0.00098, "hi": 0.12345 + 0.00123}
    assert fmt_summary(s) == "0.1235 +0.0012/−0.0010"
    assert fmt_summary(s, unicode=False) == "0.1235 +0.0012/-0.0010"


@pytest.mark.parametrize("value, minus, plus, expected", [
    # Carry: 0.0996 rounds to 0.10, which has two significant figures at 2 decimals,
    # not 0.100 at 3 (common practice).
    (1.23456, 0.0996, 0.05, ("1.23", "0.10", "0.05")),
    (9.96, 0.0996, 0.0996, ("9.96", "0.10", "0.10")),
    (99.96, 9.96, 9.96, ("100", "10", "10")),
    # No carry just below the boundary.
    (1.23456, 0.0994, 0.05, ("1.235", "0.099", "0.050")),
    # Errors >= 10: the value rounds to tens, hundreds, ...
    (12345.678, 23.4, 23.4, ("12346", "23", "23")),
    (123456.0, 789.0, 500.0, ("123460", "790", "500")),
    (-12345.6, 23.0, 23.0, ("-12346", "23", "23")),
])
def test_carries_and_large_errors(value, minus, plus, expected):
    assert round_uncertain(value, minus, plus) == expected


def test_very_large_numbers_have_no_binary_noise():
    # M_E = 5.972168e24 kg ([Prsa2016], derived) with a 1e20 kg error: the digits
    # beyond the rounding place must be zeros, not float noise (fixed here: the old
    # f"{x:.0f}" printed 5972200000000000281018368-style strings).
    v, m, p = round_uncertain(5.972168e24, 1.2e20, 1.2e20)
    assert (v, m, p) == ("5972170000000000000000000", "120000000000000000000", "120000000000000000000")
    assert float(v) == pytest.approx(5.97217e24, rel=1e-15)


def test_degenerate_errors():
    assert decimals_for(0.0) is None
    assert decimals_for(-1.0) is None
    assert decimals_for(float("nan")) is None
    assert decimals_for(float("inf")) is None
    assert decimals_for(0.0123) == 3
    assert decimals_for(123.0) == -1
    assert round_uncertain(0.5, 0.0, 0.0) == ("0.5", "0", "0")
    assert fmt_summary(None) == "—"
    assert fmt_summary({"median": 2.5, "lo": 2.5, "hi": 2.5}) == "2.5"
    assert fmt_summary({"median": 1.0, "lo": 0.9, "hi": 1.1}) == "1.00 ± 0.10"
    assert fmt_plain(None) == "—" and fmt_plain(float("nan")) == "—"
    assert fmt_plain(1234.5678) == "1235"


def _decimals(s):
    return len(s.split(".")[1]) if "." in s else 0


@settings(max_examples=200, deadline=None)
@given(value=st.floats(-1e6, 1e6), e1=st.floats(1e-6, 1e4), e2=st.floats(1e-6, 1e4))
def test_rounding_properties(value, e1, e2):
    # Two significant figures on the larger error; everything at the same decimal place;
    # each string within half a unit of that place of the unrounded number.
    vs, ms, ps = round_uncertain(value, e1, e2)
    big = ps if e2 >= e1 else ms
    dec = decimals_for(float(big))
    assert dec is not None
    assert 10 <= round(float(big) * 10.0**dec) <= 99
    if dec > 0:
        assert _decimals(vs) == _decimals(ms) == _decimals(ps) == dec
    else:
        assert "." not in vs + ms + ps
    half = 0.5 * 10.0 ** (-dec) * (1 + 1e-9) + 1e-12 * abs(value)
    assert abs(float(vs) - value) <= half
    assert abs(float(ms) - e1) <= half
    assert abs(float(ps) - e2) <= half
    assert not math.isnan(float(vs))
