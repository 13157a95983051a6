//! Reference values for `tests/c/test_line.c`, computed by the Rust core
//! directly (not through the C door), printed as exact bit patterns.
//!
//! Output: `data <n>`, then `n` lines `<x> <y> <w>` (hex of the f64 bits),
//! then `value <name> <hex>` lines in the order the C test recomputes them
//! through the C ABI. The C test compares every value bit for bit.
//! The data are invented (a fixed pseudo-random sequence).

// A helper program: failing loudly on an unexpected error is what we want.
#![allow(clippy::unwrap_used)]

use pf_core::calib::{FiellerSet, FixedLevels, Reading, SigmaSource};
use pf_core::line::{Anova, Interval};
use pf_core::model::{InterceptMode, ModelFit, ModelFitOptions, ModelMoments};
use pf_core::{FitOptions, LineFit, PairMoments, Tier, WeightMeaning};
use pf_core::{Full, Lean};

fn bits(v: f64) -> String {
    format!("{:016x}", v.to_bits())
}

struct Out(Vec<String>);

impl Out {
    fn f(&mut self, name: &str, v: f64) {
        self.0.push(format!("value {name} {}", bits(v)));
    }
    fn n(&mut self, name: &str, v: u64) {
        self.0.push(format!("value {name} {v:016x}"));
    }
    fn fit(&mut self, p: &str, f: &LineFit) {
        // Field order of `pf_fitted_line` in the header; names are the C ones.
        self.n(&format!("{p}.through_origin"), f.through_origin as u64);
        self.n(
            &format!("{p}.known_variance"),
            (f.weights == WeightMeaning::InverseVariance) as u64,
        );
        self.n(&format!("{p}.approximate"), f.approximate as u64);
        self.n(&format!("{p}.count"), f.count);
        let fields: [(&str, f64); 34] = [
            ("weight_sum", f.weight_sum),
            ("effective_count", f.effective_count),
            ("slope", f.slope),
            ("intercept", f.intercept),
            ("mean_x", f.mean_x),
            ("mean_y", f.mean_y),
            ("sxx", f.sxx),
            ("sxy", f.sxy),
            ("x_sq_sum", f.sum_x2),
            ("x_sd", f.sd_x),
            ("y_sd", f.sd_y),
            ("xy_cov", f.covariance_xy),
            ("correlation", f.r),
            ("r_squared", f.r_squared),
            ("r_squared_adj", f.adj_r_squared),
            ("resid_ss", f.sse),
            ("model_ss", f.ssr),
            ("total_ss", f.sst),
            ("model_df", f.df_model),
            ("resid_df", f.df_resid),
            ("resid_var", f.residual_variance),
            ("resid_sd", f.residual_sd),
            ("rms_resid", f.rmse),
            ("var_scale", f.scale),
            ("slope_se", f.se_slope),
            ("intercept_se", f.se_intercept),
            ("slope_intercept_cov", f.cov_intercept_slope),
            ("slope_t", f.t_slope),
            ("intercept_t", f.t_intercept),
            ("slope_p", f.p_slope()),
            ("intercept_p", f.p_intercept()),
            ("f_stat", f.f_stat),
            ("chi_square_p", f.p_chi_square()),
            ("critical_95", f.t_critical(0.95).unwrap()),
        ];
        for (k, v) in fields {
            self.f(&format!("{p}.{k}"), v);
        }
    }
    fn interval(&mut self, p: &str, i: Interval) {
        self.f(&format!("{p}.estimate"), i.center);
        self.f(&format!("{p}.std_error"), i.se);
        self.f(&format!("{p}.lower"), i.lower);
        self.f(&format!("{p}.upper"), i.upper);
    }
    fn anova(&mut self, p: &str, a: Anova) {
        for (k, v) in [
            ("model_ss", a.ss_model),
            ("model_df", a.df_model),
            ("model_ms", a.ms_model),
            ("resid_ss", a.ss_resid),
            ("resid_df", a.df_resid),
            ("resid_ms", a.ms_resid),
            ("f_stat", a.f_stat),
            ("f_p", a.p_value),
        ] {
            self.f(&format!("{p}.{k}"), v);
        }
    }
}

