//! Model-accumulator checks: all 11 NIST StRD linear datasets fitted with
//! [`plumbfit::model::ModelMoments`] (streaming double-double Givens).

use crate::{score, strd, Report, Scores, ORDERS};
use plumbfit::model::{InterceptMode, ModelFitOptions, ModelMoments};
use serde_json::Value;
use std::path::Path;

/// Every NIST StRD linear-regression dataset.
pub const MODEL_DATASETS: [&str; 11] = [
    "Norris", "Pontius", "NoInt1", "NoInt2", "Filip", "Longley", "Wampler1", "Wampler2",
    "Wampler3", "Wampler4", "Wampler5",
];

/// How one dataset's rows become regressor rows.
struct Spec {
    p: usize,
    intercept: bool,
    /// Polynomial in column 1 (powers formed in double-double by the
    /// accumulator) rather than a multilinear model on columns 1..
    polynomial: bool,
}

fn spec(c: &Value) -> Result<Spec, String> {
    let p = c["p"].as_u64().ok_or("CERTIFIED.json: missing p")? as usize;
    let intercept = c["intercept"].as_bool().unwrap_or(true);
    let polynomial = c["model"].as_str() == Some("polynomial");
    Ok(Spec {
        p,
        intercept,
        polynomial,
    })
}

fn push(acc: &mut ModelMoments, s: &Spec, row: &[f64]) -> Result<(), String> {
    let y = row[0];
    let r = if s.polynomial && s.intercept {
        return acc.push_powers(row[1], y, 1.0).map_err(|e| e.to_string());
    } else if s.polynomial {
        // No intercept: the powers x¹ … x^p.
        let mut v = Vec::with_capacity(s.p);
        let mut t = row[1];
        for _ in 0..s.p {
            v.push(t);
            t *= row[1];
        }
        v
    } else {
        let mut v = Vec::with_capacity(s.p);
        if s.intercept {
            v.push(1.0);
        }
        v.extend_from_slice(&row[1..]);
        v
    };
    acc.push_row(&r, y).map_err(|e| e.to_string())
}

fn accumulate(rows: &[Vec<f64>], s: &Spec, order: &str) -> Result<ModelMoments, String> {
    let new = || ModelMoments::new(s.p).map_err(|e| e.to_string());
    let n = rows.len();
    match order {
        "reversed" => {
            let mut a = new()?;
            for r in rows.iter().rev() {
                push(&mut a, s, r)?;
            }
            Ok(a)
        }
        "merged3" => {
            let cuts = [0, n / 3, 2 * n / 3, n];
            let mut parts = Vec::new();
            for k in 0..3 {
                let mut a = new()?;
                for r in &rows[cuts[k]..cuts[k + 1]] {
                    push(&mut a, s, r)?;
                }
                parts.push(a);
            }
            let mut a = parts.remove(0);
            for b in &parts {
                a.merge(b).map_err(|e| e.to_string())?;
            }
            Ok(a)
        }
        _ => {
            let mut a = new()?;
            for r in rows {
                push(&mut a, s, r)?;
            }
            Ok(a)
        }
    }
}

fn fit_scores(acc: &ModelMoments, s: &Spec, cert: &Value) -> Scores {
    let mode = if s.intercept {
        InterceptMode::Column0
    } else {
        InterceptMode::None
    };
    match acc.fit(&ModelFitOptions::with_intercept(mode)) {
        Ok(f) => {
            let nan = f64::NAN;
            let anova = [
                ("df_reg", f.df_model as f64),
                ("ss_reg", f.ss_model),
                ("ms_reg", f.ms_model.unwrap_or(nan)),
                ("f", f.f_stat.unwrap_or(nan)),
                ("df_res", f.df_resid as f64),
                ("ss_res", f.sse),
                ("ms_res", f.ms_resid),
            ];
            score(
                cert,
                &f.coefficients,
                &f.std_errors,
                &anova,
                f.residual_sd,
                f.r_squared.unwrap_or(nan),
            )
        }
        Err(e) => {
            let mut sc = Scores::new();
            sc.insert(format!("error: {e}"), 0.0);
            sc
        }
    }
}

/// Runs the model-accumulator checks on every dataset in every order.
pub fn run_model_checks(report: &mut Report) -> Result<(), String> {
    let dir: &Path = &crate::refdata_dir().join("nist-strd");
    let cert = strd::load_certified(dir)?;
    for name in MODEL_DATASETS {
        let c = &cert[name];
        let s = spec(c)?;
        let data = strd::load_dataset(dir, name)?;
        for order in ORDERS {
            let scores = match accumulate(&data.rows, &s, order) {
                Ok(acc) => fit_scores(&acc, &s, c),
                Err(e) => {
                    let mut sc = Scores::new();
                    sc.insert(format!("error: {e}"), 0.0);
                    sc
                }
            };
            report
                .entry(name.to_string())
                .or_default()
                .insert(order.to_string(), scores);
        }
    }
    Ok(())
}
