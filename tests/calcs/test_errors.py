"""Validation helpers raise CalcInputError naming the argument, the value and the rule."""

import json
import math

import numpy as np
import pytest

from calcs.errors import (
    CalcInputError,
    optional,
    require_absolute_temperature,
    require_finite,
    require_finite_array,
    require_fraction,
    require_min_length,
    require_non_negative,
    require_positive,
    require_same_length,
    require_sorted_increasing,
)
from calcs.result import Result


def test_the_message_names_argument_value_and_rule():
    e = CalcInputError("process_temperature_k", -5.0, "must be an absolute temperature above 0 K")
    assert str(e) == "process_temperature_k = -5.0: must be an absolute temperature above 0 K"
    assert isinstance(e, ValueError)


@pytest.mark.parametrize(
    "check, value, rule",
    [(require_finite, math.nan, "must be a finite number"),
     (require_finite, math.inf, "must be a finite number"),
     (require_finite, "abc", "must be a real number"),
     (require_positive, 0.0, "must be greater than 0"),
     (require_non_negative, -1.0, "must not be negative"),
     (require_absolute_temperature, 0.0, "must be an absolute temperature above 0 K"),
     (require_fraction, 1.01, "must be a fraction between 0 and 1"),
     (require_fraction, -0.01, "must be a fraction between 0 and 1")],
)
def test_each_scalar_rule(check, value, rule):
    with pytest.raises(CalcInputError) as e:
        check("x", value)
    assert (e.value.argument, e.value.rule) == ("x", rule)
    assert str(e.value).startswith("x = ") and rule in str(e.value)


def test_array_rules():
    assert require_sorted_increasing("time_s", [0, 1, 2]).tolist() == [0.0, 1.0, 2.0]
    with pytest.raises(CalcInputError, match=r"time_s = .*strictly increasing \(entry 2"):
        require_sorted_increasing("time_s", [0, 1, 1])
    require_sorted_increasing("time_s", [0, 1, 1], strict=False)
    with pytest.raises(CalcInputError, match="q_w = .*finite"):
        require_finite_array("q_w", [1.0, np.nan])
    with pytest.raises(CalcInputError, match="q_w = .*finite"):
        require_finite_array("q_w", [1e308, 1e308, np.inf])
    require_finite_array("q_w", [1e308, 1e308])  # the sum overflows; the entries are finite
    with pytest.raises(CalcInputError, match="needs at least 3 values"):
        require_min_length("heating_rates", [1, 2], 3)
    with pytest.raises(CalcInputError, match="same length as a"):
        require_same_length(("a", "b"), [1, 2], [1])
    assert optional(require_positive, "m", None) is None


def test_result_is_json_safe():
    r = Result(float("nan"), "K", "td24.kinetic", ("w",), {"x": (1.0, math.inf)}, ("stoessel2008",))
    d = json.loads(json.dumps(r.to_dict()))
    assert d == {"value": None, "unit": "K", "method": "td24.kinetic", "warnings": ["w"],
                 "parameters": {"x": [1.0, None]}, "references": ["stoessel2008"]}