/// Invented readings: a drifting offset line with pseudo-random noise and
/// weights, from a fixed 64-bit LCG (Knuth's MMIX constants).
fn data(n: usize) -> Vec<[f64; 3]> {
    let mut s: u64 = 0x2545_f491_4f6c_dd1d;
    let mut u = || {
        s = s
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (s >> 11) as f64 / (1u64 << 53) as f64
    };
    (0..n)
        .map(|i| {
            let x = 1000.0 + 0.25 * i as f64 + 0.1 * u();
            let y = 3.7 - 0.42 * x + (u() - 0.5);
            let w = 0.5 + 1.5 * u();
            [x, y, w]
        })
        .collect()
}

fn scenario<T: Tier>(o: &mut Out, tag: &str, d: &[[f64; 3]]) {
    let xs: Vec<f64> = d.iter().map(|p| p[0]).collect();
    let ys: Vec<f64> = d.iter().map(|p| p[1]).collect();
    let ws: Vec<f64> = d.iter().map(|p| p[2]).collect();
    let origin = FitOptions::through_origin();
    let known = FitOptions::default().with_weights(WeightMeaning::InverseVariance);

    let mut push = PairMoments::<T>::new();
    for p in d {
        push.push(p[0], p[1]).unwrap();
    }
    let f = push.fit().unwrap();
    o.fit(&format!("{tag}.push.fit"), &f);
    o.fit(
        &format!("{tag}.push.origin"),
        &push.fit_with(&origin).unwrap(),
    );
    let (b, a) = push.slope_intercept().unwrap();
    o.f(&format!("{tag}.push.si.slope"), b);
    o.f(&format!("{tag}.push.si.intercept"), a);
    let m = push.summary().unwrap();
    o.n(&format!("{tag}.push.m.count"), m.count);
    for (k, v) in [
        ("weight_sum", m.weight_sum),
        ("weight_sq_sum", m.weight_sq_sum),
        ("mean_x", m.mean_x),
        ("mean_y", m.mean_y),
        ("sxx", m.sxx),
        ("sxy", m.sxy),
        ("syy", m.syy),
    ] {
        o.f(&format!("{tag}.push.m.{k}"), v);
    }
    let x0 = f.mean_x + 37.5;
    o.f(&format!("{tag}.push.value"), f.fitted(x0));
    o.interval(&format!("{tag}.push.band"), f.mean_band(x0, 0.95).unwrap());
    o.interval(
        &format!("{tag}.push.pred1"),
        f.prediction(x0, 1, 0.95).unwrap(),
    );
    o.interval(
        &format!("{tag}.push.pred3"),
        f.prediction(x0, 3, 0.99).unwrap(),
    );
    o.interval(
        &format!("{tag}.push.slope_ci"),
        f.slope_interval(0.95).unwrap(),
    );
    o.interval(
        &format!("{tag}.push.intercept_ci"),
        f.intercept_interval(0.9).unwrap(),
    );
    o.anova(&format!("{tag}.push.anova"), f.anova());

    let mut ext = PairMoments::<T>::new();
    ext.extend(&xs, &ys).unwrap();
    o.fit(&format!("{tag}.extend.fit"), &ext.fit().unwrap());

    let cut = d.len() / 3;
    let mut left = PairMoments::<T>::new();
    left.extend(&xs[..cut], &ys[..cut]).unwrap();
    let mut right = PairMoments::<T>::new();
    right.extend(&xs[cut..], &ys[cut..]).unwrap();
    left.merge(&right).unwrap();
    o.fit(&format!("{tag}.merge.fit"), &left.fit().unwrap());

    let mut wp = PairMoments::<T>::new();
    for p in d {
        wp.push_weighted(p[0], p[1], p[2]).unwrap();
    }
    o.fit(&format!("{tag}.wpush.fit"), &wp.fit().unwrap());
    o.fit(&format!("{tag}.wpush.known"), &wp.fit_with(&known).unwrap());

    let mut we = PairMoments::<T>::new();
    we.extend_weighted(&xs, &ys, &ws).unwrap();
    o.fit(&format!("{tag}.wextend.fit"), &we.fit().unwrap());

    let half = d.len() / 2;
    let mut fg = PairMoments::<T>::new();
    fg.extend(&xs[..half], &ys[..half]).unwrap();
    fg.forget(0.9).unwrap();
    fg.extend(&xs[half..], &ys[half..]).unwrap();
    o.fit(&format!("{tag}.forget.fit"), &fg.fit().unwrap());
}

