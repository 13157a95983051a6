//! The exact Durbin–Watson p value against a Monte Carlo simulation of the
//! null distribution with the same design (independent of the Imhof
//! inversion and the eigenvalue solver under test), and the accumulator's
//! bounds against both.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

use plumbfit::diag::{self, ResidualSet, SerialMethod};
use plumbfit::FullMoments;

/// SplitMix64 with Box–Muller normals: fixed seed, no dependency.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        (((z ^ (z >> 31)) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.next(), self.next());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// Durbin–Watson d of the OLS residuals of `y` on `[1, x]` (two-pass).
fn dw(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let b = sxy / sxx;
    let e: Vec<f64> = x
        .iter()
        .zip(y)
        .map(|(a, c)| (c - my) - b * (a - mx))
        .collect();
    let num: f64 = e.windows(2).map(|w| (w[1] - w[0]).powi(2)).sum();
    num / e.iter().map(|v| v * v).sum::<f64>()
}

/// Monte Carlo replicates. The p value estimate has standard error
/// √(p(1 − p)/N) ≤ 0.0016; the tolerance is 4.5 of those plus 1/N.
const REPS: usize = 100_000;

fn check_design(name: &str, x: &[f64], seed: u64) {
    let n = x.len();
    let mut rng = Rng(seed);
    // Observed series: one independent, one positively, one negatively
    // correlated, so the p values spread over the range.
    let mut observed = Vec::new();
    for rho in [0.0, 0.6, -0.6] {
        let mut e = 0.0;
        let y: Vec<f64> = x
            .iter()
            .map(|xi| {
                e = rho * e + rng.normal();
                1.0 + 0.5 * xi + e
            })
            .collect();
        observed.push(y);
    }
    let mut sims: Vec<f64> = Vec::with_capacity(REPS);
    let mut y = vec![0.0; n];
    for _ in 0..REPS {
        for v in y.iter_mut() {
            *v = rng.normal();
        }
        sims.push(dw(x, &y));
    }
    for y in &observed {
        let mut acc = FullMoments::new();
        acc.extend(x, y).unwrap();
        let set = ResidualSet::new(x, y, &acc.fit().unwrap()).unwrap();
        let exact = set.serial().unwrap();
        assert_eq!(exact.method, SerialMethod::Exact);
        let d0 = exact.durbin_watson;
        let p = exact.p_positive();
        let mc = sims.iter().filter(|&&d| d <= d0).count() as f64 / REPS as f64;
        let tol = 4.5 * (p * (1.0 - p) / REPS as f64).sqrt() + 1.0 / REPS as f64;
        println!("{name}: d = {d0:.4}  exact p = {p:.5}  Monte Carlo {mc:.5}  (tol {tol:.5})");
        assert!(
            (p - mc).abs() <= tol,
            "{name}: exact {p} vs Monte Carlo {mc}"
        );
        let bounds = diag::stream_checks(&acc).unwrap().serial;
        assert_eq!(bounds.method, SerialMethod::ExactBounds);
        assert!((bounds.durbin_watson - d0).abs() <= 1e-12 * d0);
        assert!(bounds.p_positive_low <= p + 1e-12 && p <= bounds.p_positive_high + 1e-12);
        assert!(bounds.p_positive_low <= mc + tol && mc - tol <= bounds.p_positive_high);
    }
}

#[test]
fn exact_p_matches_monte_carlo_for_uneven_design() {
    let x: Vec<f64> = (0..20)
        .map(|i| ((i * 7) % 20) as f64 + (i as f64 * 0.3).sin())
        .collect();
    check_design("uneven n=20", &x, 11);
}

#[test]
fn exact_p_matches_monte_carlo_for_trend_design() {
    // Equally spaced x: half of the cosine components of x vanish, so the
    // eigenvalue solver takes its deflation path.
    let x: Vec<f64> = (1..=15).map(f64::from).collect();
    check_design("trend n=15", &x, 12);
}

#[test]
fn exact_p_matches_monte_carlo_with_leverage_point() {
    let mut x: Vec<f64> = (0..12).map(|i| (i as f64 * 1.3).cos()).collect();
    x[5] = 12.0;
    check_design("leverage n=12", &x, 13);
}

#[test]
fn beyond_the_limit_the_normal_approximation_is_used_and_named() {
    let n = diag::EXACT_SERIAL_MAX_N + 1;
    let mut rng = Rng(5);
    let x: Vec<f64> = (0..n).map(|i| i as f64 + rng.next()).collect();
    let y: Vec<f64> = x.iter().map(|v| 2.0 * v + rng.normal()).collect();
    let mut acc = FullMoments::new();
    acc.extend(&x, &y).unwrap();
    let set = ResidualSet::new(&x, &y, &acc.fit().unwrap()).unwrap();
    let s = set.serial().unwrap();
    assert_eq!(s.method, SerialMethod::Normal);
    let b = diag::stream_checks(&acc).unwrap().serial;
    assert_eq!(b.method, SerialMethod::NormalBounds);
    // The bounding statistics bracket every design's distribution.
    assert!(
        b.p_positive_low <= s.p_positive() + 1e-9 && s.p_positive() <= b.p_positive_high + 1e-9
    );
}
