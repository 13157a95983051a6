//! Reference checks: fits the published reference cases (NIST StRD linear
//! regression datasets) with plumbfit and scores every certified value by
//! its log relative error (LRE, McCullough 1998).
//!
//! The data are read from `$PLUMBFIT_REFDATA` (default: `shared/reference-data`
//! beside the repository); they are never copied into the repository.

use plumbfit::{FitOptions, LeanMoments, LineFit};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::PathBuf;

pub mod models;
pub mod strd;

pub use models::{run_model_checks, MODEL_DATASETS};

/// Digits printed in the certified values: the LRE cap.
pub const LRE_CAP: f64 = 15.0;

/// Environment variable naming the reference-data folder.
pub const REFDATA_ENV: &str = "PLUMBFIT_REFDATA";

/// The reference-data folder: `$PLUMBFIT_REFDATA`, or `../shared/reference-data`
/// relative to the repository root.
pub fn refdata_dir() -> PathBuf {
    match std::env::var_os(REFDATA_ENV) {
        Some(p) => PathBuf::from(p),
        None => PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../shared/reference-data"),
    }
}

/// Whether we run under CI (`CI=true`), where missing data is a failure.
pub fn under_ci() -> bool {
    std::env::var("CI").map(|v| v == "true").unwrap_or(false)
}

/// Log relative error of `computed` against `certified`, capped at
/// [`LRE_CAP`]; for a certified zero, `−log10|computed|` (McCullough 1998).
/// A non-finite computed value scores 0.
pub fn lre(computed: f64, certified: f64) -> f64 {
    if !computed.is_finite() {
        return if computed == certified { LRE_CAP } else { 0.0 };
    }
    let e = if certified == 0.0 {
        computed.abs()
    } else {
        (computed - certified).abs() / certified.abs()
    };
    if e == 0.0 {
        LRE_CAP
    } else {
        (-e.log10()).clamp(0.0, LRE_CAP)
    }
}

/// Scores of one fit: value name → LRE.
pub type Scores = BTreeMap<String, f64>;

/// All scores: dataset → order → value → LRE.
pub type Report = BTreeMap<String, BTreeMap<String, Scores>>;

/// The three orders every dataset is run in.
pub const ORDERS: [&str; 3] = ["file", "reversed", "merged3"];

/// Scores a fit's certified values (coefficients listed as `[B0, B1]` or `[B1]`).
pub fn score(
    cert: &Value,
    beta: &[f64],
    sd: &[f64],
    anova: &[(&str, f64)],
    rsd: f64,
    r2: f64,
) -> Scores {
    let c = &cert["certified"];
    let mut s = Scores::new();
    let num = |v: &Value| v.as_f64();
    if let Some(b) = c["beta"].as_array() {
        for (i, v) in b.iter().enumerate() {
            if let (Some(cv), Some(got)) = (num(v), beta.get(i)) {
                s.insert(format!("beta{i}"), lre(*got, cv));
            }
        }
    }
    if let Some(b) = c["sd_beta"].as_array() {
        for (i, v) in b.iter().enumerate() {
            if let (Some(cv), Some(got)) = (num(v), sd.get(i)) {
                s.insert(format!("sd_beta{i}"), lre(*got, cv));
            }
        }
    }
    if let Some(cv) = num(&c["residual_sd"]) {
        s.insert("residual_sd".into(), lre(rsd, cv));
    }
    if let Some(cv) = num(&c["r_squared"]) {
        s.insert("r_squared".into(), lre(r2, cv));
    }
    for (name, got) in anova {
        let cv = &c["anova"][*name];
        match num(cv) {
            Some(cv) => {
                s.insert((*name).into(), lre(*got, cv));
            }
            // Certified "Infinity" (exact fits) is stored as null.
            None if cv.is_null() && *name == "f" => {
                s.insert(
                    "f".into(),
                    if got.is_infinite() && *got > 0.0 {
                        LRE_CAP
                    } else {
                        0.0
                    },
                );
            }
            None => {}
        }
    }
    s
}

