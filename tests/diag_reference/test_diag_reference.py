"""Residual diagnostics of plumbfit compared with reference libraries.

plumbfit's values come from ``plumbfit-diag-reference`` (a Rust binary in
this folder) as JSON for 24 invented, fixed-seed data sets: normal, heavy
tailed (Student t3, Cauchy, Laplace), skewed, light tailed, offsets up to
1e9, near-perfect fits, heteroscedastic, serially correlated, curved, an
outlier, a high-leverage point, and a point whose deletion leaves an almost
exact line.

Reference values:
* exact rational arithmetic (Python ``fractions``) from the double inputs:
  residuals, their power sums, lag-1 autocorrelation, influence measures;
* SciPy (``scipy.stats`` skew, kurtosis, jarque_bera, shapiro, anderson,
  norm.ppf; ``scipy.integrate.quad`` for an independent Imhof integration);
* statsmodels (``het_breuschpagan`` robust=False/True, ``durbin_watson``,
  ``OLSInfluence``, ``normal_ad``);
* NumPy (``linalg.eigvalsh`` of M·A·M for the Durbin–Watson spectrum).
Versions are printed by the test run and named in each assertion message.

The reference libraries get the exactly computed residuals (rounded once to
double) and the centred regressor ``x − x̄`` (exact in double by Sterbenz's
lemma), so their own conditioning on offset data does not enter.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import tempfile
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
import scipy
import statsmodels
from scipy import integrate, special, stats
from statsmodels.regression.linear_model import OLS
from statsmodels.stats.diagnostic import het_breuschpagan, normal_ad
from statsmodels.stats.outliers_influence import OLSInfluence
from statsmodels.stats.stattools import durbin_watson

REPO = Path(__file__).resolve().parents[2]
VERSIONS = f"numpy {np.__version__}, scipy {scipy.__version__}, statsmodels {statsmodels.__version__}"

# Tolerances (relative unless said otherwise).
TOL = 1e-10  # every statistic against its reference
TOL_EXACT_SUMS = 1e-10  # Σe², Σe³, Σe⁴ against exact rationals (NIST Norris: 1e-12, in core/tests/diag_norris.rs)
# SciPy's shapiro (a double translation of AS R94) takes the expected normal
# order statistics from AS 111 (Beasley & Springer 1977, about 1e-9 absolute)
# and the tail from AS 66; plumbfit uses the full-precision quantile (AS 241)
# and erfc. On these data the difference in W is below 3e-10 relative; the
# p value inherits it amplified by d ln p / d ln(1 − W). Hence 2e-9 for W and
# 2e-7 for p against scipy, and TOL against an independent recomputation of
# Royston's formulas with scipy.special.ndtri/ndtr (full precision).
TOL_SW_SCIPY_W = 2e-9
TOL_SW_SCIPY_P = 2e-7
# Independent Imhof integration (scipy quad, epsabs 1e-12) and NumPy's
# eigenvalues: absolute agreement of p values.
TOL_DW_P_ABS = 1e-9

SUMMARY: dict[str, float] = {}


def note(key: str, err: float) -> None:
    SUMMARY[key] = max(SUMMARY.get(key, 0.0), err)


def rel(a: float, b: float) -> float:
    if a == b:
        return 0.0
    return abs(a - b) / abs(b) if b != 0 else abs(a)


def p_rel(a: float, b: float) -> float:
    """Relative error of a p value scaled by its condition: p = exp(-g(s))
    turns a relative error δ in the statistic into about |ln p|·δ in p."""
    return rel(a, b) / max(1.0, abs(math.log(b)) if b > 0 else 1.0)


@pytest.fixture(scope="module")
def data() -> dict:
    print(f"\nreference libraries: {VERSIONS}; python {sys.version.split()[0]}")
    path = os.environ.get("PLUMBFIT_DIAG_JSON")
    if not path:
        path = os.path.join(tempfile.mkdtemp(), "diag_reference.json")
        subprocess.run(
            ["cargo", "run", "--release", "-q", "-p", "plumbfit-diag-reference", "--", path],
            cwd=REPO,
            check=True,
        )
    with open(path) as fh:
        return json.load(fh)


class Exact:
    """Exact OLS residuals and influence of one data set (rationals)."""

    def __init__(self, x: list[float], y: list[float]):
        X = [Fraction(v) for v in x]
        Y = [Fraction(v) for v in y]
        n = len(X)
        self.n = n
        mx = sum(X) / n
        my = sum(Y) / n
        cx = [v - mx for v in X]
        sxx = sum(c * c for c in cx)
        sxy = sum(c * (v - my) for c, v in zip(cx, Y))
        b = sxy / sxx
        self.e = [(v - my) - b * c for c, v in zip(cx, Y)]
        self.s2 = sum(e * e for e in self.e)
        self.s3 = sum(e**3 for e in self.e)
        self.s4 = sum(e**4 for e in self.e)
        self.h = [Fraction(1, n) + c * c / sxx for c in cx]
        self.lag1 = sum(self.e[t] * self.e[t - 1] for t in range(1, n)) / self.s2
        self.dw = sum((self.e[t] - self.e[t - 1]) ** 2 for t in range(1, n)) / self.s2
        self.xc = np.array(x) - float(mx)
        self.ef = np.array([float(v) for v in self.e])
        self.fitted = [float(v - e) for v, e in zip(Y, self.e)]

    def influence(self):
        n, p = self.n, 2
        s2 = self.s2 / (n - p)
        out = {k: [] for k in ("studentized", "deleted_t", "cooks", "dffits")}
        for e, h in zip(self.e, self.h):
            g = 1 - h
            r = float(e) / math.sqrt(float(s2 * g))
            sse_i = self.s2 - e * e / g
            t = float(e) / math.sqrt(float(sse_i / (n - p - 1) * g))
            out["studentized"].append(r)
            out["deleted_t"].append(t)
            out["cooks"].append(float(e * e / (s2 * g) * h / (p * g)))
            out["dffits"].append(t * math.sqrt(float(h / g)))
        return out


def imhof_lower(nu: np.ndarray, d0: float) -> float:
    """P(Σ νᵢzᵢ²/Σzᵢ² ≤ d0) by Imhof (1961), integrated with scipy quad."""
    mu = nu - d0
    scale = np.max(np.abs(mu))
    mu = mu / scale

    def f(u: float) -> float:
        if u == 0.0:
            return 0.5 * float(np.sum(mu))
        theta = 0.5 * np.sum(np.arctan(mu * u))
        ln_rho = 0.25 * np.sum(np.log1p((mu * u) ** 2))
        return math.sin(theta) * math.exp(-ln_rho) / u

    val, _ = integrate.quad(f, 0, np.inf, limit=2000, epsabs=1e-13, epsrel=1e-12)
    return 1.0 - (0.5 + val / math.pi)


def dw_design_eigenvalues(xc: np.ndarray) -> np.ndarray:
    n = len(xc)
    A = 2 * np.eye(n) - np.eye(n, k=1) - np.eye(n, k=-1)
    A[0, 0] = A[-1, -1] = 1
    X = np.column_stack([np.ones(n), xc])
    M = np.eye(n) - X @ np.linalg.solve(X.T @ X, X.T)
    ev = np.linalg.eigvalsh(M @ A @ M)
    return np.sort(ev)[2:]  # drop the two zero eigenvalues (span of X)


def royston_sw(e: np.ndarray) -> tuple[float, float]:
    """Royston's (1992, 1995) W and p with full-precision normal functions."""
    x = np.sort(e)
    n = len(x)
    half = n // 2
    if n == 3:
        a = np.array([math.sqrt(0.5)])
    else:
        m = special.ndtri((np.arange(1, half + 1) - 0.375) / (n + 0.25))
        summ2 = 2 * np.sum(m * m)
        rsn = 1 / math.sqrt(n)
        c1 = [0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056]
        c2 = [0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633]
        poly = lambda c, u: sum(ci * u**i for i, ci in enumerate(c))
        a = -m.copy()
        a1 = poly(c1, rsn) - m[0] / math.sqrt(summ2)
        if n > 5:
            a2 = poly(c2, rsn) - m[1] / math.sqrt(summ2)
            fac = math.sqrt((summ2 - 2 * m[0] ** 2 - 2 * m[1] ** 2) / (1 - 2 * a1**2 - 2 * a2**2))
            a = -m / fac
            a[0], a[1] = a1, a2
        else:
            fac = math.sqrt((summ2 - 2 * m[0] ** 2) / (1 - 2 * a1**2))
            a = -m / fac
            a[0] = a1
    coef = np.zeros(n)
    coef[:half] = -a
    coef[n - half :] = a[::-1]
    w = float(np.dot(coef, x) ** 2 / np.sum((x - x.mean()) ** 2))
    if n == 3:
        return w, max(0.0, 1 - 6 / math.pi * math.acos(math.sqrt(max(w, 0.75))))
    y = math.log(1 - w)
    if n <= 11:
        gamma = -2.273 + 0.459 * n
        y = -math.log(gamma - y)
        mu = 0.5440 - 0.39978 * n + 0.025054 * n**2 - 0.0006714 * n**3
        sigma = math.exp(1.3822 - 0.77857 * n + 0.062767 * n**2 - 0.0020322 * n**3)
    else:
        L = math.log(n)
        mu = -1.5861 - 0.31082 * L - 0.083751 * L**2 + 0.0038915 * L**3
        sigma = math.exp(-0.4803 - 0.082676 * L + 0.0030302 * L**2)
    return w, float(special.ndtr(-(y - mu) / sigma))


