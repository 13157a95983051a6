"""Merging partial accumulators gives the single-pass answer; copies and
operators behave as documented."""

from __future__ import annotations

import copy

import numpy as np
from conftest import Tier
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import plumbfit

# Merges use exact pairwise formulas, so merged and single-pass results
# differ only by rounding in the last bits: 1e-11 relative on slope and
# residual SD of well-conditioned data (common practice for such checks).
REL = 1e-11


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    n=st.integers(3, 3000),
    cuts=st.lists(st.floats(0.0, 1.0), max_size=6),
    tier=st.sampled_from(["lean", "full"]),
)
def test_merge_equals_single_pass(seed: int, n: int, cuts: list[float], tier: Tier) -> None:
    rng = np.random.default_rng(seed)
    x = rng.normal(5.0, 2.0, n)
    y = 0.3 + 1.7 * x + rng.normal(0.0, 0.5, n)
    whole = plumbfit.LineAccumulator(tier)
    whole.extend(x, y)
    idx = sorted({0, n, *(int(c * n) for c in cuts)})
    parts = []
    for a, b in zip(idx[:-1], idx[1:]):
        if b > a:
            p = plumbfit.LineAccumulator(tier)
            p.extend(x[a:b], y[a:b])
            parts.append(p)
    merged = parts[0].copy()
    for p in parts[1:]:
        merged.merge(p)
    assert merged.count == n
    fw, fm = whole.fit(), merged.fit()
    assert fm.slope == pytest.approx(fw.slope, rel=REL)
    assert fm.intercept == pytest.approx(fw.intercept, rel=REL, abs=1e-12)
    assert fm.residual_sd == pytest.approx(fw.residual_sd, rel=REL)
    if tier == "full":
        assert merged.x_range == (float(x.min()), float(x.max()))


def test_operators_and_copies() -> None:
    a = plumbfit.LineAccumulator()
    a.extend([0.0, 1.0, 2.0], [1.0, 3.0, 5.5])
    b = plumbfit.LineAccumulator()
    b.extend([3.0, 4.0], [7.0, 9.2])
    c = a + b
    assert (a.count, b.count, c.count) == (3, 2, 5)
    d = a.copy()
    d += b
    assert d == c
    assert copy.copy(a) == a and copy.deepcopy(a) == a
    assert copy.copy(a) is not a
    whole = plumbfit.LineAccumulator()
    whole.extend([0.0, 1.0, 2.0, 3.0, 4.0], [1.0, 3.0, 5.5, 7.0, 9.2])
    assert c.fit().slope == pytest.approx(whole.fit().slope, rel=REL)
    assert len(c) == 5
    assert "count=5" in repr(c)


def test_push_extend_agree() -> None:
    rng = np.random.default_rng(7)
    x = rng.uniform(0, 10, 1000)
    y = 2 * x + rng.normal(0, 1, 1000)
    a = plumbfit.LineAccumulator("full")
    a.extend(x, y)
    b = plumbfit.LineAccumulator("full")
    for xi, yi in zip(x.tolist(), y.tolist()):
        b.push(xi, yi)
    assert a.fit().slope == pytest.approx(b.fit().slope, rel=REL)
    assert a.moments()["syy"] == pytest.approx(b.moments()["syy"], rel=REL)


def test_forget_marks_approximate() -> None:
    a = plumbfit.LineAccumulator()
    a.extend(np.arange(50.0), np.arange(50.0) * 0.5 + np.cos(np.arange(50.0)))
    a.forget(0.5)
    a.extend(np.arange(50.0), np.arange(50.0) * 0.5)
    assert a.is_forgotten
    f = a.fit()
    assert f.approximate
    # Kish: 50 pairs of weight 1/2 and 50 of weight 1 give (75)^2/62.5 = 90.
    assert f.effective_count == pytest.approx(90.0, rel=1e-12)