impl Out {
    fn model_fit(&mut self, p: &str, f: &ModelFit) {
        // Field order of `pf_model_info`, then the caller arrays.
        self.n(&format!("{p}.params"), f.params() as u64);
        let fp = f.f_p_value();
        for (k, v) in [
            ("has_intercept", f.has_intercept),
            ("exact_fit", f.exact_fit),
            ("forgetting_applied", f.forgetting_applied),
            ("has_r_squared", f.r_squared.is_some()),
            ("has_model_ms", f.ms_model.is_some()),
            ("has_f_stat", f.f_stat.is_some()),
            ("has_f_p", fp.is_some()),
        ] {
            self.n(&format!("{p}.{k}"), v as u64);
        }
        self.n(&format!("{p}.rows"), f.rows);
        for (k, v) in [
            ("weight_sum", f.weight_sum),
            ("effective_rows", f.effective_rows),
            ("resid_ss", f.sse),
            ("model_ss", f.ss_model),
            ("total_ss", f.ss_total),
            ("resid_sd", f.residual_sd),
            ("r_squared", f.r_squared.unwrap_or(0.0)),
            ("r_squared_adj", f.adj_r_squared.unwrap_or(0.0)),
        ] {
            self.f(&format!("{p}.{k}"), v);
        }
        self.n(&format!("{p}.model_df"), f.df_model);
        self.n(&format!("{p}.resid_df"), f.df_resid);
        for (k, v) in [
            ("model_ms", f.ms_model.unwrap_or(0.0)),
            ("resid_ms", f.ms_resid),
            ("f_stat", f.f_stat.unwrap_or(0.0)),
            ("f_p", fp.unwrap_or(0.0)),
            ("condition_estimate", f.condition_estimate),
        ] {
            self.f(&format!("{p}.{k}"), v);
        }
        for (j, v) in f.coefficients.iter().enumerate() {
            self.f(&format!("{p}.coef{j}"), *v);
        }
        for (j, v) in f.std_errors.iter().enumerate() {
            self.f(&format!("{p}.se{j}"), *v);
        }
        for (j, v) in f.covariance.iter().enumerate() {
            self.f(&format!("{p}.cov{j}"), *v);
        }
        for (j, i) in f.coef_intervals(0.95).unwrap().iter().enumerate() {
            self.f(&format!("{p}.ci{j}.lower"), i.lower);
            self.f(&format!("{p}.ci{j}.upper"), i.upper);
        }
    }

    fn model_at(&mut self, p: &str, f: &ModelFit, row: &[f64]) {
        self.f(&format!("{p}.predict"), f.predict(row).unwrap());
        self.f(&format!("{p}.leverage"), f.leverage(row).unwrap());
        let i = f.mean_response(row, 0.95).unwrap();
        self.f(&format!("{p}.mean.estimate"), i.estimate);
        self.f(&format!("{p}.mean.std_error"), i.std_error);
        self.f(&format!("{p}.mean.lower"), i.lower);
        self.f(&format!("{p}.mean.upper"), i.upper);
        let i = f.prediction(row, 2, 0.9).unwrap();
        self.f(&format!("{p}.pred.estimate"), i.estimate);
        self.f(&format!("{p}.pred.std_error"), i.std_error);
        self.f(&format!("{p}.pred.lower"), i.lower);
        self.f(&format!("{p}.pred.upper"), i.upper);
    }
}

