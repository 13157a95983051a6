//! Throughput probe for the model accumulator (not a timed test: it only
//! prints figures). Run in release:
//! `cargo test --release -p plumbfit --test model_speed -- --ignored --nocapture`
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

use plumbfit::model::ModelMoments;
use std::time::Instant;

/// CPU time of this thread in seconds (Linux schedstat; `None` elsewhere).
/// The machine is shared, so CPU time is the fairer figure; wall time is
/// printed beside it.
fn thread_cpu() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    let ns: f64 = s.split_whitespace().next()?.parse().ok()?;
    Some(ns * 1e-9)
}

/// Runs `f`, returning (wall seconds, CPU seconds or wall if unknown).
fn timed(mut f: impl FnMut()) -> (f64, f64) {
    let c0 = thread_cpu();
    let t = Instant::now();
    f();
    let wall = t.elapsed().as_secs_f64();
    let cpu = match (c0, thread_cpu()) {
        (Some(a), Some(b)) => b - a,
        _ => wall,
    };
    (wall, cpu)
}

/// Fixed-seed linear congruential generator: reproducible data without a
/// random-number dependency.
fn lcg(state: &mut u64) -> f64 {
    *state = state
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
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
        let mut block = (f64::INFINITY, f64::INFINITY);
        let mut single = (f64::INFINITY, f64::INFINITY);
        for _ in 0..3 {
            let mut acc = ModelMoments::new(p).unwrap();
            let (w, c) = timed(|| acc.extend_rows(&rows, &ys).unwrap());
            block = (block.0.min(w), block.1.min(c));
            assert_eq!(acc.count(), n as u64);
            let mut acc = ModelMoments::new(p).unwrap();
            let (w, c) = timed(|| {
                for (r, y) in rows.chunks_exact(p).zip(&ys) {
                    acc.push_row(r, *y).unwrap();
                }
            });
            single = (single.0.min(w), single.1.min(c));
            assert_eq!(acc.count(), n as u64);
        }
        let rate = |t: f64| n as f64 / t / 1e6;
        eprintln!(
            "p = {p:2}: extend_rows {:6.2} Mrows/s cpu ({:5.0} ns/row; wall {:6.2}), push_row {:6.2} Mrows/s cpu (wall {:6.2})",
            rate(block.1),
            block.1 / n as f64 * 1e9,
            rate(block.0),
            rate(single.1),
            rate(single.0),
        );
    }
}
