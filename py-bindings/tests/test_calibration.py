"""Calibration wrappers against independent computations: textbook
formulas evaluated here with NumPy/SciPy (marked "common practice" or with
their source), and statsmodels for the F tests. Library versions are named
in the assertion messages."""

from __future__ import annotations

import numpy as np
import pytest
import scipy
import scipy.optimize
import scipy.stats
import statsmodels
import statsmodels.api as sm

import plumbfit

REL = 1e-9  # closed-form quantities in double precision; t quantiles differ in the last digits


@pytest.fixture
def data() -> tuple[np.ndarray, np.ndarray]:
    # Invented calibration: 6 levels x 3 replicates, slight curvature.
    rng = np.random.default_rng(11)
    x = np.repeat([0.0, 2.0, 4.0, 6.0, 8.0, 10.0], 3)
    y = 0.5 + 1.2 * x + 0.01 * x**2 + rng.normal(0, 0.1, x.size)
    return x, y


def line_stats(x: np.ndarray, y: np.ndarray) -> tuple[float, float, float, float, float]:
    b, a = np.polyfit(x, y, 1)
    resid = y - (a + b * x)
    s = float(np.sqrt(resid @ resid / (x.size - 2)))
    sxx = float(((x - x.mean()) ** 2).sum())
    return a, b, s, sxx, float(y.mean())


def test_inverse_prediction(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator()
    acc.extend(x, y)
    fit = acc.fit()
    a, b, s, sxx, ybar = line_stats(x, y)
    n, m, y0 = x.size, 2, 7.3
    msg = f"textbook formulas (common practice), numpy {np.__version__}, scipy {scipy.__version__}"
    inv = fit.invert_interval(y0, replicates=m, level=0.95)
    x0 = (y0 - a) / b
    se = s / abs(b) * np.sqrt(1 / m + 1 / n + (y0 - ybar) ** 2 / (b**2 * sxx))
    assert inv.x == pytest.approx(x0, rel=REL), msg
    assert inv.se == pytest.approx(se, rel=REL), msg
    # Fieller's interval: roots of (y0 - a - b x)^2 = t^2 s^2 (1/m + 1/n + (x - xbar)^2/Sxx).
    t = scipy.stats.t.ppf(0.975, n - 2)
    xbar = x.mean()
    qa = b**2 - t**2 * s**2 / sxx
    qb = -2 * b * (y0 - a) + 2 * t**2 * s**2 * xbar / sxx
    qc = (y0 - a) ** 2 - t**2 * s**2 * (1 / m + 1 / n + xbar**2 / sxx)
    roots = np.sort(np.roots([qa, qb, qc]).real)
    assert inv.kind == "bounded"
    assert (inv.lower, inv.upper) == pytest.approx(tuple(roots), rel=REL), msg
    assert inv.t == pytest.approx(t, rel=1e-12), msg
    assert inv.to_dict()["kind"] == "bounded"
    plain = fit.invert(y0)
    assert plain.kind == "none" and plain.level is None
    with pytest.raises(plumbfit.InvalidInputError) as ei:
        fit.invert(y0, replicates=0)
    assert ei.value.code == 7  # DEVELOPERS.md: replicate count of zero


def test_limits(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator()
    acc.extend(x, y)
    fit = acc.fit()
    res = sm.OLS(y, sm.add_constant(x)).fit()
    msg = f"ICH Q2 3.3 sigma/S and 10 sigma/S; statsmodels {statsmodels.__version__} OLS"
    s, b = np.sqrt(res.scale), res.params[1]
    lim = fit.limits_from_sigma()
    assert lim.detection == pytest.approx(3.3 * s / b, rel=REL), msg
    assert lim.quantitation == pytest.approx(10 * s / b, rel=REL), msg
    se_a = res.bse[0]
    assert fit.limits_from_sigma("intercept_se").detection == pytest.approx(3.3 * se_a / b, rel=REL)
    assert fit.limits_from_sigma(0.05).detection == pytest.approx(3.3 * 0.05 / b, rel=REL)
    # Hubaux & Vos (1970): decision level from the upper prediction limit
    # at x = 0, detection limit where the lower limit reaches it.
    a, b2, s2, sxx, _ = line_stats(x, y)
    n, xbar = x.size, x.mean()
    t = scipy.stats.t.ppf(0.95, n - 2)

    def half(xv: float) -> float:
        return float(t * s2 * np.sqrt(1 + 1 / n + (xv - xbar) ** 2 / sxx))

    yc = a + half(0.0)
    xd = scipy.optimize.brentq(lambda v: a + b2 * v - half(v) - yc, 0.0, 10.0, xtol=1e-14)
    d = fit.decision_limits(0.05, 0.05)
    hv = f"Hubaux & Vos 1970, scipy {scipy.__version__}"
    assert d.y_critical == pytest.approx(yc, rel=REL), hv
    assert d.x_critical == pytest.approx((yc - a) / b2, rel=REL), hv
    assert d.x_detection == pytest.approx(xd, rel=1e-8), hv


def test_lack_of_fit_matches_statsmodels(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator()
    acc.extend(x, y)
    levels = plumbfit.ReplicateLevels()
    levels.extend(x[:9], y[:9])
    rest = plumbfit.ReplicateLevels()
    rest.extend(x[9:], y[9:])
    levels.merge(rest)
    assert (levels.count, levels.level_count) == (18, 6)
    lof = levels.lack_of_fit(acc.fit())
    # Reference: the line against the one-way (level means) model.
    line = sm.OLS(y, sm.add_constant(x)).fit()
    dummies = (x[:, None] == np.unique(x)[None, :]).astype(float)
    cell = sm.OLS(y, dummies).fit()
    table = sm.stats.anova_lm(line, cell)
    msg = f"statsmodels {statsmodels.__version__} anova_lm(line, level means)"
    assert lof.f_stat == pytest.approx(table["F"].iloc[1], rel=REL), msg
    assert lof.p_value == pytest.approx(table["Pr(>F)"].iloc[1], rel=1e-8), msg
    assert (lof.df_lack_of_fit, lof.df_pure_error) == (4, 12)
    got = levels.levels()
    np.testing.assert_allclose(got["mean_y"], [y[x == v].mean() for v in np.unique(x)], rtol=1e-12)


def test_quadratic_check_matches_statsmodels(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator("full")
    acc.extend(x, y)
    q = acc.quadratic_check()
    quad = sm.OLS(y, np.column_stack([np.ones_like(x), x, x**2])).fit()
    line = sm.OLS(y, sm.add_constant(x)).fit()
    msg = f"statsmodels {statsmodels.__version__} OLS quadratic vs line"
    assert q.curvature == pytest.approx(quad.params[2], rel=1e-8), msg
    assert q.curvature_se == pytest.approx(quad.bse[2], rel=1e-8), msg
    assert q.sse_quadratic == pytest.approx(quad.ssr, rel=1e-8), msg
    assert q.sse_line == pytest.approx(line.ssr, rel=REL), msg
    # Mandel's statistic is the squared t of the quadratic term.
    assert q.test_value == pytest.approx(quad.tvalues[2] ** 2, rel=1e-8), msg
    assert q.p_value == pytest.approx(quad.pvalues[2], rel=1e-6), msg
    with pytest.raises(TypeError):
        plumbfit.LineAccumulator().quadratic_check()
