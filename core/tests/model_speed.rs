//! Throughput probe for the model accumulator (not a timed test: it only
//! prints figures). Run in release:
//! `cargo test --release -p plumbfit --test model_speed -- --ignored --nocapture`

use plumbfit::model::ModelMoments;
use std::time::Instant;

/// Fixed-seed linear congruential generator: reproducible data without a
/// random-number dependency.
fn lcg(state: &mut u64) -> f64 {
    *state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
    (*state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
}

fn data(n: usize, p: usize) -> (Vec<f64>, Vec<f64>) {
    let mut s = 42u64;
    let mut rows = Vec::with_capacity(n * p);
    let mut ys = Vec::with_capacity(n);
    for _ in 0..n {
        let mut y = 0.0;
        for j in 0..p {
            let v = if j == 0 { 1.0 } else { lcg(&mut s) * 10.0 };
            y += (j as f64 + 1.0) * v;
            rows.push(v);
        }
        ys.push(y + lcg(&mut s));
    }
    (rows, ys)
}

#[test]
#[ignore = "throughput probe; run in release with --ignored --nocapture"]
fn model_throughput() {
    let n = 1_000_000;
    for p in [2usize, 4, 8, 12, 16] {
        let (rows, ys) = data(n, p);
        let mut best_block = f64::INFINITY;
        let mut best_row = f64::INFINITY;
        for _ in 0..3 {
            let mut acc = ModelMoments::new(p).unwrap();
            let t = Instant::now();
            acc.extend_rows(&rows, &ys).unwrap();
            best_block = best_block.min(t.elapsed().as_secs_f64());
            assert_eq!(acc.count(), n as u64);
            let mut acc = ModelMoments::new(p).unwrap();
            let t = Instant::now();
            for (r, y) in rows.chunks_exact(p).zip(&ys) {
                acc.push_row(r, *y).unwrap();
            }
            best_row = best_row.min(t.elapsed().as_secs_f64());
            assert_eq!(acc.count(), n as u64);
        }
        eprintln!(
            "p = {p:2}: extend_rows {:6.2} Mrows/s ({:5.0} ns/row), push_row {:6.2} Mrows/s ({:5.0} ns/row)",
            n as f64 / best_block / 1e6,
            best_block / n as f64 * 1e9,
            n as f64 / best_row / 1e6,
            best_row / n as f64 * 1e9
        );
    }
}
