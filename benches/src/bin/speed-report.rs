//! One-run speed report: every figure beside the read ceiling measured in
//! the same run, so the ratios hold even on a busy machine.
//!
//! `cargo run --release -p plumbfit-benches --bin speed-report [-- --quick] [-- --only push]`
//!
//! `--quick` shortens every measurement (a smoke run); `--only NAME` runs
//! one section (`extend`, `push`, `merge`, `model`) beside the ceiling.
//!
//! The read ceiling at each size is the fastest of the plain read loops of
//! `plumbfit_benches::read_loops`, timed in the same interleaved rounds as
//! the kernels; the report names the loop that won. When the AVX-512
//! kernels are selected, the extend section also times lean and full
//! extend with the AVX kernels (capped through `plumbfit_kernels::
//! limit_kernels`) and prints the gain. `PLUMBFIT_KERNELS=avx` (or
//! `scalar`) runs the whole report on that path.

use plumbfit::model::ModelMoments;
use plumbfit::{FullMoments, LeanMoments, PairMoments, Tier};
use plumbfit_benches::{
    ceiling_rate, interleaved_best, load_average, model_rows, offset_pairs, rate, ratio_cell,
    read_loops,
};
use plumbfit_kernels::{limit_kernels, selected, KernelSet};
use std::hint::black_box;

struct Row {
    what: String,
    n: usize,
    rate: f64,
    unit: &'static str,
    ratio: Option<f64>,
}

fn extend_once<T: Tier>(xs: &[f64], ys: &[f64]) -> bool {
    let mut a = PairMoments::<T>::new();
    let ok = a.extend(black_box(xs), black_box(ys)).is_ok();
    black_box(&a);
    ok
}

/// [`extend_once`] with the kernel set capped at `cap` for the call (the
/// selection before is restored after it).
fn extend_capped<T: Tier>(cap: KernelSet, xs: &[f64], ys: &[f64]) -> bool {
    let before = selected();
    limit_kernels(Some(cap));
    let ok = extend_once::<T>(xs, ys);
    limit_kernels(Some(before));
    ok
}

// Both per-pair loops count refusals with a branch, as a caller's loop
// would (`if ... .is_err()`), so neither pays for an add of zero per pair.
fn push_all<T: Tier>(xs: &[f64], ys: &[f64]) -> usize {
    let mut a = PairMoments::<T>::new();
    let mut refused = 0usize;
    for (&x, &y) in black_box(xs).iter().zip(black_box(ys)) {
        if a.push(x, y).is_err() {
            refused += 1;
        }
    }
    black_box(&a);
    refused
}

