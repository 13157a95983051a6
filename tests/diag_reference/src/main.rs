//! Writes plumbfit's residual diagnostics on generated data sets as JSON
//! (`plumbfit-diag-reference OUT.json`), for `test_diag_reference.py` to
//! recompute with SciPy and statsmodels.
//!
//! All data are invented: a fixed-seed generator draws them, so the file is
//! the same on every machine. Each set is fitted three ways (one extend,
//! pair-by-pair pushes, and three merged parts) so the comparison also
//! checks that streaming, merging and retained data agree.

use plumbfit::diag::{self, DiagError, PointInfluence, ResidualSet, SerialCheck};
use plumbfit::{FullMoments, LineFit};
use std::fmt::Write as _;

/// SplitMix64 (Steele, Lea & Flood 2014): small, seedable, no dependency.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform on (0, 1).
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller).
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
    /// Student t with `k` degrees of freedom.
    fn student(&mut self, k: u32) -> f64 {
        let chi: f64 = (0..k).map(|_| self.normal().powi(2)).sum();
        self.normal() / (chi / k as f64).sqrt()
    }
    fn laplace(&mut self) -> f64 {
        let u = self.uniform() - 0.5;
        -u.signum() * (1.0 - 2.0 * u.abs()).ln()
    }
}

struct Set {
    name: &'static str,
    x: Vec<f64>,
    y: Vec<f64>,
}

fn line(name: &'static str, x: Vec<f64>, a: f64, b: f64, noise: Vec<f64>) -> Set {
    let y = x.iter().zip(&noise).map(|(x, e)| a + b * x + e).collect();
    Set { name, x, y }
}

fn datasets() -> Vec<Set> {
    let mut r = Rng(0x5EED_D1A6_2026);
    let mut sets = Vec::new();
    let unif = |r: &mut Rng, n: usize, lo: f64, hi: f64| -> Vec<f64> {
        (0..n).map(|_| lo + (hi - lo) * r.uniform()).collect()
    };
    let noise =
        |r: &mut Rng, n: usize, s: f64| -> Vec<f64> { (0..n).map(|_| s * r.normal()).collect() };

    let x = unif(&mut r, 50, 0.0, 10.0);
    let e = noise(&mut r, 50, 0.3);
    sets.push(line("normal_n50", x, 1.5, 2.0, e));
    let x = unif(&mut r, 500, -5.0, 5.0);
    let e = noise(&mut r, 500, 1.0);
    sets.push(line("normal_n500", x, -3.0, 0.7, e));
    let x = unif(&mut r, 12, 0.0, 1.0);
    let e = noise(&mut r, 12, 0.05);
    sets.push(line("normal_n12", x, 0.0, 1.0, e));
    let x = vec![1.0, 2.0, 3.5, 4.0, 6.0, 7.5];
    let e = noise(&mut r, 6, 0.2);
    sets.push(line("small_n6", x, 2.0, -1.0, e));
    let x = vec![0.5, 1.0, 2.0, 2.5, 4.0];
    let e = noise(&mut r, 5, 0.2);
    sets.push(line("small_n5", x, 1.0, 3.0, e));
    let x = unif(&mut r, 200, 0.0, 20.0);
    let e: Vec<f64> = (0..200).map(|_| r.student(3)).collect();
    sets.push(line("student3_n200", x, 10.0, -0.5, e));
    let x = unif(&mut r, 100, 0.0, 5.0);
    let e: Vec<f64> = (0..100).map(|_| 0.1 * r.student(1)).collect();
    sets.push(line("cauchy_n100", x, 0.0, 4.0, e));
    let x = unif(&mut r, 300, 0.0, 3.0);
    let e: Vec<f64> = (0..300).map(|_| 0.4 * r.laplace()).collect();
    sets.push(line("laplace_n300", x, 5.0, 1.0, e));
    let x: Vec<f64> = unif(&mut r, 100, 0.0, 100.0)
        .iter()
        .map(|t| 1e9 + t)
        .collect();
    let e = noise(&mut r, 100, 0.5);
    sets.push(line("offset1e9_x_n100", x, -2e9, 3.0, e));
    let x: Vec<f64> = unif(&mut r, 80, 0.0, 50.0)
        .iter()
        .map(|t| 1e9 + t)
        .collect();
    let e = noise(&mut r, 80, 2.0);
    sets.push(line("offset1e9_both_n80", x, 0.0, 1.0, e));
    // 1 − R² ≈ 2e-10 and 5e-9 (NIST Norris: 6e-6).
    let x = unif(&mut r, 60, 0.0, 10.0);
    let e = noise(&mut r, 60, 3e-4);
    sets.push(line("near_perfect_n60", x, 1.0, 7.0, e));
    let x: Vec<f64> = unif(&mut r, 40, 0.0, 10.0)
        .iter()
        .map(|t| 1e6 + t)
        .collect();
    let e = noise(&mut r, 40, 2e-4);
    sets.push(line("near_perfect_offset_n40", x, 0.5, 2.5, e));
    // 1 − R² ≈ 2e-20: beyond what the accumulator's double-precision frame
    // residual v resolves (about ε·range(y)/σₑ relative); retained data
    // still exact.
    let x = unif(&mut r, 60, 0.0, 10.0);
    let e = noise(&mut r, 60, 1e-9);
    sets.push(line("extreme_near_perfect_n60", x, 1.0, 7.0, e));
    let x = unif(&mut r, 150, 1.0, 10.0);
    let e: Vec<f64> = x.iter().map(|x| 0.2 * x * r.normal()).collect();
    sets.push(line("spread_grows_n150", x, 0.0, 1.0, e));
    let x: Vec<f64> = (0..120).map(|i| i as f64 * 0.25).collect();
    let mut e = vec![0.0; 120];
    for i in 1..120 {
        e[i] = 0.7 * e[i - 1] + 0.3 * r.normal();
    }
    sets.push(line("ar1_plus_n120", x, 3.0, 0.2, e));
    let x: Vec<f64> = (0..90).map(|i| i as f64).collect();
    let mut e = vec![0.0; 90];
    for i in 1..90 {
        e[i] = -0.5 * e[i - 1] + r.normal();
    }
    sets.push(line("ar1_minus_n90", x, 0.0, -0.3, e));
    let x = unif(&mut r, 70, -2.0, 2.0);
    let e: Vec<f64> = x.iter().map(|x| 0.8 * x * x + 0.1 * r.normal()).collect();
    sets.push(line("curved_n70", x, 1.0, 1.0, e));
    let x = unif(&mut r, 40, 0.0, 10.0);
    let mut e = noise(&mut r, 40, 0.5);
    e[17] += 8.0;
    sets.push(line("one_outlier_n40", x, 2.0, 0.5, e));
    let mut x = unif(&mut r, 30, 0.0, 5.0);
    x[29] = 40.0;
    let mut e = noise(&mut r, 30, 0.3);
    e[29] += 3.0;
    sets.push(line("high_leverage_n30", x, 0.0, 1.0, e));
    let x = unif(&mut r, 1000, 0.0, 1.0);
    let e: Vec<f64> = (0..1000).map(|_| r.uniform() - 0.5).collect();
    sets.push(line("uniform_err_n1000", x, 0.0, 2.0, e));
    let x = unif(&mut r, 400, 0.0, 4.0);
    let e: Vec<f64> = (0..400).map(|_| -r.uniform().ln()).collect();
    sets.push(line("exponential_err_n400", x, 1.0, -1.0, e));
    let x = unif(&mut r, 2000, 0.0, 100.0);
    let e = noise(&mut r, 2000, 5.0);
    sets.push(line("normal_n2000", x, 50.0, 0.1, e));
    let x: Vec<f64> = (1..=30).map(f64::from).collect();
    let e = noise(&mut r, 30, 0.4);
    sets.push(line("equal_spacing_n30", x, 0.0, 1.0, e));
    // Deleting point 9 leaves an almost exact line: the deleted residual is
    // huge and SSE − e²/(1 − h) cancels.
    let x = unif(&mut r, 25, 0.0, 10.0);
    let mut e = noise(&mut r, 25, 1e-9);
    e[9] += 1.0;
    sets.push(line("deletion_near_exact_n25", x, 4.0, 2.0, e));
    sets
}

