"""The results JSON: the fast serialiser writes the same document, every double exactly."""
from __future__ import annotations

import json
import math

import numpy as np

from analysis import FrameBuilder, LoadCase, NodalLoad, analyze


def _frame(steel, ipe300):
    b = FrameBuilder(name="json portal")
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 3))
    b.add_node("C", (4, 0, 3))
    b.add_node("D", (4, 0, 0), support="pinned")
    b.add_member("c1", "A", "B", ipe300, steel)
    b.add_member("b", "B", "C", ipe300, steel)
    b.add_member("c2", "D", "C", ipe300, steel)
    b.add_case(LoadCase("H", nodal=(NodalLoad("B", (10e3, 0, 0, 0, 0, 0)), NodalLoad("C", (0, 0, -20e3, 0, 0, 0)))))
    return b.build()


def test_fast_json_equals_the_standard_library_exactly(steel, ipe300):
    from analysis.jsonio import dumps

    res = analyze(_frame(steel, ipe300))
    reference = json.loads(json.dumps(res.to_dict(), allow_nan=False))  # lists of Python floats, stdlib encoder
    fast = json.loads(dumps(res.to_dict(arrays=True)))
    assert fast == reference  # every number identical: shortest round-trip decimals both ways


def test_numpy_values_and_non_finite_numbers():
    from analysis.jsonio import dumps

    rng = np.random.default_rng(7)
    values = rng.standard_normal(2000) * np.logspace(-300, 300, 2000)
    doc = {"a": values, "strided": values[::3], "scalar": np.float64(0.1), "count": np.int64(3),
           "bad": [math.nan, math.inf], "bad_array": np.array([np.nan, -np.inf, 1.5]), "matrix": np.eye(2)}
    back = json.loads(dumps(doc))
    assert [float(v) for v in back["a"]] == values.tolist()  # float64 round trip, bit for bit
    assert back["strided"] == values[::3].tolist()
    assert back["scalar"] == 0.1 and back["count"] == 3
    assert back["bad"] == [None, None] and back["bad_array"] == [None, None, 1.5]  # JSON has no NaN
    assert back["matrix"] == [[1.0, 0.0], [0.0, 1.0]]