/// Lean pushes through a feed (`LeanMoments::feed`), folded when it drops.
fn feed_all(xs: &[f64], ys: &[f64]) -> usize {
    let mut a = LeanMoments::new();
    let mut refused = 0usize;
    {
        let mut feed = a.feed();
        for (&x, &y) in black_box(xs).iter().zip(black_box(ys)) {
            if feed.push(x, y).is_err() {
                refused += 1;
            }
        }
    }
    black_box(&a);
    refused
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let quick = args.iter().any(|a| a == "--quick");
    let only = args
        .iter()
        .position(|a| a == "--only")
        .and_then(|i| args.get(i + 1).cloned());
    let on = |section: &str| only.as_deref().is_none_or(|o| o == section);
    let budget = if quick { 0.05 } else { 0.6 };
    let load0 = load_average().unwrap_or_else(|| "unknown".into());
    let mut rows: Vec<Row> = Vec::new();
    let mut failures = 0usize;
    let sizes: &[usize] = if quick {
        &[1_000, 100_000]
    } else {
        &[1_000, 10_000, 100_000, 1_000_000, 10_000_000]
    };
    let mut ceiling_at = Vec::new();
    let mut ceiling_loop = Vec::new();
    // With AVX-512 selected, the extend section also times the AVX kernels
    // (interleaved, same data) so the gain is measured in the same run.
    let compare_avx = selected() == KernelSet::Avx512 && KernelSet::Avx.supported();
    // Refused calls inside the timed closures (figures would be invalid).
    let refused = std::cell::Cell::new(0usize);
    let bump = |k: usize| refused.set(refused.get() + k);
    for &n in sizes {
        if !on("extend") && !on("push") {
            continue;
        }
        let (xs, ys) = offset_pairs(n, 7);
        // Pushes also at n = 1e5: one call (about 0.3 ms) then fits in a
        // scheduler slice on a busy machine, where a 1e6 call rarely does.
        let push_here = (n == 1_000_000 || n == 100_000) && on("push");
        let ws: Vec<f64> = (0..n).map(|i| 1.0 + (i % 3) as f64).collect();
        // The read ceiling: every plain read loop, the fastest counts.
        let loops = read_loops();
        let mut ceil_fs: Vec<Box<dyn FnMut()>> = loops
            .iter()
            .map(|l| {
                let (run, xs, ys) = (l.run, &xs, &ys);
                Box::new(move || {
                    black_box(run(black_box(xs), black_box(ys)));
                }) as Box<dyn FnMut()>
            })
            .collect();
        let mut lean_f = || bump(!extend_once::<plumbfit::Lean>(&xs, &ys) as usize);
        let mut full_f = || bump(!extend_once::<plumbfit::Full>(&xs, &ys) as usize);
        let mut lean_avx_f =
            || bump(!extend_capped::<plumbfit::Lean>(KernelSet::Avx, &xs, &ys) as usize);
        let mut full_avx_f =
            || bump(!extend_capped::<plumbfit::Full>(KernelSet::Avx, &xs, &ys) as usize);
        let mut names: Vec<&str> = Vec::new();
        let mut fs: Vec<&mut dyn FnMut()> = ceil_fs.iter_mut().map(|f| &mut **f as _).collect();
        let nc = fs.len();
        if on("extend") {
            names.extend(["lean extend", "full extend"]);
            fs.push(&mut lean_f);
            fs.push(&mut full_f);
            if compare_avx {
                names.extend(["lean extend, avx kernels", "full extend, avx kernels"]);
                fs.push(&mut lean_avx_f);
                fs.push(&mut full_avx_f);
            }
        }
        let mut weighted_f = || {
            let mut a = LeanMoments::new();
            bump(a.extend_weighted(&xs, &ys, &ws).is_err() as usize);
            black_box(&a);
        };
        let mut lean_push_f = || bump(push_all::<plumbfit::Lean>(&xs, &ys));
        let mut lean_feed_f = || bump(feed_all(&xs, &ys));
        let mut full_push_f = || bump(push_all::<plumbfit::Full>(&xs, &ys));
        if push_here {
            names.extend([
                "lean extend_weighted (scalar)",
                "lean push (per pair)",
                "lean feed push (per pair)",
                "full push (per pair)",
            ]);
            fs.push(&mut weighted_f);
            fs.push(&mut lean_push_f);
            fs.push(&mut lean_feed_f);
            fs.push(&mut full_push_f);
        }
        if fs.len() == nc {
            continue;
        }
        let best = interleaved_best(budget * fs.len() as f64, 5, &mut fs);
        let (k, t_ceil) = best[..nc]
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.total_cmp(b.1))
            .map_or((0, f64::INFINITY), |(k, t)| (k, *t));
        let ceil = n as f64 / t_ceil;
        ceiling_at.push((n, ceil));
        ceiling_loop.push((n, loops[k].name));
        rows.push(Row {
            what: "read ceiling (sum of both arrays)".into(),
            n,
            rate: ceil,
            unit: "pairs/s",
            ratio: Some(1.0),
        });
        for (name, t) in names.iter().zip(&best[nc..]) {
            let r = n as f64 / t;
            rows.push(Row {
                what: (*name).into(),
                n,
                rate: r,
                unit: "pairs/s",
                ratio: Some(r / ceil),
            });
        }
    }
    failures += refused.get();

    // Merges of two framed accumulators with different frames (the general
    // case: shift and slope change).
    if on("merge") {
        let (xs, ys) = offset_pairs(2_000, 11);
        let mut la = LeanMoments::new();
        let mut lb = LeanMoments::new();
        let mut fa = FullMoments::new();
        let mut fb = FullMoments::new();
        failures += la.extend(&xs[..1000], &ys[..1000]).is_err() as usize;
        failures += lb.extend(&xs[1000..], &ys[1000..]).is_err() as usize;
        failures += fa.extend(&xs[..1000], &ys[..1000]).is_err() as usize;
        failures += fb.extend(&xs[1000..], &ys[1000..]).is_err() as usize;
        let reps = 1000;
        let lm = rate(reps, budget, 5, || {
            for _ in 0..reps {
                let mut t = black_box(la);
                failures += t.merge(black_box(&lb)).is_err() as usize;
                black_box(&t);
            }
        });
        let fm = rate(reps, budget, 5, || {
            for _ in 0..reps {
                let mut t = black_box(fa);
                failures += t.merge(black_box(&fb)).is_err() as usize;
                black_box(&t);
            }
        });
        for (what, r) in [("lean merge", lm), ("full merge", fm)] {
            rows.push(Row {
                what: what.into(),
                n: 1,
                rate: r,
                unit: "merges/s",
                ratio: None,
            });
        }
    }

    // Model accumulator, default (full-accuracy) mode. Ratio: f64 values
    // read per second (p + 1 per row) against the ceiling's (2 per pair)
    // at 10⁶ pairs (`quick`: the largest measured size), measured here when
    // the extend section did not run.
    let model_n = if quick { 20_000 } else { 1_000_000 };
    let ceil_n = if quick { 100_000 } else { 1_000_000 };
    let ceil_model = if on("model") {
        match ceiling_at.iter().find(|(n, _)| *n == ceil_n) {
            Some(&(_, c)) => c,
            None => {
                let (xs, ys) = offset_pairs(ceil_n, 7);
                ceiling_rate(&xs, &ys, budget)
            }
        }
    } else {
        0.0
    };
    for p in [2usize, 4, 8, 12] {
        if !on("model") {
            break;
        }
        let (rs, ys) = model_rows(model_n, p, 3 + p as u64);
        let r = rate(model_n, budget, 3, || match ModelMoments::new(p) {
            Ok(mut m) => {
                failures += m.extend_rows(black_box(&rs), black_box(&ys)).is_err() as usize;
                black_box(&m);
            }
            Err(_) => failures += 1,
        });
        rows.push(Row {
            what: format!("model extend_rows, p = {p}"),
            n: model_n,
            rate: r,
            unit: "rows/s",
            ratio: Some(r * (p as f64 + 1.0) / (2.0 * ceil_model)),
        });
    }

    let load1 = load_average().unwrap_or_else(|| "unknown".into());
    println!("plumbfit speed report (release, one run, best of repeats)");
    println!(
        "load average at start: {load0}; at end: {load1}; cores: {}",
        std::thread::available_parallelism().map_or(0, |n| n.get())
    );
    println!(
        "simd kernels: {}; best supported: {}; cap with {}=avx512|avx|scalar",
        plumbfit_kernels::active().unwrap_or("none (scalar kernels)"),
        KernelSet::ALL
            .into_iter()
            .rev()
            .find(|k| k.supported())
            .map_or("scalar", KernelSet::name),
        plumbfit_kernels::KERNELS_ENV,
    );
    println!();
    println!(
        "| {:<34} | {:>10} | {:>12} | {:<8} | {:>8} |",
        "measure", "n", "rate (M/s)", "unit", "/ceiling"
    );
    println!(
        "|{:-<36}|{:-<12}|{:-<14}|{:-<10}|{:-<10}|",
        "", "", "", "", ""
    );
    for r in &rows {
        let ratio = ratio_cell(r.ratio);
        println!(
            "| {:<34} | {:>10} | {:>12.1} | {:<8} | {:>8} |",
            r.what,
            r.n,
            r.rate / 1e6,
            r.unit,
            ratio
        );
    }
    if !ceiling_loop.is_empty() {
        let per_n: Vec<String> = ceiling_loop
            .iter()
            .map(|(n, name)| format!("{n}: {name}"))
            .collect();
        println!(
            "read ceiling: fastest of {} plain read loops at each n ({})",
            read_loops().len(),
            per_n.join("; ")
        );
    }
    if on("model") {
        println!(
            "model ratios: f64 values read per second against the read ceiling at n = {ceil_n} ({:.1} M pairs/s)",
            ceil_model / 1e6
        );
    }
    println!();
    let find = |what: &str, n: usize| {
        rows.iter()
            .find(|r| r.what == what && r.n == n)
            .and_then(|r| Some((r.rate, r.ratio.filter(|v| v.is_finite())?)))
    };
    if compare_avx && on("extend") {
        println!("avx-512 gain (rate with avx512 kernels / rate with avx kernels, same run):");
        println!("| {:>10} | {:>9} | {:>9} |", "n", "lean", "full");
        println!("|{:-<12}|{:-<11}|{:-<11}|", "", "", "");
        for &n in sizes {
            let gain = |tier: &str| {
                let fast = find(&format!("{tier} extend"), n)?.0;
                let avx = find(&format!("{tier} extend, avx kernels"), n)?.0;
                Some(fast / avx)
            };
            println!(
                "| {n:>10} | {:>9} | {:>9} |",
                ratio_cell(gain("lean")),
                ratio_cell(gain("full"))
            );
        }
        println!();
    }
    let big = *sizes.last().unwrap_or(&0);
    // Per-pair pushes are judged on 10⁵ pairs, whose arrays stay in cache:
    // the per-pair cost, as when readings arrive one by one. At 10⁶ the
    // arrays stream from memory and the figure also carries the machine's
    // memory noise; it is printed beside the target.
    let pn = 100_000;
    let checks = [
        (
            "lean extend >= 0.8 x ceiling",
            find("lean extend", big).map(|v| v.1),
            0.8,
        ),
        (
            "full extend >= 0.3 x ceiling",
            find("full extend", big).map(|v| v.1),
            0.3,
        ),
        (
            "lean push >= 400 M pairs/s (10^5 pairs), through a feed",
            find("lean feed push (per pair)", pn).map(|v| v.0 / 1e6),
            400.0,
        ),
        (
            "lean push >= 400 M pairs/s (10^5 pairs), PairMoments::push",
            find("lean push (per pair)", pn).map(|v| v.0 / 1e6),
            400.0,
        ),
    ];
    for (what, got, want) in checks {
        match got {
            Some(g) => println!(
                "target {what}: {g:.3} -> {}",
                if g >= want { "met" } else { "MISSED" }
            ),
            None => println!("target {what}: not measured"),
        }
    }
    for name in ["lean feed push (per pair)", "lean push (per pair)"] {
        if let Some((r, _)) = find(name, 1_000_000) {
            println!("  {name} at 10^6 pairs: {:.1} M pairs/s", r / 1e6);
        }
    }
    if failures > 0 {
        println!("warning: {failures} calls returned an error (figures invalid)");
        std::process::exit(1);
    }
}