/// Model accumulator scenarios, in the order `tests/c/test_line.c` runs them.
fn model_scenarios(o: &mut Out, d: &[[f64; 3]]) {
    let detect = ModelFitOptions::default();
    let n = 200;
    // Quadratic in x through the polynomial row builder.
    let mut q = ModelMoments::new(3).unwrap();
    for p in &d[..n] {
        q.push_powers(p[0], p[1], 1.0).unwrap();
    }
    let f = q.fit(&detect).unwrap();
    o.model_fit("model.powers", &f);
    let x0 = d[7][0] + 3.25;
    o.model_at("model.powers.at", &f, &[1.0, x0, x0 * x0]);
    // Straight line from explicit rows [1, x]: push, block, weighted, merge,
    // forgetting, no-intercept.
    let rows: Vec<f64> = d.iter().flat_map(|p| [1.0, p[0]]).collect();
    let ys: Vec<f64> = d.iter().map(|p| p[1]).collect();
    let ws: Vec<f64> = d.iter().map(|p| p[2]).collect();
    let mut a = ModelMoments::new(2).unwrap();
    for p in d {
        a.push_row(&[1.0, p[0]], p[1]).unwrap();
    }
    o.model_fit("model.rows", &a.fit(&detect).unwrap());
    let none = ModelFitOptions::with_intercept(InterceptMode::None);
    o.model_fit("model.rows.none", &a.fit(&none).unwrap());
    let mut b = ModelMoments::new(2).unwrap();
    b.extend_rows(&rows, &ys).unwrap();
    o.model_fit("model.extend", &b.fit(&detect).unwrap());
    let mut c = ModelMoments::new(2).unwrap();
    c.extend_rows_weighted(&rows, &ys, &ws).unwrap();
    o.model_fit("model.wextend", &c.fit(&detect).unwrap());
    let mut e = ModelMoments::new(2).unwrap();
    for p in d {
        e.push_row_weighted(&[1.0, p[0]], p[1], p[2]).unwrap();
    }
    o.model_fit("model.wpush", &e.fit(&detect).unwrap());
    let cut = d.len() / 3;
    let mut l = ModelMoments::new(2).unwrap();
    l.extend_rows(&rows[..2 * cut], &ys[..cut]).unwrap();
    let mut r = ModelMoments::new(2).unwrap();
    r.extend_rows(&rows[2 * cut..], &ys[cut..]).unwrap();
    l.merge(&r).unwrap();
    o.model_fit("model.merge", &l.fit(&detect).unwrap());
    let half = d.len() / 2;
    let mut g = ModelMoments::new(2).unwrap();
    g.extend_rows(&rows[..2 * half], &ys[..half]).unwrap();
    g.forget(0.9).unwrap();
    g.extend_rows(&rows[2 * half..], &ys[half..]).unwrap();
    o.model_fit("model.forget", &g.fit(&detect).unwrap());
}

