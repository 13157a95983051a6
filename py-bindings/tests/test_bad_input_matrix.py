"""Bad-input matrix of the Python door: every public class and function that
takes data or parameters, called with NaN, +/-infinity, empty input,
mismatched lengths, huge magnitudes (1e300, whose squares overflow), zero and
negative weights, forgetting factors outside (0, 1], parameter counts outside
1..16, bad confidence levels and unknown tier / option values.

Each call must raise the exception class that the documented code maps to
(DEVELOPERS.md error table; hierarchy in plumbfit's ``PlumbfitError``
docstring) with that ``.code``, and leave the object exactly as it was: its
state bytes (``to_bytes()``) are compared before and after. The data are
invented."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

import plumbfit

NAN = float("nan")
INF = float("inf")
BELOW_ONE = float(np.nextafter(1.0, 0.0))

# Code -> class, from the documented hierarchy: 1-99 InvalidInputError
# (with the named subclasses), 100-199 NumericalError (ditto).
_CLASS_OF_CODE: dict[int, type[plumbfit.PlumbfitError]] = {
    1: plumbfit.NonFiniteError,
    2: plumbfit.InvalidWeightError,
    3: plumbfit.LengthMismatchError,
    4: plumbfit.EmptyInputError,
    20: plumbfit.NonFiniteError,
    21: plumbfit.InvalidWeightError,
    22: plumbfit.LengthMismatchError,
    35: plumbfit.LengthMismatchError,
    42: plumbfit.LengthMismatchError,
    100: plumbfit.StateOverflowError,
    101: plumbfit.TooFewPointsError,
    102: plumbfit.NoSpreadError,
    120: plumbfit.RankDeficientError,
    121: plumbfit.TooFewPointsError,
    122: plumbfit.StateOverflowError,
    135: plumbfit.TooFewPointsError,
}


def class_of(code: int) -> type[plumbfit.PlumbfitError]:
    if code in _CLASS_OF_CODE:
        return _CLASS_OF_CODE[code]
    if 50 <= code <= 59:
        return plumbfit.StateFormatError
    return plumbfit.InvalidInputError if code < 100 else plumbfit.NumericalError


# ---------------------------------------------------------------------------
# Objects in several states.

XS = np.array([0.0, 0.0, 1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0])
YS = np.array([0.11, 0.09, 2.05, 1.98, 4.12, 3.93, 6.02, 6.10, 8.21, 7.95])


def line_in(tier: str, state: str) -> plumbfit.LineAccumulator:
    acc = plumbfit.LineAccumulator(tier)  # type: ignore[arg-type]
    x = np.arange(20) * 0.25
    y = 1.5 * x - 2.0 + 0.01 * np.cos(3.0 * x)
    if state == "few":
        acc.extend(x[:3], y[:3])
    elif state in ("many", "aged"):
        acc.extend(x, y)
    if state == "aged":
        acc.push_weighted(0.5, 1.0, 3.0)
        acc.forget(0.9)
    return acc


def model_in(state: str) -> plumbfit.ModelAccumulator:
    m = plumbfit.ModelAccumulator(3)
    if state == "few":
        m.push([1.0, 2.0, 4.0], 3.5)
        m.push_powers(1.0, 2.0)
    elif state in ("many", "aged"):
        x = np.arange(20) * 0.3
        m.extend_powers(x, 0.5 * x * x - x + 2.0 + 0.01 * np.sin(7.0 * x))
    if state == "aged":
        m.push([1.0, 2.0, 4.0], 3.0, weight=2.5)
        m.forget(0.95)
    return m


def levels_in(state: str) -> plumbfit.ReplicateLevels:
    lv = plumbfit.ReplicateLevels()
    if state == "few":
        lv.extend(XS[:4], YS[:4])
    elif state == "many":
        lv.extend(XS, YS)
    elif state == "aged":  # 32 weighted levels with two readings each
        for i in range(32):
            lv.push(0.5 * i, 1.0 + i)
            lv.push(0.5 * i, 1.1 + i, weight=2.0)
    return lv


STATES = ("empty", "few", "many", "aged")
FRAMED = ("many", "aged")


def snapshot(obj: Any) -> Any:
    """What stands for the whole state: the saved bytes where the class has
    them, else every reading the level store reports."""
    if hasattr(obj, "to_bytes"):
        return obj.to_bytes()
    lv = obj.levels()
    return (obj.count, obj.level_count, {k: np.asarray(v).tobytes() for k, v in lv.items()})


# ---------------------------------------------------------------------------
# Cases on objects: (name, kinds, states, operation, code).

Op = Callable[[Any], object]
Case = tuple[str, tuple[str, ...], tuple[str, ...], Op, int]

LINES = ("lean", "full")
far = {t: plumbfit.LineAccumulator(t) for t in LINES}  # type: ignore[arg-type]
for _t in LINES:
    far[_t].extend(np.full(20, 1e300), np.full(20, 1e300))
other_tier = {"lean": line_in("full", "many"), "full": line_in("lean", "many")}
huge_alt = np.array([1e300, -1e300] * 10)
deep_nan = np.arange(700) * 0.5
deep_nan[650] = NAN


def with_nan(a: np.ndarray, i: int, v: float = NAN) -> np.ndarray:
    b = a.astype(np.float64, copy=True)
    b[i] = v
    return b


LINE_CASES: list[Case] = [
    ("push nan x", LINES, STATES, lambda a: a.push(NAN, 1.0), 1),
    ("push nan y", LINES, STATES, lambda a: a.push(1.0, NAN), 1),
    ("push +inf x", LINES, STATES, lambda a: a.push(INF, 1.0), 1),
    ("push -inf y", LINES, STATES, lambda a: a.push(1.0, -INF), 1),
    # A lone far pair is valid before the frame is fitted; framed, it overflows.
    ("push 1e300 framed", LINES, FRAMED, lambda a: a.push(1e300, -1e300), 100),
    ("push_weighted nan x", LINES, STATES, lambda a: a.push_weighted(NAN, 1.0, 1.0), 1),
    ("push_weighted w 0", LINES, STATES, lambda a: a.push_weighted(1.0, 1.0, 0.0), 2),
    ("push_weighted w -0", LINES, STATES, lambda a: a.push_weighted(1.0, 1.0, -0.0), 2),
    ("push_weighted w -1", LINES, STATES, lambda a: a.push_weighted(1.0, 1.0, -1.0), 2),
    ("push_weighted w nan", LINES, STATES, lambda a: a.push_weighted(1.0, 1.0, NAN), 2),
    ("push_weighted w inf", LINES, STATES, lambda a: a.push_weighted(1.0, 1.0, INF), 2),
    ("extend empty", LINES, STATES, lambda a: a.extend(np.ones(0), np.ones(0)), 4),
    ("extend empty lists", LINES, STATES, lambda a: a.extend([], []), 4),
    ("extend lengths differ", LINES, STATES, lambda a: a.extend(np.ones(3), np.ones(4)), 3),
    ("extend weights short", LINES, STATES,
     lambda a: a.extend(XS, YS, weights=np.ones(9)), 3),
    ("extend nan x at 2", LINES, STATES, lambda a: a.extend(with_nan(XS, 2), YS), 1),
    ("extend inf y at 0", LINES, STATES, lambda a: a.extend(XS, with_nan(YS, 0, INF)), 1),
    ("extend nan at 650", LINES, STATES, lambda a: a.extend(deep_nan, deep_nan), 1),
    ("extend nan in a list", LINES, STATES, lambda a: a.extend([1.0, NAN], [1.0, 2.0]), 1),
    ("extend strided nan", LINES, STATES,
     lambda a: a.extend(with_nan(XS, 4)[::2], YS[::2]), 1),
    ("extend +-1e300", LINES, STATES, lambda a: a.extend(huge_alt, huge_alt), 100),
    ("extend weighted w 0 at 1", LINES, STATES,
     lambda a: a.extend(XS[:3], YS[:3], weights=np.array([1.0, 0.0, 1.0])), 2),
    ("extend weighted w -1 at 2", LINES, STATES,
     lambda a: a.extend(XS[:3], YS[:3], weights=np.array([1.0, 2.0, -1.0])), 2),
    ("extend weighted w nan", LINES, STATES,
     lambda a: a.extend(XS[:3], YS[:3], weights=np.array([NAN, 1.0, 1.0])), 2),
    ("extend weighted w inf", LINES, STATES,
     lambda a: a.extend(XS[:3], YS[:3], weights=np.array([1.0, INF, 1.0])), 2),
    ("extend weighted +-1e300", LINES, STATES,
     lambda a: a.extend(huge_alt, huge_alt, weights=np.ones(20)), 100),
    ("forget 0", LINES, STATES, lambda a: a.forget(0.0), 5),
    ("forget -0", LINES, STATES, lambda a: a.forget(-0.0), 5),
    ("forget -0.5", LINES, STATES, lambda a: a.forget(-0.5), 5),
    ("forget 1.5", LINES, STATES, lambda a: a.forget(1.5), 5),
    ("forget 1 + ulp", LINES, STATES, lambda a: a.forget(float(np.nextafter(1.0, 2.0))), 5),
    ("forget nan", LINES, STATES, lambda a: a.forget(NAN), 5),
    ("forget inf", LINES, STATES, lambda a: a.forget(INF), 5),
    ("forget -inf", LINES, STATES, lambda a: a.forget(-INF), 5),
    ("merge far state", LINES, FRAMED, lambda a: a.merge(far[a.tier]), 100),
    ("iadd far state", LINES, FRAMED, lambda a: a.__iadd__(far[a.tier]), 100),
    ("add far state", LINES, FRAMED, lambda a: a + far[a.tier], 100),
    ("fit empty", LINES, ("empty",), lambda a: a.fit(), 101),
    ("slope_intercept empty", LINES, ("empty",), lambda a: a.slope_intercept(), 101),
    ("fit through origin empty", LINES, ("empty",), lambda a: a.fit(through_origin=True), 101),
    ("quadratic_check empty", ("full",), ("empty", "few"), lambda a: a.quadratic_check(), 101),
    ("residual_checks aged", ("full",), ("aged",), lambda a: a.residual_checks(), 141),
]

m_far = plumbfit.ModelAccumulator(3)
for _i in range(5):
    m_far.push([1.0, 1e150 * (1 + 0.1 * _i), 1e150 * (1 + 0.05 * _i * _i)], 1e153)
m_p2 = plumbfit.ModelAccumulator(2)
m_p2.push([1.0, 2.0], 1.0)
ROWS2 = np.array([[1.0, 2.0, 4.0], [1.0, 3.0, 9.0]])

MODEL_CASES: list[Case] = [
    ("push row of 2", ("model",), STATES, lambda m: m.push([1.0, 2.0], 1.0), 22),
    ("push row of 4", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0, 8.0], 1.0), 22),
    ("push empty row", ("model",), STATES, lambda m: m.push([], 1.0), 22),
    ("push nan regressor", ("model",), STATES, lambda m: m.push([1.0, NAN, 4.0], 1.0), 20),
    ("push -inf regressor", ("model",), STATES, lambda m: m.push([1.0, 2.0, -INF], 1.0), 20),
    ("push nan y", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], NAN), 20),
    ("push inf y", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], INF), 20),
    ("push 1e300 row", ("model",), STATES, lambda m: m.push([1.0, 1e300, 1e300], 1e300), 122),
    ("push w 0", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], 1.0, weight=0.0), 21),
    ("push w -0", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], 1.0, weight=-0.0), 21),
    ("push w -2", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], 1.0, weight=-2.0), 21),
    ("push w nan", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], 1.0, weight=NAN), 21),
    ("push w inf", ("model",), STATES, lambda m: m.push([1.0, 2.0, 4.0], 1.0, weight=INF), 21),
    ("push_powers nan x", ("model",), STATES, lambda m: m.push_powers(NAN, 1.0), 20),
    ("push_powers inf x", ("model",), STATES, lambda m: m.push_powers(INF, 1.0), 20),
    ("push_powers nan y", ("model",), STATES, lambda m: m.push_powers(1.0, NAN), 20),
    ("push_powers w 0", ("model",), STATES, lambda m: m.push_powers(1.0, 1.0, 0.0), 21),
    ("push_powers w -1", ("model",), STATES, lambda m: m.push_powers(1.0, 1.0, -1.0), 21),
    ("push_powers w nan", ("model",), STATES, lambda m: m.push_powers(1.0, 1.0, NAN), 21),
    ("push_powers x 1e300", ("model",), STATES, lambda m: m.push_powers(1e300, 1.0), 122),
    ("push_powers y 1e300", ("model",), STATES, lambda m: m.push_powers(1.0, 1e300), 122),
    ("extend rows/ys differ", ("model",), STATES, lambda m: m.extend(ROWS2, [1.0]), 22),
    ("extend rows of 2", ("model",), STATES, lambda m: m.extend(ROWS2[:, :2], [1.0, 2.0]), 22),
    ("extend weights short", ("model",), STATES,
     lambda m: m.extend(ROWS2, [1.0, 2.0], weights=[1.0]), 22),
    ("extend nan in row 1", ("model",), STATES,
     lambda m: m.extend(np.array([[1.0, 2.0, 4.0], [1.0, NAN, 9.0]]), [1.0, 2.0]), 20),
    ("extend nan y", ("model",), STATES, lambda m: m.extend(ROWS2, [1.0, NAN]), 20),
    ("extend 1e300 row", ("model",), STATES,
     lambda m: m.extend(np.array([[1.0, 2.0, 4.0], [1.0, 1e300, -1e300]]), [1.0, 2.0]), 122),
    ("extend w -1 at 1", ("model",), STATES,
     lambda m: m.extend(ROWS2, [1.0, 2.0], weights=[1.0, -1.0]), 21),
    ("extend w nan at 1", ("model",), STATES,
     lambda m: m.extend(ROWS2, [1.0, 2.0], weights=[1.0, NAN]), 21),
    ("extend_powers lengths differ", ("model",), STATES,
     lambda m: m.extend_powers(XS, YS[:9]), 22),
    ("extend_powers nan x", ("model",), STATES,
     lambda m: m.extend_powers(with_nan(XS, 3), YS), 20),
    ("extend_powers inf y", ("model",), STATES,
     lambda m: m.extend_powers(XS, with_nan(YS, 9, -INF)), 20),
    ("extend_powers w 0", ("model",), STATES,
     lambda m: m.extend_powers(XS, YS, weights=with_nan(np.ones(10), 5, 0.0)), 21),
    ("extend_powers 1e300", ("model",), STATES,
     lambda m: m.extend_powers(with_nan(XS, 5, 1e300), YS), 122),
    ("forget 0", ("model",), STATES, lambda m: m.forget(0.0), 24),
    ("forget -0.5", ("model",), STATES, lambda m: m.forget(-0.5), 24),
    ("forget 1.5", ("model",), STATES, lambda m: m.forget(1.5), 24),
    ("forget nan", ("model",), STATES, lambda m: m.forget(NAN), 24),
    ("forget inf", ("model",), STATES, lambda m: m.forget(INF), 24),
    ("merge p 2", ("model",), STATES, lambda m: m.merge(m_p2), 22),
    ("iadd p 2", ("model",), STATES, lambda m: m.__iadd__(m_p2), 22),
    ("add p 2", ("model",), STATES, lambda m: m + m_p2, 22),
    ("merge far state", ("model",), FRAMED, lambda m: m.merge(m_far), 122),
    ("fit too few rows", ("model",), ("empty", "few"), lambda m: m.fit(), 121),
    ("extend empty block", ("model",), STATES, lambda m: m.extend(np.ones((0, 3)), []), 4),
    ("extend_powers empty", ("model",), STATES, lambda m: m.extend_powers([], []), 4),
]

def _far_levels() -> plumbfit.ReplicateLevels:
    lv = plumbfit.ReplicateLevels()
    lv.push(1.0, 1e300)
    return lv


LEVEL_CASES: list[Case] = [
    ("push nan x", ("levels",), STATES, lambda v: v.push(NAN, 1.0), 1),
    ("push nan y", ("levels",), STATES, lambda v: v.push(1.0, NAN), 1),
    ("push -inf x", ("levels",), STATES, lambda v: v.push(-INF, 1.0), 1),
    ("push w 0", ("levels",), STATES, lambda v: v.push(1.0, 1.0, weight=0.0), 2),
    ("push w -3", ("levels",), STATES, lambda v: v.push(1.0, 1.0, weight=-3.0), 2),
    ("push w nan", ("levels",), STATES, lambda v: v.push(1.0, 1.0, weight=NAN), 2),
    ("push w inf", ("levels",), STATES, lambda v: v.push(1.0, 1.0, weight=INF), 2),
    ("extend lengths differ", ("levels",), STATES, lambda v: v.extend(XS, YS[:9]), 3),
    ("extend weights short", ("levels",), STATES,
     lambda v: v.extend(XS, YS, weights=np.ones(3)), 3),
    ("extend nan y at 2", ("levels",), STATES, lambda v: v.extend(XS, with_nan(YS, 2)), 1),
    ("extend inf x at 1", ("levels",), STATES, lambda v: v.extend(with_nan(XS, 1, INF), YS), 1),
    ("extend w 0 at 4", ("levels",), STATES,
     lambda v: v.extend(XS, YS, weights=with_nan(np.ones(10), 4, 0.0)), 2),
    # A level holding readings of +-1e300: its spread overflows.
    ("extend +-1e300 at one level", ("levels",), STATES,
     lambda v: v.extend([1.0, 1.0], [1e300, -1e300]), 100),
    ("push 1e300 beside readings near 1", ("levels",), ("few", "many"),
     lambda v: v.push(1.0, 1e300), 100),
    ("merge a reading 1e300 away", ("levels",), ("few", "many"),
     lambda v: v.merge(_far_levels()), 100),
    ("lack_of_fit count mismatch", ("levels",), ("empty", "few", "aged"),
     lambda v: v.lack_of_fit(line_in("lean", "many").fit()), 35),
    ("lack_of_fit_polynomial no coefficient", ("levels",), STATES,
     lambda v: v.lack_of_fit_polynomial([]), 30),
    ("lack_of_fit_polynomial more parameters than levels", ("levels",), ("many",),
     lambda v: v.lack_of_fit_polynomial(np.ones(10)), 135),
    ("lack_of_fit_polynomial nan coefficient", ("levels",), ("many",),
     lambda v: v.lack_of_fit_polynomial([1.0, NAN]), 1),
]


def build(kind: str, state: str) -> Any:
    if kind in LINES:
        return line_in(kind, state)
    if kind == "model":
        return model_in(state)
    return levels_in(state)


MATRIX = [
    pytest.param(kind, state, op, code, id=f"{kind}/{state}/{name}")
    for (name, kinds, states, op, code) in LINE_CASES + MODEL_CASES + LEVEL_CASES
    for kind in kinds
    for state in states
]


@pytest.mark.parametrize(("kind", "state", "op", "code"), MATRIX)
def test_refused_and_unchanged(kind: str, state: str, op: Op, code: int) -> None:
    obj = build(kind, state)
    before = snapshot(obj)
    cls = class_of(code)
    with pytest.raises(plumbfit.PlumbfitError) as ei:
        op(obj)
    assert type(ei.value) is cls, f"{type(ei.value).__name__}: {ei.value}"
    assert ei.value.code == code, str(ei.value)
    assert snapshot(obj) == before, "state changed"


# ---------------------------------------------------------------------------
# Stateless calls and queries on results: (name, call, code).

_fit = line_in("lean", "many").fit()
_origin_fit = line_in("lean", "many").fit(through_origin=True)
_mfit = model_in("many").fit()
_r = RESIDUALS_SOURCE = (XS, YS)
_lx = plumbfit.LineAccumulator()
_lx.extend(XS, YS)
_xfit = _lx.fit()
_wx = plumbfit.LineAccumulator()
_wx.extend(XS, YS, weights=np.linspace(1.0, 2.0, 10))
_wfit = _wx.fit()
_rr = plumbfit.RetainedResiduals(XS, YS, _xfit)

def _flip(b: bytes, i: int) -> bytes:
    a = bytearray(b)
    a[i] ^= 0x5A
    return bytes(a)


SCase = tuple[str, Callable[[], object], int]
STATELESS: list[SCase] = [
    ("new tier medium", lambda: plumbfit.LineAccumulator("medium"), -1),  # type: ignore[arg-type]
    ("model p 0", lambda: plumbfit.ModelAccumulator(0), 23),
    ("model p 17", lambda: plumbfit.ModelAccumulator(17), 23),
    ("model p -1", lambda: plumbfit.ModelAccumulator(-1), -2),
    ("fit_polynomial empty", lambda: plumbfit.fit_polynomial([], [], 1), 4),
    ("fit_polynomial one point", lambda: plumbfit.fit_polynomial([1.0], [2.0], 1), 121),
    ("fit_polynomial lengths differ", lambda: plumbfit.fit_polynomial(XS, YS[:9], 1), 22),
    ("fit_polynomial nan", lambda: plumbfit.fit_polynomial(with_nan(XS, 3), YS, 1), 20),
    ("fit_polynomial degree 16", lambda: plumbfit.fit_polynomial(XS, YS, 16), 23),
    ("fit_polynomial too few rows", lambda: plumbfit.fit_polynomial(XS[:2], YS[:2], 2), 121),
    ("line fit slope_interval 0", lambda: _fit.slope_interval(0.0), 6),
    ("line fit slope_interval 1", lambda: _fit.slope_interval(1.0), 6),
    ("line fit intercept_interval nan", lambda: _fit.intercept_interval(NAN), 6),
    ("line fit t_critical -0.5", lambda: _fit.t_critical(-0.5), 6),
    # The largest double below 1: 0.5 + level/2 rounds to 1 (infinite quantile).
    ("line fit t_critical below 1", lambda: _fit.t_critical(BELOW_ONE), 6),
    ("line fit slope_interval below 1", lambda: _fit.slope_interval(BELOW_ONE), 6),
    ("invert_interval level below 1", lambda: _fit.invert_interval(3.0, level=BELOW_ONE), 6),
    ("model fit coef_intervals below 1", lambda: _mfit.coef_intervals(BELOW_ONE), 25),
    ("line fit mean_band nan x", lambda: _fit.mean_band(NAN), 1),
    ("line fit mean_band 1e300", lambda: _fit.mean_band(1e300), 1),
    ("line fit mean_band level 1.5", lambda: _fit.mean_band(1.0, 1.5), 6),
    ("line fit prediction 0 replicates", lambda: _fit.prediction(1.0, 0), 7),
    ("line fit prediction inf x", lambda: _fit.prediction(INF), 1),
    ("line fit prediction 1e300", lambda: _fit.prediction(1e300), 1),
    ("line fit se_mean nan", lambda: _fit.se_mean(NAN), 1),
    ("line fit se_mean 1e300", lambda: _fit.se_mean(1e300), 1),
    ("line fit se_mean array 1e300", lambda: _fit.se_mean(np.array([0.0, 1e300])), 1),
    ("line fit se_prediction 0 replicates", lambda: _fit.se_prediction(1.0, 0), 7),
    ("line fit se_prediction 1e300", lambda: _fit.se_prediction(1e300), 1),
    ("line fit fitted nan", lambda: _fit.fitted(NAN), 1),
    ("line fit fitted 1.7e308", lambda: _fit.fitted(1.7e308), 1),
    ("line fit bands level 0", lambda: _fit.bands(XS, 0.0), 6),
    ("line fit bands nan x", lambda: _fit.bands(with_nan(XS, 6)), 1),
    ("line fit bands 0 replicates", lambda: _fit.bands(XS, 0.95, 0), 7),
    ("invert nan", lambda: _fit.invert(NAN), 1),
    ("invert inf", lambda: _fit.invert(-INF), 1),
    ("invert 0 replicates", lambda: _fit.invert(3.0, 0), 7),
    ("invert weight 0", lambda: _fit.invert(3.0, 1, 0.0), 2),
    ("invert weight -1", lambda: _fit.invert(3.0, 1, -1.0), 2),
    ("invert weight nan", lambda: _fit.invert(3.0, 1, NAN), 2),
    ("invert 1e300", lambda: _fit.invert(1e300), 100),
    ("invert_interval level 0", lambda: _fit.invert_interval(3.0, level=0.0), 6),
    ("invert_interval level 1", lambda: _fit.invert_interval(3.0, level=1.0), 6),
    ("invert_interval level nan", lambda: _fit.invert_interval(3.0, level=NAN), 6),
    ("invert_interval nan", lambda: _fit.invert_interval(NAN), 1),
    ("calibrated_value nan", lambda: _fit.calibrated_value(NAN), 1),
    ("calibrated_value u -0.1", lambda: _fit.calibrated_value(3.0, -0.1), 32),
    ("calibrated_value u nan", lambda: _fit.calibrated_value(3.0, NAN), 32),
    ("calibrated_value u inf", lambda: _fit.calibrated_value(3.0, INF), 32),
    ("calibrated_value 1e300", lambda: _fit.calibrated_value(1e300, 1e300), 100),
    ("limits sigma -1", lambda: _fit.limits_from_sigma(-1.0), 32),
    ("limits sigma nan", lambda: _fit.limits_from_sigma(NAN), 32),
    ("limits sigma inf", lambda: _fit.limits_from_sigma(INF), 32),
    ("limits sigma 1e308 (limits overflow)", lambda: _fit.limits_from_sigma(1e308), 100),
    ("limits intercept_se through origin",
     lambda: _origin_fit.limits_from_sigma("intercept_se"), 37),
    ("limits unknown source", lambda: _fit.limits_from_sigma("blank_sd"), -1),  # type: ignore[arg-type]
    ("decision alpha 0", lambda: _fit.decision_limits(alpha=0.0), 6),
    ("decision alpha 0.5", lambda: _fit.decision_limits(alpha=0.5), 6),
    ("decision alpha nan", lambda: _fit.decision_limits(alpha=NAN), 6),
    ("decision beta -0.05", lambda: _fit.decision_limits(beta=-0.05), 6),
    ("decision beta inf", lambda: _fit.decision_limits(beta=INF), 6),
    ("decision 0 replicates", lambda: _fit.decision_limits(replicates=0), 7),
    ("decision weight 0", lambda: _fit.decision_limits(weight=0.0), 2),
    ("decision weight nan", lambda: _fit.decision_limits(weight=NAN), 2),
    ("model fit coef_intervals 0", lambda: _mfit.coef_intervals(0.0), 25),
    ("model fit coef_intervals 1", lambda: _mfit.coef_intervals(1.0), 25),
    ("model fit coef_intervals nan", lambda: _mfit.coef_intervals(NAN), 25),
    ("model fit coef_intervals 95", lambda: _mfit.coef_intervals(95.0), 25),
    ("model fit predict nan", lambda: _mfit.predict([1.0, NAN, 1.0]), 20),
    ("model fit predict row of 2", lambda: _mfit.predict([1.0, 2.0]), 22),
    ("model fit predict rows of 4", lambda: _mfit.predict(np.ones((2, 4))), 22),
    ("model fit leverage inf", lambda: _mfit.leverage([1.0, INF, 1.0]), 20),
    # Rows so far out that the result overflows.
    ("model fit leverage 1e300", lambda: _mfit.leverage([1.0, 1e300, 1.0]), 122),
    ("model fit predict 1e308", lambda: _mfit.predict([1e308, 1e308, 1e308]), 122),
    ("model fit mean_response 1e300", lambda: _mfit.mean_response([1.0, 1e300, 1.0]), 122),
    ("model fit prediction 1e160", lambda: _mfit.prediction([1.0, 1e160, 1.0]), 122),
    ("model fit mean_response level 1", lambda: _mfit.mean_response([1.0, 2.0, 4.0], 1.0), 25),
    ("model fit mean_response nan", lambda: _mfit.mean_response([1.0, NAN, 4.0]), 20),
    ("model fit prediction 0 replicates", lambda: _mfit.prediction([1.0, 2.0, 4.0], 0), 26),
    ("model fit prediction level nan", lambda: _mfit.prediction([1.0, 2.0, 4.0], 1, NAN), 25),
    ("line fit unknown weights meaning",
     lambda: line_in("lean", "many").fit(weights="known"), -1),  # type: ignore[arg-type]
    ("model fit bad intercept", lambda: model_in("many").fit(intercept="maybe"), -1),  # type: ignore[arg-type]
    ("retained residuals empty", lambda: plumbfit.RetainedResiduals([], [], _xfit), 4),
    ("retained residuals lengths differ", lambda: plumbfit.RetainedResiduals(XS, YS[:9], _xfit), 3),
    ("retained residuals nan", lambda: plumbfit.RetainedResiduals(with_nan(XS, 7), YS, _xfit), 1),
    ("retained residuals count", lambda: plumbfit.RetainedResiduals(XS[:9], YS[:9], _xfit), 42),
    ("retained residuals through origin",
     lambda: plumbfit.RetainedResiduals(XS, YS, _lx.fit(through_origin=True)), 41),
    ("retained residuals weighted", lambda: plumbfit.RetainedResiduals(XS, YS, _wfit), 141),
    ("shapiro_wilk empty", lambda: plumbfit.shapiro_wilk([]), 4),
    ("shapiro_wilk nan", lambda: plumbfit.shapiro_wilk(with_nan(YS, 5)), 1),
    ("shapiro_wilk -inf", lambda: plumbfit.shapiro_wilk(with_nan(YS, 3, -INF)), 1),
    ("shapiro_wilk 2 values", lambda: plumbfit.shapiro_wilk(YS[:2]), 101),
    ("shapiro_wilk 5001 values", lambda: plumbfit.shapiro_wilk(np.sin(np.arange(5001.0))), 140),
    ("shapiro_wilk constant", lambda: plumbfit.shapiro_wilk(np.full(8, 2.5)), 143),
    ("anderson_darling empty", lambda: plumbfit.anderson_darling(np.ones(0)), 4),
    ("anderson_darling nan", lambda: plumbfit.anderson_darling(with_nan(YS, 0)), 1),
    ("anderson_darling constant", lambda: plumbfit.anderson_darling(np.full(8, 2.5)), 143),
    ("from_bytes empty", lambda: plumbfit.LineAccumulator.from_bytes(b""), 54),
    ("from_bytes bad magic", lambda: plumbfit.LineAccumulator.from_bytes(b"\0" * 308), 50),
    ("model from_bytes line state",
     lambda: plumbfit.ModelAccumulator.from_bytes(line_in("lean", "many").to_bytes()), 53),
    ("line from_bytes model state",
     lambda: plumbfit.LineAccumulator.from_bytes(model_in("many").to_bytes()), 53),
    ("load_state short", lambda: plumbfit.load_state(model_in("many").to_bytes()[:-1]), 54),
    ("load_state long", lambda: plumbfit.load_state(model_in("many").to_bytes() + b"\0"), 55),
    ("peek_state empty", lambda: plumbfit.peek_state(b""), 54),
    ("levels from_bytes line state",
     lambda: plumbfit.ReplicateLevels.from_bytes(line_in("full", "many").to_bytes()), 53),
    ("levels from_bytes model state",
     lambda: plumbfit.ReplicateLevels.from_bytes(model_in("many").to_bytes()), 53),
    ("levels from_bytes short",
     lambda: plumbfit.ReplicateLevels.from_bytes(levels_in("many").to_bytes()[:-1]), 54),
    ("levels from_bytes long",
     lambda: plumbfit.ReplicateLevels.from_bytes(levels_in("many").to_bytes() + b"\0"), 55),
    ("levels from_bytes corrupted", lambda: plumbfit.ReplicateLevels.from_bytes(_flip(levels_in("many").to_bytes(), 20)), 56),
    ("line from_bytes level state",
     lambda: plumbfit.LineAccumulator.from_bytes(levels_in("many").to_bytes()), 53),
    ("model from_bytes level state",
     lambda: plumbfit.ModelAccumulator.from_bytes(levels_in("many").to_bytes()), 53),
]


@pytest.mark.parametrize(("call", "code"), [pytest.param(c, k, id=n) for n, c, k in STATELESS])
def test_stateless_refused(call: Callable[[], object], code: int) -> None:
    if code == -1:  # a string outside its documented set: plain ValueError
        with pytest.raises(ValueError):
            call()
        return
    if code == -2:  # a negative count is not an unsigned integer at all
        with pytest.raises(OverflowError):
            call()
        return
    with pytest.raises(plumbfit.PlumbfitError) as ei:
        call()
    assert type(ei.value) is class_of(code), f"{type(ei.value).__name__}: {ei.value}"
    assert ei.value.code == code, str(ei.value)


def test_retained_residual_tests_keep_the_object() -> None:
    # Queries on retained residuals of an exact fit refuse and leave the
    # object's arrays as they were.
    lx = plumbfit.LineAccumulator()
    lx.extend(XS, 2.0 * XS + 1.0)
    rr = plumbfit.RetainedResiduals(XS, 2.0 * XS + 1.0, lx.fit())
    before = rr.residuals.tobytes()
    with pytest.raises(plumbfit.PlumbfitError):
        rr.influence()
    assert rr.residuals.tobytes() == before
    assert len(_rr) == 10


def test_huge_and_tiny_samples_scale_exactly() -> None:
    # Both normality statistics are scale invariant (by their definitions)
    # and multiplying by a power of two is exact, so a sample scaled by
    # 2**1022 (range and squares overflow) or 2**-1000 (squares underflow)
    # gives the same statistic and p value bit for bit.
    base = np.array([-1.3, -0.4, 0.1, 0.2, 0.9, 1.4, 2.2, -0.7, 0.35])
    sw, ad = plumbfit.shapiro_wilk(base), plumbfit.anderson_darling(base)
    for k in (1022, 600, -600, -1000):
        v = np.ldexp(base, k)
        s2, a2 = plumbfit.shapiro_wilk(v), plumbfit.anderson_darling(v)
        assert (s2.w, s2.p_value) == (sw.w, sw.p_value), k
        assert (a2.a2, a2.p_value) == (ad.a2, ad.p_value), k


def test_matrix_size() -> None:
    # Every class with mutating methods is in the matrix, on every state.
    kinds = {p.values[0] for p in MATRIX}
    assert kinds == {"lean", "full", "model", "levels"}
    assert len(MATRIX) > 400


@pytest.mark.parametrize("state", STATES)
def test_empty_level_block_adds_nothing(state: str) -> None:
    # The level store takes an empty block as nothing to add (its documented
    # behaviour, unlike the accumulators' EmptyInputError); nothing changes.
    lv = levels_in(state)
    before = snapshot(lv)
    lv.extend(np.ones(0), np.ones(0))
    assert snapshot(lv) == before


@pytest.mark.parametrize("tier", LINES)
@pytest.mark.parametrize("state", ("few", "many", "aged"))
def test_forgetting_into_underflow_is_refused(tier: str, state: str) -> None:
    # The first forget(1e-300) is valid; the second would underflow every
    # weight to zero and is refused with code 100, the state unchanged.
    acc = line_in(tier, state)
    acc.forget(1e-300)
    before = acc.to_bytes()
    with pytest.raises(plumbfit.StateOverflowError) as ei:
        acc.forget(1e-300)
    assert ei.value.code == 100
    assert acc.to_bytes() == before


@pytest.mark.parametrize("state", ("few", "many", "aged"))
def test_model_forgetting_into_underflow_is_refused(state: str) -> None:
    # As for the line: forget(1e-300) twice would underflow every weight to
    # zero; the second call is refused with the model's overflow code 122
    # and the state is unchanged.
    m = model_in(state)
    m.forget(1e-300)
    before = m.to_bytes()
    with pytest.raises(plumbfit.StateOverflowError) as ei:
        m.forget(1e-300)
    assert ei.value.code == 122
    assert m.to_bytes() == before
