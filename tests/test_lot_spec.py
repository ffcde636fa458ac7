"""Spec syntax, the guard-banded verdict rule and process capability on hand-computed cases."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from fitz_tool.exceptions import InputError
from fitz_tool.lot import lot_statistics, parse_spec, verdict
from fitz_tool.lot.spec import Spec


def test_tolerance_forms_give_the_same_limits():
    for text in ("L1=22u+-10%", "L1=22u±10%", "L1=22u +/- 10 %"):
        spec = parse_spec(text)
        assert spec.name == "L1"
        assert spec.low == pytest.approx(19.8e-6) and spec.high == pytest.approx(24.2e-6)
        assert spec.nominal == pytest.approx(22e-6)


def test_range_and_one_sided_limits_and_design_names():
    spec = parse_spec("ESR@100kHz=1m:30m")
    assert spec.name == "ESR@100k" and (spec.low, spec.high) == pytest.approx((1e-3, 30e-3))
    assert parse_spec("SRF=5M:").high == math.inf and parse_spec("Q@1M=:50").low == -math.inf


@pytest.mark.parametrize("text", ["L1", "L1=22u", "=1:2", "L1=2:1", "Z@1k=1:2", "L1=22u+-0%", "L1=a:b"])
def test_bad_specs_are_refused_with_the_option_named(text):
    with pytest.raises(InputError, match="--spec"):
        parse_spec(text)


def test_verdict_is_guard_banded_by_the_expanded_uncertainty():
    # guarded acceptance / rejection with U (ILAC-G8 decision rules, from memory; common practice)
    spec = Spec("L1", 10.0, 20.0, 15.0, "10:20")
    assert verdict(spec, 15.0, 2.0) == "pass"  # [13, 17] inside
    assert verdict(spec, 18.5, 2.0) == "marginal"  # [16.5, 20.5] straddles 20
    assert verdict(spec, 21.0, 2.0) == "marginal"  # outside, but [19, 23] reaches inside
    assert verdict(spec, 22.5, 2.0) == "fail"  # [20.5, 24.5] wholly above
    assert verdict(spec, 7.9, 2.0) == "fail"
    assert verdict(spec, 15.0, None) == "marginal"  # no uncertainty: cannot be decided
    assert verdict(spec, math.nan, 2.0) == "marginal"


def test_capability_indices_match_the_handbook_formulas():
    # Cp = (USL - LSL) / 6 s, Cpk = min(USL - mean, mean - LSL) / 3 s (common practice, no source)
    values = np.array([14.0, 15.0, 16.0, 15.5, 14.5, 17.0])
    table = pd.DataFrame({"status": "ok", "L1": values, "L1_stderr": 0.1,
                          "spec_L1": "pass", "verdict": "pass"})
    spec = Spec("L1", 10.0, 20.0, 15.0, "10:20")
    (s,) = lot_statistics(table, [spec]).specs
    std = np.std(values, ddof=1)
    assert s.cp == pytest.approx(10.0 / (6 * std))
    assert s.cpk == pytest.approx(min(20.0 - values.mean(), values.mean() - 10.0) / (3 * std))
    assert s.yield_fraction == 1.0