/// Calibration scenarios, in the order `tests/c/test_line.c` runs them.
fn calib_scenarios(o: &mut Out, d: &[[f64; 3]]) {
    let mut acc = pf_core::LeanMoments::new();
    for p in d {
        acc.push(p[0], p[1]).unwrap();
    }
    let f = acc.fit().unwrap();
    let x0 = f.mean_x + 37.5;
    let y0 = f.fitted(x0) + 0.3;
    let i = f
        .invert_interval(&Reading::mean_of(y0, 3).with_weight(1.0), 0.95)
        .unwrap();
    let (kind, lo, hi) = match i.set {
        FiellerSet::Bounded { lower, upper } => (0, lower, upper),
        FiellerSet::TwoHalfLines { below, above } => (1, below, above),
        FiellerSet::WholeLine => (2, f64::NEG_INFINITY, f64::INFINITY),
    };
    o.f("calib.inv.x", i.estimate.x);
    o.f("calib.inv.std_error", i.estimate.se);
    o.f("calib.inv.level", i.level);
    o.f("calib.inv.critical_value", i.t);
    o.f("calib.inv.g", i.g);
    o.n("calib.inv.set_kind", kind);
    o.f("calib.inv.set_lower", lo);
    o.f("calib.inv.set_upper", hi);
    o.f("calib.inv.approx_lower", i.approx_lower);
    o.f("calib.inv.approx_upper", i.approx_upper);
    let c = f.calibrated_value(y0, 0.2).unwrap();
    o.f("calib.value.x", c.x);
    o.f("calib.value.u", c.u);
    for (k, src) in [
        ("resid", SigmaSource::ResidualSd),
        ("icept", SigmaSource::InterceptSe),
        ("given", SigmaSource::Given(0.05)),
    ] {
        let l = f.limits_from_sigma(src).unwrap();
        o.f(&format!("calib.limits.{k}.sigma"), l.sigma);
        o.f(&format!("calib.limits.{k}.slope"), l.slope);
        o.f(&format!("calib.limits.{k}.detection"), l.detection);
        o.f(&format!("calib.limits.{k}.quantitation"), l.quantitation);
    }
    let dl = f.decision_limits(0.05, 0.05, 1, 1.0).unwrap();
    for (k, v) in [
        ("alpha", dl.alpha),
        ("beta", dl.beta),
        ("y_critical", dl.y_critical),
        ("x_critical", dl.x_critical),
        ("x_detection", dl.x_detection),
    ] {
        o.f(&format!("calib.decision.{k}"), v);
    }
    let mut full = pf_core::FullMoments::new();
    for p in d {
        full.push(p[0], p[1]).unwrap();
    }
    let q = full.quadratic_check().unwrap();
    for (k, v) in [
        ("count", q.count),
        ("line_resid_ss", q.sse_line),
        ("quadratic_resid_ss", q.sse_quadratic),
        ("line_resid_sd", q.sd_line),
        ("quadratic_resid_sd", q.sd_quadratic),
        ("curvature", q.curvature),
        ("curvature_se", q.curvature_se),
        ("ss_drop", q.ds2),
        ("test_value", q.test_value),
        ("p_value", q.p_value()),
    ] {
        o.f(&format!("calib.quad.{k}"), v);
    }
    // Replicate levels: 8 nominal x values, 8 readings each (invented).
    let mut lv = FixedLevels::<32>::new();
    let mut la = pf_core::LeanMoments::new();
    for (i, p) in d.iter().take(64).enumerate() {
        let x = 1000.0 + 10.0 * (i % 8) as f64;
        let y = 3.7 - 0.42 * x + (p[1] - (3.7 - 0.42 * p[0]));
        lv.push(x, y).unwrap();
        la.push(x, y).unwrap();
    }
    let r = lv.lack_of_fit_line(&la.fit().unwrap()).unwrap();
    o.n("calib.lof.count", r.count);
    o.n("calib.lof.levels", r.levels as u64);
    o.n("calib.lof.params", r.params as u64);
    o.f("calib.lof.lack_ss", r.ss_lack_of_fit);
    o.n("calib.lof.lack_df", r.df_lack_of_fit);
    o.f("calib.lof.pure_ss", r.ss_pure_error);
    o.n("calib.lof.pure_df", r.df_pure_error);
    o.f("calib.lof.f_stat", r.f_stat);
    o.f("calib.lof.f_p", r.p_value());
}

/// Diagnostics scenarios, in the order `tests/c/test_line.c` runs them.
fn diag_scenarios(o: &mut Out, d: &[[f64; 3]]) {
    let mut full = pf_core::FullMoments::new();
    for p in d {
        full.push(p[0], p[1]).unwrap();
    }
    let c = pf_core::diag::stream_checks(&full).unwrap();
    let (s, r) = (c.shape, c.serial);
    o.n("diag.stream.count", s.count);
    for (k, v) in [
        ("resid_mean", s.residual_mean),
        ("resid_sq_sum", s.sum_sq),
        ("resid_cube_sum", s.sum_cube),
        ("resid_fourth_sum", s.sum_fourth),
        ("resid_sq_dx_sum", s.sum_sq_dx),
        ("skewness", s.skewness),
        ("kurtosis", s.kurtosis),
        ("jarque_bera", s.jarque_bera),
        ("jarque_bera_p", s.jarque_bera_p),
        ("spread_stat", s.spread_lm),
        ("spread_p", s.spread_lm_p),
        ("spread_stat_studentized", s.spread_lm_studentized),
        ("spread_p_studentized", s.spread_lm_studentized_p),
        ("durbin_watson", r.durbin_watson),
        ("lag1_autocorrelation", r.lag1_autocorrelation),
        ("serial_p_low", r.p_positive_low),
        ("serial_p_high", r.p_positive_high),
    ] {
        o.f(&format!("diag.stream.{k}"), v);
    }
    let n = 50;
    let xs: Vec<f64> = d[..n].iter().map(|p| p[0]).collect();
    let ys: Vec<f64> = d[..n].iter().map(|p| p[1]).collect();
    let mut acc = pf_core::LeanMoments::new();
    acc.extend(&xs, &ys).unwrap();
    let f = acc.fit().unwrap();
    let mut res = vec![0.0; n];
    pf_core::diag::residuals_into(&xs, &ys, &f, &mut res).unwrap();
    for (k, v) in res.iter().enumerate() {
        o.f(&format!("diag.resid{k}"), *v);
    }
    let mut inf = vec![pf_core::diag::PointInfluence::default(); n];
    pf_core::diag::influence_into(&xs, &ys, &f, &mut inf).unwrap();
    for (k, p) in inf.iter().enumerate() {
        o.f(&format!("diag.inf{k}.leverage"), p.leverage);
        o.f(&format!("diag.inf{k}.deleted_t"), p.deleted_t);
        o.f(&format!("diag.inf{k}.cooks_distance"), p.cooks_distance);
        o.n(&format!("diag.inf{k}.flags"), p.flags as u64);
    }
    let sw = pf_core::diag::shapiro_wilk(&res).unwrap();
    o.f("diag.sw.statistic", sw.w);
    o.f("diag.sw.p_value", sw.p_value);
    let ad = pf_core::diag::anderson_darling(&res).unwrap();
    o.f("diag.ad.statistic", ad.a2);
    o.f("diag.ad.statistic_modified", ad.a2_modified);
    o.f("diag.ad.p_value", ad.p_value);
}

