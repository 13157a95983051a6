//! The null distribution of the Durbin–Watson statistic.
//!
//! Under independent normal errors, `d = eᵀAe / eᵀe` with `e = Mε` (M the
//! residual maker of `[1, x]`, A the first-difference matrix) is distributed
//! as `Σ νᵢ zᵢ² / Σ zᵢ²` over the `n − 2` nonzero eigenvalues `νᵢ` of `MAM`,
//! so `P(d ≤ d₀) = P(Σ (νᵢ − d₀) zᵢ² ≤ 0)`, a quadratic form in normal
//! variables that Imhof (1961, Biometrika 48:419–426) inverts numerically.
//!
//! Eigenvalues. A is diagonalised by the cosine basis with eigenvalues
//! `λⱼ = 4 sin²(πj/2n)`, `j = 0..n−1`, and the constant vector is its null
//! vector. Removing the constant leaves `MAM` as `A` compressed to the
//! complement of one unit vector `z` (the centred, normalised x in that
//! basis), whose nonzero eigenvalues are the roots of the secular equation
//! `Σ zⱼ²/(λⱼ − ν) = 0`, one between each pair of neighbouring `λⱼ` (Golub
//! 1973, "Some modified matrix eigenvalue problems", SIAM Review 15:318–334).
//! Each root is found by safeguarded Newton in the gap `ν − λₖ`, so the whole
//! spectrum costs O(n²) with no matrix and no allocation beyond `n` values.
//!
//! Bounds. Durbin & Watson (1950) bound the eigenvalues by `λⱼ ≤ νⱼ ≤
//! λⱼ₊₁`; the bounding statistics `d_L` (λ₁…λₙ₋₂) and `d_U` (λ₂…λₙ₋₁) need
//! no design, so an accumulator without stored x still gets exact bounds on
//! the p value.

use alloc::vec::Vec;
use core::f64::consts::PI;

/// Largest n for which the Durbin–Watson p value is computed by Imhof's
/// inversion (exact, or exact bounds from an accumulator); beyond it the
/// normal approximation with exact moments is used. The spectrum costs
/// about 11·n² operations (0.6 s at n = 2000 in a release build), and at
/// this size the normal approximation is already close.
pub const EXACT_SERIAL_MAX_N: usize = 2000;

/// `λⱼ = 4 sin²(πj/2n)`: eigenvalues of the first-difference matrix.
pub(crate) fn diff_eigenvalue(j: usize, n: usize) -> f64 {
    let s = libm::sin(PI * j as f64 / (2.0 * n as f64));
    4.0 * s * s
}

/// `λⱼ − λₖ` without cancellation: `4 sin(h(j − k)) sin(h(j + k))` with
/// `h = π/2n`, read from a table of `sin(hm)`, `m < 2n`.
fn diff_gap(sin_tab: &[f64], j: usize, k: usize) -> f64 {
    let s = if j >= k {
        sin_tab[j - k]
    } else {
        -sin_tab[k - j]
    };
    4.0 * s * sin_tab[j + k]
}

/// Nonzero eigenvalues of `MAM` for the regressor `dx` (centred x values in
/// time order), ascending. `dx` must have `n ≥ 3` entries with spread.
pub(crate) fn design_eigenvalues(dx: &[f64]) -> Vec<f64> {
    let n = dx.len();
    let norm = libm::sqrt(dx.iter().map(|v| v * v).sum::<f64>());
    // z = Vᵀq in the cosine basis: cos(πj(2t+1)/2n) through a table of
    // cos(πk/2n), k mod 4n, so the O(n²) transform needs no trig calls.
    let m = 4 * n;
    let table: Vec<f64> = (0..m)
        .map(|k| libm::cos(PI * k as f64 / (2.0 * n as f64)))
        .collect();
    let scale = libm::sqrt(2.0 / n as f64) / norm;
    let mut z2 = Vec::with_capacity(n);
    z2.push(0.0); // the constant direction: q is centred
    for j in 1..n {
        let mut acc = 0.0;
        let mut k = j; // j·(2t+1) for t = 0
        let step = (2 * j) % m;
        for &v in dx {
            acc += v * table[k];
            k += step;
            if k >= m {
                k -= m;
            }
        }
        let zj = acc * scale;
        z2.push(zj * zj);
    }
    // Directions with (numerically) no x content keep λⱼ as an eigenvalue.
    const DEFLATE: f64 = 1e-28;
    let sin_tab: Vec<f64> = (0..2 * n)
        .map(|k| libm::sin(PI * k as f64 / (2.0 * n as f64)))
        .collect();
    let mut out = Vec::with_capacity(n - 2);
    let live: Vec<usize> = (1..n).filter(|&j| z2[j] > DEFLATE).collect();
    for (j, &w) in z2.iter().enumerate().skip(1) {
        if w <= DEFLATE {
            out.push(diff_eigenvalue(j, n));
        }
    }
    for w in live.windows(2) {
        let (k, k1) = (w[0], w[1]);
        let tau = secular_root(&z2, &live, k, k1, &sin_tab);
        out.push(diff_eigenvalue(k, n) + tau);
    }
    out.sort_by(|a, b| a.total_cmp(b));
    out
}

