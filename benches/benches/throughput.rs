//! Criterion benches: push (both tiers, and lean through a feed), extend (both tiers) at n = 10³…10⁷,
//! merge, and the model accumulator for p = 2, 4, 8, 12. Each extend group
//! also measures every plain read loop at the same n (the read ceiling is
//! the fastest of them), so criterion's throughput figures can be read as
//! ratios. For a one-screen table use the
//! `speed-report` binary instead.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use plumbfit::model::ModelMoments;
use plumbfit::{FullMoments, LeanMoments, PairMoments, Tier};
use plumbfit_benches::{model_rows, offset_pairs, read_ceiling, read_loops};
use std::hint::black_box;

fn extend<T: Tier>(xs: &[f64], ys: &[f64]) -> PairMoments<T> {
    let mut a = PairMoments::<T>::new();
    let ok = a.extend(xs, ys).is_ok();
    assert!(ok, "extend refused benchmark data");
    a
}

fn bench_extend(c: &mut Criterion) {
    let mut g = c.benchmark_group("extend");
    g.sample_size(20);
    for n in [1_000usize, 10_000, 100_000, 1_000_000, 10_000_000] {
        let (xs, ys) = offset_pairs(n, 7);
        g.throughput(Throughput::Elements(n as u64));
        // The read ceiling is the fastest of these plain read loops.
        for l in read_loops() {
            let id = format!("read_ceiling/{}", l.name);
            g.bench_with_input(BenchmarkId::new(id, n), &n, |b, _| {
                b.iter(|| (l.run)(black_box(&xs), black_box(&ys)))
            });
        }
        g.bench_with_input(BenchmarkId::new("lean", n), &n, |b, _| {
            b.iter(|| extend::<plumbfit::Lean>(black_box(&xs), black_box(&ys)))
        });
        g.bench_with_input(BenchmarkId::new("full", n), &n, |b, _| {
            b.iter(|| extend::<plumbfit::Full>(black_box(&xs), black_box(&ys)))
        });
    }
    g.finish();
}

fn push_all<T: Tier>(xs: &[f64], ys: &[f64]) -> PairMoments<T> {
    let mut a = PairMoments::<T>::new();
    for (&x, &y) in xs.iter().zip(ys) {
        let ok = a.push(x, y).is_ok();
        assert!(ok, "push refused benchmark data");
    }
    a
}

fn feed_all(xs: &[f64], ys: &[f64]) -> LeanMoments {
    let mut a = LeanMoments::new();
    {
        let mut feed = a.feed();
        for (&x, &y) in xs.iter().zip(ys) {
            let ok = feed.push(x, y).is_ok();
            assert!(ok, "feed refused benchmark data");
        }
    }
    a
}

fn bench_push(c: &mut Criterion) {
    let mut g = c.benchmark_group("push");
    let n = 100_000;
    let (xs, ys) = offset_pairs(n, 9);
    g.throughput(Throughput::Elements(n as u64));
    g.bench_function("read_ceiling", |b| {
        b.iter(|| read_ceiling(black_box(&xs), black_box(&ys)))
    });
    g.bench_function("lean", |b| {
        b.iter(|| push_all::<plumbfit::Lean>(black_box(&xs), black_box(&ys)))
    });
    g.bench_function("lean_feed", |b| {
        b.iter(|| feed_all(black_box(&xs), black_box(&ys)))
    });
    g.bench_function("full", |b| {
        b.iter(|| push_all::<plumbfit::Full>(black_box(&xs), black_box(&ys)))
    });
    g.finish();
}

fn bench_merge(c: &mut Criterion) {
    let mut g = c.benchmark_group("merge");
    let (xs, ys) = offset_pairs(2_000, 11);
    let la: LeanMoments = extend(&xs[..1000], &ys[..1000]);
    let lb: LeanMoments = extend(&xs[1000..], &ys[1000..]);
    let fa: FullMoments = extend(&xs[..1000], &ys[..1000]);
    let fb: FullMoments = extend(&xs[1000..], &ys[1000..]);
    g.bench_function("lean", |b| {
        b.iter(|| {
            let mut t = black_box(la);
            t.merge(black_box(&lb)).is_ok()
        })
    });
    g.bench_function("full", |b| {
        b.iter(|| {
            let mut t = black_box(fa);
            t.merge(black_box(&fb)).is_ok()
        })
    });
    g.finish();
}

fn bench_model(c: &mut Criterion) {
    let mut g = c.benchmark_group("model_rows");
    g.sample_size(10);
    let n = 100_000;
    for p in [2usize, 4, 8, 12] {
        let (rows, ys) = model_rows(n, p, 3 + p as u64);
        g.throughput(Throughput::Elements(n as u64));
        g.bench_with_input(BenchmarkId::from_parameter(p), &p, |b, &p| {
            b.iter(|| {
                let m = ModelMoments::new(p).and_then(|mut m| {
                    m.extend_rows(black_box(&rows), black_box(&ys))?;
                    Ok(m)
                });
                assert!(m.is_ok(), "model accumulator refused benchmark data");
                m
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench_extend, bench_push, bench_merge, bench_model);
criterion_main!(benches);