/// Pushes the rows of a straight-line dataset into a line accumulator in
/// the given order (`file`, `reversed`, or `merged3`: three accumulators
/// over consecutive thirds, merged).
pub fn line_accumulate(xs: &[f64], ys: &[f64], order: &str) -> Result<LeanMoments, String> {
    let n = xs.len();
    match order {
        "reversed" => {
            let mut acc = LeanMoments::new();
            for i in (0..n).rev() {
                acc.push(xs[i], ys[i]).map_err(|e| e.to_string())?;
            }
            Ok(acc)
        }
        "merged3" => {
            let cuts = [0, n / 3, 2 * n / 3, n];
            let mut parts = Vec::new();
            for k in 0..3 {
                let mut a = LeanMoments::new();
                if cuts[k + 1] > cuts[k] {
                    a.extend(&xs[cuts[k]..cuts[k + 1]], &ys[cuts[k]..cuts[k + 1]])
                        .map_err(|e| e.to_string())?;
                }
                parts.push(a);
            }
            let mut acc = parts[0];
            acc.merge(&parts[1]).map_err(|e| e.to_string())?;
            acc.merge(&parts[2]).map_err(|e| e.to_string())?;
            Ok(acc)
        }
        _ => {
            let mut acc = LeanMoments::new();
            for i in 0..n {
                acc.push(xs[i], ys[i]).map_err(|e| e.to_string())?;
            }
            Ok(acc)
        }
    }
}

/// Scores a line fit against a dataset's certified values.
pub fn score_line(cert: &Value, fit: &LineFit) -> Scores {
    let a = fit.anova();
    let (beta, sd): (Vec<f64>, Vec<f64>) = if fit.through_origin {
        (vec![fit.slope], vec![fit.se_slope])
    } else {
        (
            vec![fit.intercept, fit.slope],
            vec![fit.se_intercept, fit.se_slope],
        )
    };
    let anova = [
        ("df_reg", a.df_model),
        ("ss_reg", a.ss_model),
        ("ms_reg", a.ms_model),
        ("f", a.f_stat),
        ("df_res", a.df_resid),
        ("ss_res", a.ss_resid),
        ("ms_res", a.ms_resid),
    ];
    score(cert, &beta, &sd, &anova, fit.residual_sd, fit.r_squared)
}

/// Datasets fitted with the line accumulator.
pub const LINE_DATASETS: [&str; 3] = ["Norris", "NoInt1", "NoInt2"];

/// Runs the line-accumulator checks; `Err` names what could not be read.
pub fn run_line_checks(report: &mut Report) -> Result<(), String> {
    let dir = refdata_dir().join("nist-strd");
    let cert = strd::load_certified(&dir)?;
    for name in LINE_DATASETS {
        let data = strd::load_dataset(&dir, name)?;
        let c = &cert[name];
        let origin = !c["intercept"].as_bool().unwrap_or(true);
        let opts = if origin {
            FitOptions::through_origin()
        } else {
            FitOptions::default()
        };
        let xs: Vec<f64> = data.rows.iter().map(|r| r[1]).collect();
        let ys: Vec<f64> = data.rows.iter().map(|r| r[0]).collect();
        for order in ORDERS {
            let acc = line_accumulate(&xs, &ys, order)?;
            let scores = match acc.fit_with(&opts) {
                Ok(fit) => score_line(c, &fit),
                Err(e) => {
                    let mut s = Scores::new();
                    s.insert(format!("error: {e}"), 0.0);
                    s
                }
            };
            report
                .entry(format!("{name}/line"))
                .or_default()
                .insert(order.to_string(), scores);
        }
    }
    Ok(())
}

/// Smallest LRE in a report (the cap when the report is empty).
pub fn min_lre(report: &Report) -> f64 {
    report
        .values()
        .flat_map(|o| o.values())
        .flat_map(|s| s.values())
        .fold(LRE_CAP, |m, v| m.min(*v))
}

/// Runs every reference check into `report`.
pub fn run_all(report: &mut Report) -> Result<(), String> {
    run_line_checks(report)?;
    run_model_checks(report)?;
    Ok(())
}