fn num(out: &mut String, v: f64) {
    // Debug prints the shortest representation that reads back exactly.
    write!(out, "{v:?}").unwrap_or(());
}

fn arr(out: &mut String, vals: impl IntoIterator<Item = f64>) {
    out.push('[');
    for (i, v) in vals.into_iter().enumerate() {
        if i > 0 {
            out.push(',');
        }
        num(out, v);
    }
    out.push(']');
}

fn field(out: &mut String, key: &str, v: f64) {
    write!(out, "\"{key}\":").unwrap_or(());
    num(out, v);
    out.push(',');
}

fn shape_json(out: &mut String, s: &diag::ResidualShape) {
    out.push('{');
    field(out, "residual_mean", s.residual_mean);
    field(out, "sum_sq", s.sum_sq);
    field(out, "sum_cube", s.sum_cube);
    field(out, "sum_fourth", s.sum_fourth);
    field(out, "skewness", s.skewness);
    field(out, "kurtosis", s.kurtosis);
    field(out, "jarque_bera", s.jarque_bera);
    field(out, "jarque_bera_p", s.jarque_bera_p);
    field(out, "spread_lm", s.spread_lm);
    field(out, "spread_lm_p", s.spread_lm_p);
    field(out, "spread_lm_studentized", s.spread_lm_studentized);
    field(out, "spread_lm_studentized_p", s.spread_lm_studentized_p);
    out.pop();
    out.push('}');
}

fn serial_json(out: &mut String, s: &SerialCheck) {
    out.push('{');
    field(out, "durbin_watson", s.durbin_watson);
    field(out, "lag1", s.lag1_autocorrelation);
    field(out, "p_low", s.p_positive_low);
    field(out, "p_high", s.p_positive_high);
    write!(out, "\"method\":\"{:?}\"}}", s.method).unwrap_or(());
}

