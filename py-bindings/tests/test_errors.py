"""Error mapping: class hierarchy, stable codes (the table in DEVELOPERS.md),
offending index, and the accumulator left unchanged."""

from __future__ import annotations

import numpy as np
from conftest import Tier
import pytest

import plumbfit


def filled(tier: Tier = "lean") -> plumbfit.LineAccumulator:
    acc = plumbfit.LineAccumulator(tier)
    acc.extend(np.arange(10.0), np.arange(10.0) * 2.0 + np.sin(np.arange(10.0)))
    return acc


def test_hierarchy() -> None:
    assert issubclass(plumbfit.InvalidInputError, plumbfit.PlumbfitError)
    assert issubclass(plumbfit.InvalidInputError, ValueError)
    assert issubclass(plumbfit.NumericalError, plumbfit.PlumbfitError)
    assert issubclass(plumbfit.NumericalError, ArithmeticError)
    invalid: tuple[type[plumbfit.InvalidInputError], ...] = (
        plumbfit.NonFiniteError,
        plumbfit.InvalidWeightError,
        plumbfit.LengthMismatchError,
        plumbfit.EmptyInputError,
        plumbfit.StateFormatError,
    )
    for cls in invalid:
        assert issubclass(cls, plumbfit.InvalidInputError)
        assert cls.__module__ == "plumbfit"
    numerical: tuple[type[plumbfit.NumericalError], ...] = (
        plumbfit.TooFewPointsError,
        plumbfit.NoSpreadError,
        plumbfit.RankDeficientError,
        plumbfit.StateOverflowError,
    )
    for ncls in numerical:
        assert issubclass(ncls, plumbfit.NumericalError)


@pytest.mark.parametrize("tier", ["lean", "full"])
def test_non_finite_names_index_and_leaves_state(tier: Tier) -> None:
    acc = filled(tier)
    before = acc.copy()
    x = np.arange(20.0)
    y = np.ones(20)
    y[13] = np.nan
    with pytest.raises(plumbfit.NonFiniteError, match="index 13") as ei:
        acc.extend(x, y)
    assert ei.value.code == 1  # DEVELOPERS.md: 1 non-finite input
    assert ei.value.index == 13
    assert isinstance(ei.value, ValueError)
    assert acc == before
    with pytest.raises(plumbfit.NonFiniteError):
        acc.push(np.inf, 1.0)
    assert acc == before


def test_invalid_weight() -> None:
    acc = filled()
    before = acc.copy()
    w = np.ones(10)
    w[4] = 0.0
    with pytest.raises(plumbfit.InvalidWeightError, match="index 4") as ei:
        acc.extend(np.arange(10.0), np.arange(10.0), weights=w)
    assert (ei.value.code, ei.value.index) == (2, 4)  # DEVELOPERS.md: 2
    with pytest.raises(plumbfit.InvalidWeightError):
        acc.push_weighted(1.0, 1.0, -1.0)
    assert acc == before


def test_length_and_empty() -> None:
    acc = filled()
    before = acc.copy()
    with pytest.raises(plumbfit.LengthMismatchError) as ei:
        acc.extend(np.ones(3), np.ones(4))
    assert ei.value.code == 3  # DEVELOPERS.md: 3 input lengths differ
    with pytest.raises(plumbfit.EmptyInputError) as ee:
        acc.extend(np.ones(0), np.ones(0))
    assert ee.value.code == 4  # DEVELOPERS.md: 4 empty input
    assert ee.value.index is None
    assert acc == before


def test_argument_codes() -> None:
    acc = filled()
    with pytest.raises(plumbfit.InvalidInputError) as ei:
        acc.forget(1.5)
    assert ei.value.code == 5  # DEVELOPERS.md: 5 forgetting factor
    fit = acc.fit()
    with pytest.raises(plumbfit.InvalidInputError) as el:
        fit.slope_interval(1.5)
    assert el.value.code == 6  # DEVELOPERS.md: 6 confidence level
    with pytest.raises(plumbfit.InvalidInputError) as er:
        fit.prediction(1.0, 0)
    assert er.value.code == 7  # DEVELOPERS.md: 7 replicate count of zero
    with pytest.raises(plumbfit.NonFiniteError, match="index 2") as en:
        fit.se_mean(np.array([0.0, 1.0, np.nan]))
    assert en.value.index == 2


def test_numerical_codes() -> None:
    acc = plumbfit.LineAccumulator()
    acc.extend([1.0, 2.0], [1.0, 3.0])
    with pytest.raises(plumbfit.TooFewPointsError) as ei:
        acc.fit()
    assert ei.value.code == 101  # DEVELOPERS.md: 101 too few points
    assert isinstance(ei.value, ArithmeticError)
    flat = plumbfit.LineAccumulator()
    flat.extend([2.0] * 5, [1.0, 2.0, 3.0, 4.0, 5.0])
    with pytest.raises(plumbfit.NoSpreadError) as en:
        flat.fit()
    assert en.value.code == 102  # DEVELOPERS.md: 102 no spread in x


def test_overflow() -> None:
    acc = filled()
    before = acc.copy()
    with pytest.raises(plumbfit.StateOverflowError) as ei:
        acc.extend(np.array([1e300, -1e300, 2e300] * 4), np.arange(12.0))
    assert ei.value.code == 100  # DEVELOPERS.md: 100 overflow of the state
    assert isinstance(ei.value, ArithmeticError)
    assert acc == before


def test_tier_mismatch_and_lean_ranges() -> None:
    with pytest.raises(TypeError):
        filled("lean").merge(filled("full"))
    with pytest.raises(TypeError):
        _ = filled("lean").x_range
    with pytest.raises(ValueError):
        plumbfit.LineAccumulator("medium")  # type: ignore[arg-type]