/// Root `τ ∈ (0, λₖ₁ − λₖ)` of `f(τ) = Σ zⱼ² / ((λⱼ − λₖ) − τ)` over the
/// live indices; f increases from −∞ to +∞ across the gap.
///
/// Iteration of Bunch, Nielsen & Sorensen (1978, Numer. Math. 31:31–48):
/// the terms left and right of the gap are each modelled by one pole plus
/// a constant matching value and slope, and the model's root in the gap is
/// the next iterate (quadratic convergence), inside a bisection bracket.
fn secular_root(z2: &[f64], live: &[usize], k: usize, k1: usize, sin_tab: &[f64]) -> f64 {
    let g = diff_gap(sin_tab, k1, k);
    let (mut lo, mut hi) = (0.0f64, g);
    let mut tau = 0.5 * g;
    for _ in 0..100 {
        // ψ1: poles at or left of the gap (terms < 0); ψ2: right (> 0).
        let (mut p1, mut d1, mut p2, mut d2) = (0.0, 0.0, 0.0, 0.0);
        for &j in live {
            let del = diff_gap(sin_tab, j, k) - tau;
            let t = z2[j] / del;
            if j <= k {
                p1 += t;
                d1 += t / del;
            } else {
                p2 += t;
                d2 += t / del;
            }
        }
        let f = p1 + p2;
        if f == 0.0 {
            return tau;
        }
        if f < 0.0 {
            lo = tau;
        } else {
            hi = tau;
        }
        // ψ1 ≈ a − s/t,  ψ2 ≈ b + S/(g − t), matched at t = τ.
        let s = d1 * tau * tau;
        let big_s = d2 * (g - tau) * (g - tau);
        let c = (p1 + s / tau) + (p2 - big_s / (g - tau));
        // c·t² − (c·g + s + S)·t + s·g = 0, root in (0, g).
        let b = c * g + s + big_s;
        let disc = (b * b - 4.0 * c * s * g).max(0.0);
        let q = 0.5 * (b + libm::sqrt(disc));
        let cand = if q != 0.0 { s * g / q } else { f64::NAN };
        let next = if cand > lo && cand < hi {
            cand
        } else {
            0.5 * (lo + hi)
        };
        if (next - tau).abs() <= 2.0 * f64::EPSILON * next.abs()
            || hi - lo <= 2.0 * f64::EPSILON * hi
        {
            return next;
        }
        tau = next;
    }
    tau
}

/// Ascending bound eigenvalues: `d_L` uses λ₁…λₙ₋₂, `d_U` uses λ₂…λₙ₋₁.
pub(crate) fn bound_eigenvalues(n: usize, upper: bool) -> Vec<f64> {
    let off = usize::from(upper);
    (1 + off..n - 1 + off)
        .map(|j| diff_eigenvalue(j, n))
        .collect()
}

/// `P(Σ νᵢ zᵢ² / Σ zᵢ² ≤ d0)` by Imhof's inversion; `None` if the
/// integration does not reach its tolerance.
pub(crate) fn imhof_lower(nu: &[f64], d0: f64) -> Option<f64> {
    let mu: Vec<f64> = nu.iter().map(|v| v - d0).collect();
    let scale = mu.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if scale == 0.0 {
        return Some(0.5);
    }
    if mu.iter().all(|&v| v >= 0.0) {
        return Some(0.0);
    }
    if mu.iter().all(|&v| v <= 0.0) {
        return Some(1.0);
    }
    // The integral is invariant under u → u/scale: work with |μ| ≤ 1.
    let mu: Vec<f64> = mu.iter().map(|v| v / scale).collect();
    let integrand = |u: f64| -> f64 {
        if u == 0.0 {
            return 0.5 * mu.iter().sum::<f64>();
        }
        let (mut theta, mut lnrho) = (0.0, 0.0);
        for &m in &mu {
            let a = m * u;
            theta += libm::atan(a);
            lnrho += libm::log1p(a * a);
        }
        libm::sin(0.5 * theta) / (u * libm::exp(0.25 * lnrho))
    };
    // Imhof's truncation bound: |∫_U^∞| ≤ 2 / (π k U^{k/2} Π|μᵢ|^{1/2}).
    let k = mu.iter().filter(|v| **v != 0.0).count() as f64;
    let half_ln_prod: f64 = mu
        .iter()
        .filter(|v| **v != 0.0)
        .map(|v| 0.5 * libm::log(v.abs()))
        .sum();
    let tail_bound = |u: f64| -> f64 {
        libm::exp(libm::log(2.0 / (PI * k)) - 0.5 * k * libm::log(u) - half_ln_prod)
    };
    const TOL: f64 = 1e-13;
    let mut total = 0.0;
    let (mut a, mut b) = (0.0, 1.0);
    let mut ok = true;
    for _ in 0..200 {
        let (val, good) = adaptive(&integrand, a, b, TOL * 0.01);
        ok &= good;
        total += val;
        if tail_bound(b) < TOL {
            break;
        }
        a = b;
        b *= 2.0;
    }
    if !ok || !(tail_bound(b) < TOL) {
        return None;
    }
    let upper = 0.5 + total / PI; // P(Q > 0)
    Some((1.0 - upper).clamp(0.0, 1.0))
}