def check(key: str, got: float, want: float, tol: float, name: str, source: str, p: bool = False):
    err = p_rel(got, want) if p else rel(got, want)
    note(key, err)
    assert err <= tol, f"{name}: {key} = {got!r}, {source} gives {want!r} (rel {err:.2e} > {tol})"


def check_extreme_stream(got: dict, ex: Exact, y: list[float], name: str, src: str) -> None:
    """The accumulator forms the frame residual v = (y − y0) − b0·dx in
    double, so each residual carries an absolute error of a few ε·range(y):
    the streaming statistics are then accurate to about that relative to σₑ.
    This checks that documented limit instead of 1e-10."""
    rms = math.sqrt(float(ex.s2) / ex.n)
    tol = 1e3 * 2.2e-16 * (max(y) - min(y)) / rms
    sh = got["shape"]
    for k, want in (("sum_sq", ex.s2), ("skewness", None), ("kurtosis", None)):
        if want is None:
            want = stats.skew(ex.ef) if k == "skewness" else stats.kurtosis(ex.ef, fisher=False)
        err = rel(sh[k], float(want))
        note(f"extreme near-perfect stream {k} (rel, limit {tol:.0e})", err)
        assert err <= tol, f"{name}/{src}: {k} beyond the documented streaming limit"


def test_diagnostics_match_references(data):
    sets = data["sets"]
    assert len(sets) >= 20
    for s in sets:
        name, x, y = s["name"], s["x"], s["y"]
        ex = Exact(x, y)
        e = ex.ef
        n = len(e)
        exog = np.column_stack([np.ones(n), ex.xc])
        ref_shape = {
            "skewness": (stats.skew(e), f"scipy {scipy.__version__} stats.skew"),
            "kurtosis": (stats.kurtosis(e, fisher=False), f"scipy {scipy.__version__} stats.kurtosis"),
        }
        jb = stats.jarque_bera(e)
        bp = het_breuschpagan(e, exog, robust=False)
        bpk = het_breuschpagan(e, exog, robust=True)
        sm = f"statsmodels {statsmodels.__version__} het_breuschpagan"
        ref_shape["jarque_bera"] = (jb.statistic, f"scipy {scipy.__version__} jarque_bera")
        ref_shape["spread_lm"] = (bp[0], sm + " robust=False")
        ref_shape["spread_lm_studentized"] = (bpk[0], sm + " robust=True")
        ref_p = {
            "jarque_bera_p": (jb.pvalue, f"scipy {scipy.__version__} jarque_bera"),
            "spread_lm_p": (bp[1], sm + " robust=False"),
            "spread_lm_studentized_p": (bpk[1], sm + " robust=True"),
        }
        rms = math.sqrt(float(ex.s2) / n)
        for src in ("stream", "stream_pushed", "stream_merged", "retained"):
            if name.startswith("extreme_") and src != "retained":
                check_extreme_stream(s[src], ex, y, name, src)
                continue
            sh = s[src]["shape"]
            for k, (want, source) in ref_shape.items():
                check(f"{k}", sh[k], float(want), TOL, f"{name}/{src}", source)
            for k, (want, source) in ref_p.items():
                check(f"{k}", sh[k], float(want), TOL, f"{name}/{src}", source, p=True)
            for k, want in (("sum_sq", ex.s2), ("sum_fourth", ex.s4)):
                check(f"{k} (exact)", sh[k], float(want), TOL_EXACT_SUMS, f"{name}/{src}", "exact rationals")
            # Σe³ is a cancelling sum: its error is measured against Σ|e|³.
            err = abs(sh["sum_cube"] - float(ex.s3)) / float(np.sum(np.abs(e) ** 3))
            note("sum_cube (exact, rel to Σ|e|³)", err)
            assert err <= TOL_EXACT_SUMS, f"{name}/{src}: sum_cube vs exact rationals"
            assert abs(sh["residual_mean"]) <= 1e-13 * rms, f"{name}/{src}: residual mean"
            se = s[src]["serial"]
            dw_ref = float(durbin_watson(e))
            check("durbin_watson", se["durbin_watson"], dw_ref, TOL, f"{name}/{src}",
                  f"statsmodels {statsmodels.__version__} durbin_watson")
            check("durbin_watson (exact)", se["durbin_watson"], float(ex.dw), TOL, f"{name}/{src}", "exact rationals")
            check("lag1 (exact)", se["lag1"], float(ex.lag1), TOL, f"{name}/{src}", "exact rationals")

        # Durbin–Watson p values: exact (retained) against NumPy eigenvalues
        # + scipy quad Imhof; bounds (stream) contain it and match Imhof on
        # the bounding eigenvalues 2(1 − cos(πj/n)).
        rs, st = s["retained"]["serial"], s["stream"]["serial"]
        assert rs["method"] == "Exact" and st["method"] == "ExactBounds", name
        if n <= 600 and not name.startswith("extreme_"):
            p_ref = imhof_lower(dw_design_eigenvalues(ex.xc), rs["durbin_watson"])
            err = abs(rs["p_low"] - p_ref)
            note("dw p exact (abs)", err)
            assert err <= TOL_DW_P_ABS, f"{name}: DW p {rs['p_low']} vs numpy+scipy quad Imhof {p_ref}"
            lam = 2 * (1 - np.cos(np.pi * np.arange(1, n) / n))
            lo = imhof_lower(lam[1:], st["durbin_watson"])
            hi = imhof_lower(lam[:-1], st["durbin_watson"])
            err = max(abs(st["p_low"] - lo), abs(st["p_high"] - hi))
            note("dw p bounds (abs)", err)
            assert err <= TOL_DW_P_ABS, f"{name}: DW bounds {st['p_low']},{st['p_high']} vs {lo},{hi}"
        if not name.startswith("extreme_"):
            assert st["p_low"] - 1e-12 <= rs["p_low"] <= st["p_high"] + 1e-12, f"{name}: bounds"

        # Influence: statsmodels OLSInfluence on the exact residuals, and
        # exact rationals (statsmodels forms SSE − e²/(1 − h), which loses
        # digits where deleting a point leaves an almost exact fit).
        inf = s["retained"]["influence"]
        oi = OLSInfluence(OLS(e, exog).fit())
        smv = f"statsmodels {statsmodels.__version__} OLSInfluence"
        cols = {
            "leverage": oi.hat_matrix_diag,
            "studentized": oi.resid_studentized_internal,
            "deleted_t": oi.resid_studentized_external,
            "cooks": oi.cooks_distance[0],
            "dffits": oi.dffits[0],
        }
        exact_inf = ex.influence()
        exact_inf["leverage"] = [float(h) for h in ex.h]
        exact_inf["residual"] = list(e)
        for k, want in cols.items():
            got = np.array(inf[k])
            exw = np.array(exact_inf[k])
            floor = 1e-13 * np.max(np.abs(exw))  # values near 0 inherit the column's rounding
            err = np.max(np.abs(got - exw) / (np.abs(exw) + floor))
            note(f"influence {k} (exact)", float(err))
            assert err <= TOL, f"{name}: {k} vs exact rationals, rel {err:.2e}"
            if name.startswith("deletion_near_exact") and k in ("deleted_t", "dffits"):
                continue
            err = np.max(np.abs(got - want) / (np.abs(want) + floor))
            note(f"influence {k}", float(err))
            assert err <= TOL, f"{name}: {k} vs {smv}, rel {err:.2e}"
        got = np.array(inf["residual"])
        assert np.max(np.abs(got - e) / (np.abs(e) + 1e-13 * np.max(np.abs(e)))) <= TOL, name
        # Flags against the common-practice cut-offs applied to the exact values.
        h = np.array(exact_inf["leverage"])
        t = np.array(exact_inf["deleted_t"])
        cd = np.array(exact_inf["cooks"])
        df = np.array(exact_inf["dffits"])
        flags = np.array(inf["flags"]).astype(int)
        for bit, cond, margin in (
            (1, h > 4 / n, np.abs(h - 4 / n)),
            (2, np.abs(t) > 2, np.abs(np.abs(t) - 2)),
            (4, np.abs(t) > 3, np.abs(np.abs(t) - 3)),
            (8, cd > 4 / n, np.abs(cd - 4 / n)),
            (16, cd > 1, np.abs(cd - 1)),
            (32, np.abs(df) > 2 * math.sqrt(2 / n), np.abs(np.abs(df) - 2 * math.sqrt(2 / n))),
        ):
            clear = margin > 1e-9
            assert np.all(((flags & bit) != 0)[clear] == cond[clear]), f"{name}: flag {bit}"

        # Normality tests on the residuals.
        sw = s["retained"]["shapiro"]
        ref = stats.shapiro(e)
        check("shapiro W (scipy)", sw["w"], float(ref.statistic), TOL_SW_SCIPY_W, name,
              f"scipy {scipy.__version__} shapiro")
        # p is a function of ln(1 − W): scipy's error in W is amplified by
        # 1/(1 − W) (about 2000 at n = 2000).
        tol_p = max(TOL_SW_SCIPY_P, 10 * TOL_SW_SCIPY_W / (1 - float(ref.statistic)))
        check("shapiro p (scipy)", sw["p"], float(ref.pvalue), tol_p, name,
              f"scipy {scipy.__version__} shapiro", p=True)
        w_ind, p_ind = royston_sw(e)
        check("shapiro W", sw["w"], w_ind, TOL, name, "Royston formulas with scipy.special ndtri/ndtr")
        check("shapiro p", sw["p"], p_ind, TOL, name, "Royston formulas with scipy.special ndtri/ndtr", p=True)
        ad = s["retained"]["anderson"]
        a2_sm, p_sm = normal_ad(e)
        # statsmodels and scipy take ln(1 − Φ(z)) as log1p(−Φ(z)), which is
        # −inf once Φ(z) rounds to 1 (Cauchy residuals); the same formula
        # with scipy.special.log_ndtr in both tails is the reference there.
        z = np.sort((e - e.mean()) / e.std(ddof=1))
        i = np.arange(1, n + 1)
        a2_log = float(-n - np.sum((2 * i - 1) / n * (special.log_ndtr(z) + special.log_ndtr(-z[::-1]))))
        check("anderson A2 (log_ndtr)", ad["a2"], a2_log, TOL, name,
              f"A² with scipy {scipy.__version__} special.log_ndtr")
        if np.isfinite(a2_sm):
            # Their log1p(−Φ(z)) has relative error ε/(1 − Φ(z)); the largest
            # such term, weighted (2n − 1)/n, bounds their error in A².
            tail = float(min(special.ndtr(z[0]), special.ndtr(-z[-1])))
            tol_lib = max(TOL, 10 * 2.2e-16 / tail * (2 * n - 1) / n / float(a2_sm))
            check("anderson A2 (statsmodels, to its log1p limit)", ad["a2"], float(a2_sm), tol_lib, name, f"statsmodels {statsmodels.__version__} normal_ad")
            check("anderson A2 (scipy, to its log1p limit)", ad["a2"], float(stats.anderson(e, method="interpolate").statistic),
                  tol_lib, name, f"scipy {scipy.__version__} anderson")
        fac = 1 + 0.75 / n + 2.25 / n**2
        check("anderson A2*", ad["a2_modified"], a2_log * fac, TOL, name, "A² × (1 + 0.75/n + 2.25/n²)")
        # The p value formula of statsmodels' normal_ad (D'Agostino & Stephens
        # 1986) applied to the log_ndtr statistic.
        a = a2_log * fac
        if a < 0.2:
            p_ref = 1 - math.exp(-13.436 + 101.14 * a - 223.73 * a**2)
        elif a < 0.34:
            p_ref = 1 - math.exp(-8.318 + 42.796 * a - 59.938 * a**2)
        elif a < 0.6:
            p_ref = math.exp(0.9177 - 4.279 * a - 1.38 * a**2)
        elif a <= 13:
            p_ref = math.exp(1.2937 - 5.709 * a + 0.0186 * a**2)
        else:
            p_ref = 0.0
        if p_ref > 0:
            check("anderson p (log_ndtr)", ad["p"], p_ref, TOL, name, "normal_ad's p formula on the log_ndtr A²", p=True)
        else:
            assert ad["p"] == 0.0, name
        if p_sm > 0:
            check("anderson p (statsmodels, to its log1p limit)", ad["p"], float(p_sm), tol_lib, name, f"statsmodels {statsmodels.__version__} normal_ad",
                  p=True)
        else:
            assert ad["p"] == 0.0, name

        # Plot data.
        q = stats.norm.ppf((np.arange(1, n + 1) - 0.375) / (n + 0.25))
        err = float(np.max(np.abs(np.array(s["retained"]["normal_pairs"]) - q)))
        note("normal quantiles (abs)", err)
        assert err <= 1e-13, f"{name}: normal quantiles vs scipy norm.ppf"
        # ŷ = y − e in double: e carries a few ε of itself and the
        # subtraction one more ε·(|y| + |e|).
        err = max(abs(a - b) / (abs(yy) + abs(ee)) for a, b, yy, ee in zip(s["retained"]["fitted"], ex.fitted, y, e))
        note("fitted (rel to |y|+|e|)", err)
        assert err <= 4e-15, f"{name}: fitted values vs exact"

    print(f"\nagreement over {len(sets)} data sets ({VERSIONS}):")
    for k in sorted(SUMMARY):
        v = SUMMARY[k]
        digits = "exact" if v == 0 else f"{-math.log10(v):.1f} digits"
        print(f"  {k:<34} max error {v:.2e}  ({digits})")