fn influence_json(out: &mut String, inf: &[PointInfluence]) {
    out.push('{');
    type Column = (&'static str, fn(&PointInfluence) -> f64);
    let cols: [Column; 6] = [
        ("residual", |p| p.residual),
        ("leverage", |p| p.leverage),
        ("studentized", |p| p.studentized),
        ("deleted_t", |p| p.deleted_t),
        ("cooks", |p| p.cooks_distance),
        ("dffits", |p| p.dffits),
    ];
    for (k, f) in cols {
        write!(out, "\"{k}\":").unwrap_or(());
        arr(out, inf.iter().map(f));
        out.push(',');
    }
    write!(out, "\"flags\":").unwrap_or(());
    arr(out, inf.iter().map(|p| f64::from(p.flags)));
    out.push('}');
}

fn fit_three_ways(s: &Set) -> Result<(FullMoments, FullMoments, FullMoments), String> {
    let e = |e: plumbfit::MomentsError| format!("{}: {e}", s.name);
    let mut a = FullMoments::new();
    a.extend(&s.x, &s.y).map_err(e)?;
    let mut b = FullMoments::new();
    for (&x, &y) in s.x.iter().zip(&s.y) {
        b.push(x, y).map_err(e)?;
    }
    let n = s.x.len();
    let (c1, c2) = (n / 3, 2 * n / 3);
    let mut parts = [FullMoments::new(), FullMoments::new(), FullMoments::new()];
    for (p, (lo, hi)) in parts.iter_mut().zip([(0, c1), (c1, c2), (c2, n)]) {
        if hi > lo {
            p.extend(&s.x[lo..hi], &s.y[lo..hi]).map_err(e)?;
        }
    }
    let mut c = parts[0];
    c.merge(&parts[1]).map_err(e)?;
    c.merge(&parts[2]).map_err(e)?;
    Ok((a, b, c))
}

fn one(out: &mut String, s: &Set) -> Result<(), String> {
    let err = |e: DiagError| format!("{}: {e}", s.name);
    let (a, b, c) = fit_three_ways(s)?;
    let fit: LineFit = a.fit().map_err(|e| format!("{}: {e}", s.name))?;
    write!(out, "{{\"name\":\"{}\",\"x\":", s.name).unwrap_or(());
    arr(out, s.x.iter().copied());
    out.push_str(",\"y\":");
    arr(out, s.y.iter().copied());
    for (key, acc) in [("stream", a), ("stream_pushed", b), ("stream_merged", c)] {
        let st = diag::stream_checks(&acc).map_err(err)?;
        write!(out, ",\"{key}\":{{\"shape\":").unwrap_or(());
        shape_json(out, &st.shape);
        out.push_str(",\"serial\":");
        serial_json(out, &st.serial);
        out.push('}');
    }
    let set = ResidualSet::new(&s.x, &s.y, &fit).map_err(err)?;
    out.push_str(",\"retained\":{\"shape\":");
    shape_json(out, &set.shape().map_err(err)?);
    out.push_str(",\"serial\":");
    serial_json(out, &set.serial().map_err(err)?);
    out.push_str(",\"influence\":");
    influence_json(out, &set.influence().map_err(err)?);
    let sw = set.shapiro_wilk().map_err(err)?;
    let ad = set.anderson_darling().map_err(err)?;
    out.push_str(",\"shapiro\":{");
    field(out, "w", sw.w);
    field(out, "p", sw.p_value);
    out.pop();
    out.push_str("},\"anderson\":{");
    field(out, "a2", ad.a2);
    field(out, "a2_modified", ad.a2_modified);
    field(out, "p", ad.p_value);
    out.pop();
    out.push_str("},\"normal_pairs\":");
    let pairs = set.normal_pairs();
    arr(out, pairs.iter().map(|p| p[0]));
    out.push_str(",\"fitted\":");
    arr(out, set.fitted().iter().copied());
    out.push_str("}}");
    Ok(())
}

fn main() {
    let path = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "diag_reference.json".into());
    let mut out = String::from("{\"generator\":\"plumbfit-diag-reference\",\"sets\":[");
    for (i, s) in datasets().iter().enumerate() {
        if i > 0 {
            out.push(',');
        }
        let t = std::time::Instant::now();
        let res = one(&mut out, s);
        eprintln!(
            "{:<28} n = {:>5}  {:>8.3} s",
            s.name,
            s.x.len(),
            t.elapsed().as_secs_f64()
        );
        if let Err(e) = res {
            eprintln!("error: {e}");
            std::process::exit(1);
        }
    }
    out.push_str("]}\n");
    if let Err(e) = std::fs::write(&path, out) {
        eprintln!("error: cannot write {path}: {e}");
        std::process::exit(1);
    }
    println!("wrote {} data sets to {path}", datasets().len());
}