/// Gauss–Kronrod (7, 15) nodes and weights (Kronrod 1965; values as
/// tabulated in QUADPACK, Piessens et al. 1983).
#[allow(clippy::excessive_precision)]
const XGK: [f64; 8] = [
    0.991455371120812639206854697526329,
    0.949107912342758524526189684047851,
    0.864864423359769072789712788640926,
    0.741531185599394439863864773280788,
    0.586087235467691130294144845693013,
    0.405845151377397166906606412076961,
    0.207784955007898467600689403773245,
    0.000000000000000000000000000000000,
];
#[allow(clippy::excessive_precision)]
const WGK: [f64; 8] = [
    0.022935322010529224963732008058970,
    0.063092092629978553290700663189204,
    0.104790010322250183839876322541518,
    0.140653259715525918745189590510238,
    0.169004726639267902826583426598550,
    0.190350578064785409913256402421014,
    0.204432940075298892414161999234649,
    0.209482141084727828012999174891714,
];
#[allow(clippy::excessive_precision)]
const WG: [f64; 4] = [
    0.129484966168869693270611432679082,
    0.279705391489276667901467771423780,
    0.381830050505118944950369775488975,
    0.417959183673469387755102040816327,
];

fn gk15(f: &impl Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    let c = 0.5 * (a + b);
    let h = 0.5 * (b - a);
    let fc = f(c);
    let mut k = WGK[7] * fc;
    let mut g = WG[3] * fc;
    for i in 0..7 {
        let x = h * XGK[i];
        let s = f(c - x) + f(c + x);
        k += WGK[i] * s;
        if i % 2 == 1 {
            g += WG[i / 2] * s;
        }
    }
    (k * h, ((k - g) * h).abs())
}

/// Globally adaptive Gauss–Kronrod: the piece with the largest error
/// estimate is halved until the summed estimate is below `tol` (or rounding
/// level), within a fixed budget of pieces; the flag is false if the budget
/// ran out first.
fn adaptive(f: &impl Fn(f64) -> f64, a: f64, b: f64, tol: f64) -> (f64, bool) {
    const MAX_PIECES: usize = 400;
    let (v, e) = gk15(f, a, b);
    let mut pieces: Vec<(f64, f64, f64, f64)> = alloc::vec![(a, b, v, e)];
    loop {
        let (val, err) = pieces
            .iter()
            .fold((0.0, 0.0), |(s, t), p| (s + p.2, t + p.3));
        // Below a few hundred ε of the value the estimate is rounding, not
        // truncation: more halving cannot improve it.
        if err <= tol.max(256.0 * f64::EPSILON * val.abs()) {
            return (val, true);
        }
        if pieces.len() >= MAX_PIECES {
            return (val, false);
        }
        let (i, _) =
            pieces.iter().enumerate().fold(
                (0, -1.0),
                |(bi, be), (i, p)| if p.3 > be { (i, p.3) } else { (bi, be) },
            );
        let (pa, pb, _, _) = pieces.swap_remove(i);
        let m = 0.5 * (pa + pb);
        let (lv, le) = gk15(f, pa, m);
        let (rv, re) = gk15(f, m, pb);
        pieces.push((pa, m, lv, le));
        pieces.push((m, pb, rv, re));
    }
}

/// Mean and variance of `Σ νᵢ zᵢ² / Σ zᵢ²` from `Σν` and `Σν²` over `m`
/// eigenvalues (the ratio is independent of its denominator, so the
/// moments are exact: `E = ν̄`, `Var = 2 Σ(ν − ν̄)² / (m (m + 2))`).
pub(crate) fn ratio_moments(sum: f64, sum_sq: f64, m: f64) -> (f64, f64) {
    let mean = sum / m;
    let ss = (sum_sq - m * mean * mean).max(0.0);
    (mean, 2.0 * ss / (m * (m + 2.0)))
}

/// `Σλ` and `Σλ²` for the bound eigenvalue sets, in closed form per term.
pub(crate) fn bound_moments(n: usize, upper: bool) -> (f64, f64) {
    let off = usize::from(upper);
    let (mut s, mut s2) = (0.0, 0.0);
    for j in 1 + off..n - 1 + off {
        let l = diff_eigenvalue(j, n);
        s += l;
        s2 += l * l;
    }
    (s, s2)
}