/// Saved state bytes, as 8-byte little-endian words (the last one padded
/// with zeros), in the order `tests/c/test_line.c` saves them.
fn state_scenarios(o: &mut Out, d: &[[f64; 3]]) {
    let mut words = |name: &str, b: &[u8]| {
        o.n(&format!("{name}.len"), b.len() as u64);
        for (k, c) in b.chunks(8).enumerate() {
            let mut w = [0u8; 8];
            w[..c.len()].copy_from_slice(c);
            o.n(&format!("{name}.w{k}"), u64::from_le_bytes(w));
        }
    };
    let mut lean = pf_core::LeanMoments::new();
    let mut full = pf_core::FullMoments::new();
    let mut model = ModelMoments::new(3).unwrap();
    for p in d.iter().take(100) {
        lean.push_weighted(p[0], p[1], p[2]).unwrap();
        full.push(p[0], p[1]).unwrap();
        model.push_powers(p[0], p[1], 1.0).unwrap();
    }
    words("state.lean", &lean.save_to_vec());
    words("state.full", &full.save_to_vec());
    words("state.model", &model.save_to_vec());
    // Replicate levels (8 nominal x values, weighted readings; invented):
    // the heap store and the fixed store give the same bytes.
    let mut fixed = FixedLevels::<32>::new();
    let mut set = pf_core::calib::LevelSet::new();
    for (i, p) in d.iter().take(100).enumerate() {
        let x = 1000.0 + 10.0 * (i % 8) as f64;
        fixed.push_weighted(x, p[1], p[2]).unwrap();
        set.push_weighted(x, p[1], p[2]).unwrap();
    }
    let mut b = vec![0u8; fixed.encoded_len()];
    fixed.save_into(&mut b).unwrap();
    assert_eq!(set.save_to_vec().unwrap(), b);
    words("state.levels", &b);
}

fn main() {
    let d = data(1000);
    let mut o = Out(Vec::new());
    scenario::<Lean>(&mut o, "lean", &d);
    scenario::<Full>(&mut o, "full", &d);
    let mut full = pf_core::FullMoments::new();
    for p in &d {
        full.push(p[0], p[1]).unwrap();
    }
    let (lo, hi) = full.x_range().unwrap();
    o.f("full.x_range.min", lo);
    o.f("full.x_range.max", hi);
    let (lo, hi) = full.y_range().unwrap();
    o.f("full.y_range.min", lo);
    o.f("full.y_range.max", hi);
    model_scenarios(&mut o, &d);
    calib_scenarios(&mut o, &d);
    state_scenarios(&mut o, &d);
    diag_scenarios(&mut o, &d);

    println!("data {}", d.len());
    for p in &d {
        println!("{} {} {}", bits(p[0]), bits(p[1]), bits(p[2]));
    }
    for l in &o.0 {
        println!("{l}");
    }
}
