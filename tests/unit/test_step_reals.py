"""STEP REAL tokens of the bulk writer: twelve significant digits, as C's %.12g rounds them."""
from __future__ import annotations

import re

import numpy as np

from analysis.ifc.step import real, reals

# ISO 10303-21 REAL: sign, digits, a decimal point, more digits, an optional exponent (common practice, no source)
_STEP_REAL = re.compile(r"^[+-]?[0-9]+\.[0-9]*(E[+-]?[0-9]+)?$")


def _digits(token: str) -> int:
    mantissa = token.split("E")[0].replace("-", "").replace(".", "")
    return len(mantissa.lstrip("0").rstrip("0"))


def test_reals_round_like_printf_to_twelve_digits():
    # the reference is Python's own "%.12g" (correctly rounded decimal conversion)
    rng = np.random.default_rng(11)
    x = np.concatenate([rng.standard_normal(50_000) * 10.0 ** rng.uniform(-15, 40, 50_000),
                        rng.standard_normal(50_000) * 1e4,
                        [1e-5, 1e16, 100.0, 999999999999.6, 9.999999999995e5, 1e22, 1e21, 1e-11, 1e-10,
                         123.0, -1e15, 1e-7, 1.5e-8, -2e-6, 5e-324, 1.7e308]])
    tokens = reals(x)
    assert len(tokens) == x.size
    off = 0
    for token, value in zip(tokens, x.tolist()):
        assert _STEP_REAL.match(token), token
        assert _digits(token) <= 12, token
        got, want = float(token), float("%.12g" % value)
        if got != want:  # a product within an ulp of a half: one unit of the twelfth digit, no more
            off += 1
            unit = 10.0 ** (np.floor(np.log10(abs(want))) - 11)
            assert abs(got - want) <= 1.0001 * unit, (token, "%.12g" % value)
    assert off <= x.size // 1000  # rare


def test_special_values():
    assert reals(np.array([0.0, -0.0, np.nan, np.inf, -np.inf, 100.0, 2.5, -1e-13])) == \
        ["0.", "0.", "$", "$", "$", "100.", "2.5", "-1.E-13"]
    assert real(-0.0) == "0." and real(float("nan")) == "$" and real(12) == "12."
    assert reals(np.zeros(0)) == []
    assert reals(np.array([[1.0, 2.0], [3.0, 4.5]])) == ["1.", "2.", "3.", "4.5"]  # flattened, C order
