//! Property: splitting the rows at random points into several accumulators
//! and merging them gives the same fit as pushing every row in order.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

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
