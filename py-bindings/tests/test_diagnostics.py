"""Residual diagnostics against SciPy and statsmodels on data of our own.
Library versions are named in the assertion messages."""

from __future__ import annotations

import numpy as np
import pytest
import scipy
import scipy.stats
import statsmodels
import statsmodels.api as sm
from statsmodels.stats.diagnostic import het_breuschpagan
from statsmodels.stats.outliers_influence import OLSInfluence
from statsmodels.stats.stattools import durbin_watson

import plumbfit

REL = 1e-9  # closed forms in double precision (common practice)


@pytest.fixture
def data() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(17)
    x = np.sort(rng.uniform(0, 10, 60))
    e = rng.standard_t(5, x.size) * (0.2 + 0.05 * x)  # heavy tails, spread grows
    return x, 1.0 + 0.8 * x + e


def test_stream_checks_match_references(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator("full")
    half = x.size // 2
    acc.extend(x[:half], y[:half])
    rest = plumbfit.LineAccumulator("full")
    rest.extend(x[half:], y[half:])
    acc.merge(rest)
    c = acc.residual_checks()
    res = sm.OLS(y, sm.add_constant(x)).fit()
    e = res.resid
    sv = f"scipy {scipy.__version__}"
    assert c.skewness == pytest.approx(scipy.stats.skew(e), rel=REL), sv
    assert c.kurtosis == pytest.approx(scipy.stats.kurtosis(e, fisher=False), rel=REL), sv
    jb = scipy.stats.jarque_bera(e)
    assert c.jarque_bera == pytest.approx(jb.statistic, rel=REL), sv
    assert c.jarque_bera_p == pytest.approx(jb.pvalue, rel=1e-8), sv
    smv = f"statsmodels {statsmodels.__version__}"
    assert c.durbin_watson == pytest.approx(durbin_watson(e), rel=REL), smv
    lm_k, p_k, _, _ = het_breuschpagan(e, sm.add_constant(x), robust=True)
    lm_o, p_o, _, _ = het_breuschpagan(e, sm.add_constant(x), robust=False)
    assert c.spread_lm_studentized == pytest.approx(lm_k, rel=REL), smv + " het_breuschpagan (Koenker)"
    assert c.spread_lm == pytest.approx(lm_o, rel=REL), smv + " het_breuschpagan (original)"
    assert c.spread_lm_p == pytest.approx(p_o, rel=1e-8), smv
    assert c.serial_method in ("exact_bounds", "normal_bounds")
    assert c.p_positive_low <= c.p_positive_high
    with pytest.raises(TypeError):
        plumbfit.LineAccumulator().residual_checks()
    w = plumbfit.LineAccumulator("full")
    w.extend(x, y, weights=np.full(x.size, 2.0))
    with pytest.raises(plumbfit.NumericalError) as ei:
        w.residual_checks()
    assert ei.value.code == 141  # DEVELOPERS.md: 140-149 diagnostics conditions


def test_retained_matches_statsmodels(data: tuple[np.ndarray, np.ndarray]) -> None:
    x, y = data
    acc = plumbfit.LineAccumulator()
    acc.extend(x, y)
    fit = acc.fit()
    rr = plumbfit.RetainedResiduals(x, y, fit)
    res = sm.OLS(y, sm.add_constant(x)).fit()
    infl = OLSInfluence(res)
    msg = f"statsmodels {statsmodels.__version__} OLSInfluence"
    np.testing.assert_allclose(rr.residuals, res.resid, rtol=1e-9, atol=1e-12, err_msg=msg)
    np.testing.assert_allclose(rr.leverage, infl.hat_matrix_diag, rtol=REL, err_msg=msg)
    d = rr.influence()
    np.testing.assert_allclose(d["studentized"], infl.resid_studentized_internal, rtol=REL, err_msg=msg)
    np.testing.assert_allclose(d["deleted_t"], infl.resid_studentized_external, rtol=REL, err_msg=msg)
    np.testing.assert_allclose(d["cooks_distance"], infl.cooks_distance[0], rtol=REL, err_msg=msg)
    np.testing.assert_allclose(d["dffits"], infl.dffits[0], rtol=REL, err_msg=msg)
    # Flags follow the documented cut-offs: leverage above 2p/n.
    high = (d["flags"] & plumbfit.INFLUENCE_FLAGS["high_leverage"]) != 0
    np.testing.assert_array_equal(high, infl.hat_matrix_diag > 4 / x.size)
    sw = rr.shapiro_wilk()
    ref = scipy.stats.shapiro(res.resid)
    sv = f"scipy {scipy.__version__} shapiro"
    # Royston's approximation in both; scipy follows AS R94 in single
    # precision coefficients, so agreement is to ~1e-5 (from memory).
    assert sw.w == pytest.approx(ref.statistic, rel=1e-5), sv
    assert sw.p_value == pytest.approx(ref.pvalue, rel=1e-3), sv
    ad = rr.anderson_darling()
    ad_ref = scipy.stats.anderson(res.resid, dist="norm", method="interpolate")
    assert ad.a2 == pytest.approx(ad_ref.statistic, rel=1e-9), f"scipy {scipy.__version__} anderson"
    assert rr.checks().serial_method in ("exact", "normal")
    assert rr.checks().durbin_watson == pytest.approx(durbin_watson(res.resid), rel=REL)
    assert rr.versus_x().shape == (x.size, 2)
    assert plumbfit.shapiro_wilk(res.resid).w == pytest.approx(sw.w, rel=1e-12)
    assert plumbfit.anderson_darling(res.resid).a2 == pytest.approx(ad.a2, rel=1e-12)
    with pytest.raises(plumbfit.LengthMismatchError):
        plumbfit.RetainedResiduals(x[:-1], y[:-1], fit)
