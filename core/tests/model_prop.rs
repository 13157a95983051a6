//! Property: splitting the rows at random points into several accumulators
//! and merging them gives the same fit as pushing every row in order.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly
#![allow(clippy::needless_range_loop)] // indices pair each coefficient with its reference

use plumbfit::model::{ModelFitOptions, ModelMoments};
use proptest::prelude::*;

/// Both paths are backward stable at double-double precision (~1e-30);
/// designs here have condition below ~1e4, so the rounded double results
/// agree to within a few ulps. 1e-11 relative leaves three orders of
/// margin for the worst generated cases.
const REL: f64 = 1e-11;

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= REL * a.abs().max(b.abs()) + 1e-300
}

prop_compose! {
    fn problem()(p in 1usize..=6, n in 8usize..200)
        (rows in prop::collection::vec(prop::collection::vec(-100.0f64..100.0, p), n),
         noise in prop::collection::vec(-1.0f64..1.0, n),
         weights in prop::collection::vec(0.1f64..10.0, n),
         cuts in prop::collection::vec(0usize..n, 0..5),
         p in Just(p))
        -> (usize, Vec<f64>, Vec<f64>, Vec<f64>, Vec<usize>)
    {
        let mut flat = Vec::new();
        let mut ys = Vec::new();
        for (r, e) in rows.iter().zip(&noise) {
            let mut y = *e;
            for (j, v) in r.iter().enumerate() {
                y += (j as f64 - 1.5) * v;
            }
            flat.extend_from_slice(r);
            ys.push(y);
        }
        (p, flat, ys, weights, cuts)
    }
}

proptest! {
    #[test]
    fn split_and_merge_equals_sequential((p, rows, ys, ws, mut cuts) in problem()) {
        let n = ys.len();
        let mut seq = ModelMoments::new(p).unwrap();
        for i in 0..n {
            seq.push_row_weighted(&rows[i * p..(i + 1) * p], ys[i], ws[i]).unwrap();
        }
        cuts.push(0);
        cuts.push(n);
        cuts.sort_unstable();
        let mut total = ModelMoments::new(p).unwrap();
        for w in cuts.windows(2) {
            let (a, b) = (w[0], w[1]);
            if a == b {
                continue; // an empty block is refused (code 4)
            }
            let mut part = ModelMoments::new(p).unwrap();
            part.extend_rows_weighted(&rows[a * p..b * p], &ys[a..b], &ws[a..b]).unwrap();
            total.merge(&part).unwrap();
        }
        prop_assert_eq!(total.count(), n as u64);
        let opts = ModelFitOptions::default();
        let (f1, f2) = (seq.fit(&opts), total.fit(&opts));
        match (f1, f2) {
            (Ok(a), Ok(b)) => {
                for j in 0..p {
                    prop_assert!(close(a.coefficients[j], b.coefficients[j]), "coef {} {} {}", j, a.coefficients[j], b.coefficients[j]);
                    prop_assert!(close(a.std_errors[j], b.std_errors[j]), "se {}", j);
                }
                prop_assert!(close(a.sse, b.sse), "sse {} {}", a.sse, b.sse);
                prop_assert!(close(a.weight_sum, b.weight_sum));
            }
            (a, b) => prop_assert_eq!(a.err(), b.err()),
        }
    }
}

/// Exact least squares of small integer data in rationals: `Err(j)` names
/// the first column that depends on earlier ones, else the coefficients.
fn exact_solution(rows: &[i32], ys: &[i32], p: usize) -> Result<Vec<f64>, usize> {
    use num_rational::BigRational;
    use num_traits::{ToPrimitive, Zero};
    let q = |v: i32| BigRational::from_integer(v.into());
    let mut a = vec![vec![BigRational::zero(); p + 1]; p];
    for (r, y) in rows.chunks_exact(p).zip(ys) {
        for i in 0..p {
            for j in 0..p {
                a[i][j] += q(r[i] * r[j]);
            }
            a[i][p] += q(r[i] * y);
        }
    }
    // Elimination in column order without pivoting: a zero pivot at step j
    // means column j lies in the span of columns 0..j.
    for col in 0..p {
        if a[col][col].is_zero() {
            return Err(col);
        }
        let pivot = a[col].clone();
        for (r, row) in a.iter_mut().enumerate() {
            if r != col && !row[col].is_zero() {
                let f = &row[col] / &pivot[col];
                for (t, pv) in row[col..].iter_mut().zip(&pivot[col..]) {
                    *t -= &f * pv;
                }
            }
        }
    }
    Ok((0..p)
        .map(|i| (&a[i][p] / &a[i][i]).to_f64().unwrap())
        .collect())
}

proptest! {
    /// Small integer regressors make early rows collinear (or the whole
    /// design deficient) often: the regime where a rotation meets a nearly
    /// empty factor row. Sequential pushes and a three-way split-and-merge
    /// must both match the exact rational solution, or name the same
    /// dependent column.
    #[test]
    fn integer_designs_match_exact_solution(
        p in 2usize..=4,
        data in prop::collection::vec((prop::collection::vec(-3i32..=3, 4), -20i32..=20), 6..40),
        cut1 in 0usize..40,
        cut2 in 0usize..40,
    ) {
        let n = data.len();
        let mut rows = Vec::new();
        let mut ys = Vec::new();
        for (r, y) in &data {
            rows.extend_from_slice(&r[..p]);
            ys.push(*y);
        }
        let rf: Vec<f64> = rows.iter().map(|&v| f64::from(v)).collect();
        let yf: Vec<f64> = ys.iter().map(|&v| f64::from(v)).collect();
        let mut seq = ModelMoments::new(p).unwrap();
        for (r, y) in rf.chunks_exact(p).zip(&yf) {
            seq.push_row(r, *y).unwrap();
        }
        let (c1, c2) = (cut1.min(n).min(cut2.min(n)), cut1.min(n).max(cut2.min(n)));
        let mut merged = ModelMoments::new(p).unwrap();
        for (a, b) in [(0, c1), (c1, c2), (c2, n)] {
            let mut part = ModelMoments::new(p).unwrap();
            for i in a..b {
                part.push_row(&rf[i * p..(i + 1) * p], yf[i]).unwrap();
            }
            merged.merge(&part).unwrap();
        }
        let opts = ModelFitOptions::default();
        let exact = exact_solution(&rows, &ys, p);
        for acc in [&seq, &merged] {
            match (&exact, acc.fit(&opts)) {
                (Ok(beta), Ok(fit)) => {
                    // Integer designs here have condition below ~1e4 and the
                    // factor carries ~30 digits: agreement to 1e-12 of the
                    // largest coefficient leaves a wide margin.
                    let scale = beta.iter().fold(1.0f64, |m, b| m.max(b.abs()));
                    for j in 0..p {
                        prop_assert!((fit.coefficients[j] - beta[j]).abs() <= 1e-12 * scale,
                            "coef {} got {} exact {}", j, fit.coefficients[j], beta[j]);
                    }
                }
                (Err(col), Err(e)) if n > p => {
                    prop_assert_eq!(e, plumbfit::model::ModelError::RankDeficient { column: *col });
                }
                (Err(_), Err(_)) => {}
                (ex, got) => prop_assert!(false, "exact {:?} but fit {:?}", ex, got.map(|f| f.coefficients)),
            }
        }
    }
}
