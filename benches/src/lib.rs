//! Workloads, the memory-read ceiling and a timing helper shared by the
//! criterion benches (`cargo bench -p plumbfit-benches`) and the one-run
//! speed report (`cargo run --release -p plumbfit-benches --bin speed-report`).
//!
//! Every throughput figure is reported next to the *read ceiling*: the rate
//! at which this machine merely reads the same two `f64` arrays, the
//! fastest of several plain read loops ([`read_loops`]: a sum of both with
//! independent accumulators, 256- and 512-bit, with and without software
//! prefetch) measured at the same size. A kernel at ratio 1.0 costs no
//! more than touching its input once; at large `n` that is the memory
//! bandwidth, at small `n` (data in L1) it is the vector add rate.

use std::hint::black_box;
use std::time::Instant;

/// Fixed-seed generator (SplitMix64): reproducible data without a
/// random-number dependency. Returns a value uniform in `[-0.5, 0.5)`.
pub fn uniform(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64 - 0.5
}

/// Invented offset calibration data: `x` near 1e9 (spread ±50), `y` on the
/// line `y = 7 + 2.5·x` with noise of standard deviation about 0.03. The
/// offset is the case where textbook sums lose every digit.
pub fn offset_pairs(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let mut s = seed;
    let mut xs = Vec::with_capacity(n);
    let mut ys = Vec::with_capacity(n);
    for _ in 0..n {
        let x = 1e9 + 100.0 * uniform(&mut s);
        let e = 0.1 * uniform(&mut s);
        xs.push(x);
        ys.push(7.0 + 2.5 * x + e);
    }
    (xs, ys)
}

/// Invented design matrix for the model accumulator: `n` rows of `p`
/// values, row-major, column 0 the intercept, the rest uniform in ±5; the
/// response is `Σ (j+1)·x_j` plus uniform noise.
pub fn model_rows(n: usize, p: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let mut s = seed;
    let mut rows = Vec::with_capacity(n * p);
    let mut ys = Vec::with_capacity(n);
    for _ in 0..n {
        let mut y = 0.0;
        for j in 0..p {
            let v = if j == 0 { 1.0 } else { 10.0 * uniform(&mut s) };
            y += (j as f64 + 1.0) * v;
            rows.push(v);
        }
        ys.push(y + uniform(&mut s));
    }
    (rows, ys)
}

/// One plain loop that reads both arrays once (returns their sum): a
/// candidate for the read ceiling.
#[derive(Clone, Copy, Debug)]
pub struct ReadLoop {
    /// Short name: instruction set, accumulators, prefetch.
    pub name: &'static str,
    /// The loop.
    pub run: fn(&[f64], &[f64]) -> f64,
}

/// The read loops this CPU can run: eight independent accumulators per
/// array, portable, 256-bit (AVX2) and 512-bit (AVX-512 F), each vector
/// loop with and without software prefetch (1 KiB and 4 KiB ahead, as a
/// kernel may do). The *read ceiling* at a size is the fastest of them
/// measured there ([`best_read_loop`], and the speed report times them
/// all beside the kernels): no kernel that reads the same arrays once can
/// be expected to beat every one of them, so a ratio above 1 means the
/// set lacks a loop, not that a kernel reads faster than the memory.
pub fn read_loops() -> Vec<ReadLoop> {
    let mut v = vec![ReadLoop {
        name: "scalar, 8 accumulators",
        run: ceiling_lanes,
    }];
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx2") {
            v.push(ReadLoop {
                name: "avx2",
                run: |x, y| read_avx2::<0>(x, y),
            });
            v.push(ReadLoop {
                name: "avx2, prefetch 1 KiB",
                run: |x, y| read_avx2::<128>(x, y),
            });
            v.push(ReadLoop {
                name: "avx2, prefetch 4 KiB",
                run: |x, y| read_avx2::<512>(x, y),
            });
        }
        if std::arch::is_x86_feature_detected!("avx512f") {
            v.push(ReadLoop {
                name: "avx512",
                run: |x, y| read_avx512::<0>(x, y),
            });
            v.push(ReadLoop {
                name: "avx512, prefetch 1 KiB",
                run: |x, y| read_avx512::<128>(x, y),
            });
            v.push(ReadLoop {
                name: "avx512, prefetch 4 KiB",
                run: |x, y| read_avx512::<512>(x, y),
            });
        }
    }
    v
}

/// Reads both arrays once (their sum) with the widest plain loop this CPU
/// has, without prefetch. One of the [`read_loops`]; the read ceiling
/// itself is the fastest of all of them at each size.
pub fn read_ceiling(xs: &[f64], ys: &[f64]) -> f64 {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            return read_avx512::<0>(xs, ys);
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            return read_avx2::<0>(xs, ys);
        }
    }
    ceiling_lanes(xs, ys)
}

/// The fastest of [`read_loops`] on `xs`, `ys` (best time over repeated
/// calls for about `budget_s` seconds per loop, interleaved) and its rate
/// in pairs per second.
pub fn best_read_loop(xs: &[f64], ys: &[f64], budget_s: f64) -> (ReadLoop, f64) {
    let loops = read_loops();
    let mut fs: Vec<Box<dyn FnMut()>> = loops
        .iter()
        .map(|l| {
            let run = l.run;
            Box::new(move || {
                black_box(run(black_box(xs), black_box(ys)));
            }) as Box<dyn FnMut()>
        })
        .collect();
    let mut refs: Vec<&mut dyn FnMut()> = fs.iter_mut().map(|f| &mut **f as _).collect();
    let best = interleaved_best(budget_s * loops.len() as f64, 5, &mut refs);
    let (k, t) = best
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map_or((0, f64::INFINITY), |(k, t)| (k, *t));
    (loops[k], xs.len().min(ys.len()) as f64 / t)
}

/// Portable ceiling: eight independent accumulators per array.
fn ceiling_lanes(xs: &[f64], ys: &[f64]) -> f64 {
    let n = xs.len().min(ys.len());
    let (xs, ys) = (&xs[..n], &ys[..n]);
    let mut a = [0.0f64; 8];
    let mut b = [0.0f64; 8];
    let body = n / 8 * 8;
    for (xq, yq) in xs[..body].chunks_exact(8).zip(ys[..body].chunks_exact(8)) {
        for k in 0..8 {
            a[k] += xq[k];
            b[k] += yq[k];
        }
    }
    let tail: f64 = xs[body..].iter().chain(&ys[body..]).sum();
    a.iter().chain(&b).sum::<f64>() + tail
}

/// AVX2 read loop (checks the CPU; portable loop without AVX2): four
/// 256-bit accumulators per array, prefetching `AHEAD` values ahead (0:
/// none).
#[cfg(target_arch = "x86_64")]
fn read_avx2<const AHEAD: usize>(xs: &[f64], ys: &[f64]) -> f64 {
    let n = xs.len().min(ys.len());
    if !std::arch::is_x86_feature_detected!("avx2") {
        return ceiling_lanes(xs, ys);
    }
    // SAFETY: AVX2 is present (checked just above).
    unsafe { read_avx2_body::<AHEAD>(&xs[..n], &ys[..n]) }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn read_avx2_body<const AHEAD: usize>(xs: &[f64], ys: &[f64]) -> f64 {
    use std::arch::x86_64::*;
    let n = xs.len();
    let body = n / 16 * 16;
    let (px, py) = (xs.as_ptr(), ys.as_ptr());
    let mut acc = [_mm256_setzero_pd(); 8];
    let mut i = 0;
    while i < body {
        if AHEAD > 0 {
            // A prefetch never faults; `wrapping_add` keeps the address
            // arithmetic defined past the end.
            _mm_prefetch::<_MM_HINT_T0>(px.wrapping_add(i + AHEAD) as *const i8);
            _mm_prefetch::<_MM_HINT_T0>(py.wrapping_add(i + AHEAD) as *const i8);
            _mm_prefetch::<_MM_HINT_T0>(px.wrapping_add(i + AHEAD + 8) as *const i8);
            _mm_prefetch::<_MM_HINT_T0>(py.wrapping_add(i + AHEAD + 8) as *const i8);
        }
        for k in 0..4 {
            // SAFETY: i + 4k + 3 < body <= n, so every load is in bounds.
            unsafe {
                acc[k] = _mm256_add_pd(acc[k], _mm256_loadu_pd(px.add(i + 4 * k)));
                acc[4 + k] = _mm256_add_pd(acc[4 + k], _mm256_loadu_pd(py.add(i + 4 * k)));
            }
        }
        i += 16;
    }
    let mut lanes = [0.0f64; 4];
    let mut total = 0.0;
    for a in acc {
        // SAFETY: `lanes` holds four f64.
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), a) };
        total += lanes.iter().sum::<f64>();
    }
    total + xs[body..].iter().chain(&ys[body..]).sum::<f64>()
}

/// AVX-512 read loop (checks the CPU; AVX2 loop without AVX-512): four
/// 512-bit accumulators per array, prefetching `AHEAD` values ahead (0:
/// none).
#[cfg(target_arch = "x86_64")]
fn read_avx512<const AHEAD: usize>(xs: &[f64], ys: &[f64]) -> f64 {
    let n = xs.len().min(ys.len());
    if !std::arch::is_x86_feature_detected!("avx512f") {
        return read_avx2::<AHEAD>(xs, ys);
    }
    // SAFETY: AVX-512 F is present (checked just above).
    unsafe { read_avx512_body::<AHEAD>(&xs[..n], &ys[..n]) }
}

// AVX-512 intrinsics are stable since Rust 1.89, which this crate needs
// anyway through `plumbfit-kernels`.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn read_avx512_body<const AHEAD: usize>(xs: &[f64], ys: &[f64]) -> f64 {
    use std::arch::x86_64::*;
    let n = xs.len();
    let body = n / 32 * 32;
    let (px, py) = (xs.as_ptr(), ys.as_ptr());
    let mut acc = [_mm512_setzero_pd(); 8];
    let mut i = 0;
    while i < body {
        if AHEAD > 0 {
            for line in 0..4 {
                // A prefetch never faults; `wrapping_add` keeps the
                // address arithmetic defined past the end.
                let at = i + AHEAD + 8 * line;
                _mm_prefetch::<_MM_HINT_T0>(px.wrapping_add(at) as *const i8);
                _mm_prefetch::<_MM_HINT_T0>(py.wrapping_add(at) as *const i8);
            }
        }
        for k in 0..4 {
            // SAFETY: i + 8k + 7 < body <= n, so every load is in bounds.
            unsafe {
                acc[k] = _mm512_add_pd(acc[k], _mm512_loadu_pd(px.add(i + 8 * k)));
                acc[4 + k] = _mm512_add_pd(acc[4 + k], _mm512_loadu_pd(py.add(i + 8 * k)));
            }
        }
        i += 32;
    }
    let mut lanes = [0.0f64; 8];
    let mut total = 0.0;
    for a in acc {
        // SAFETY: `lanes` holds eight f64.
        unsafe { _mm512_storeu_pd(lanes.as_mut_ptr(), a) };
        total += lanes.iter().sum::<f64>();
    }
    total + xs[body..].iter().chain(&ys[body..]).sum::<f64>()
}

/// Best time of one call to `f`, over repeated calls lasting at least
/// `budget_s` seconds in total (and at least `min_reps` calls). The best
/// time is the least disturbed by other work on a shared machine. Calls
/// faster than 200 µs are batched so the clock's overhead does not count.
pub fn best_seconds(budget_s: f64, min_reps: usize, mut f: impl FnMut()) -> f64 {
    // Warm-up call; also sizes the batch.
    let t0 = Instant::now();
    f();
    let once = t0.elapsed().as_secs_f64().max(1e-9);
    let batch = ((2e-4 / once).ceil() as usize).max(1);
    let start = Instant::now();
    let mut best = f64::INFINITY;
    let mut reps = 0;
    while reps < min_reps || start.elapsed().as_secs_f64() < budget_s {
        let t = Instant::now();
        for _ in 0..batch {
            f();
        }
        best = best.min(t.elapsed().as_secs_f64() / batch as f64);
        reps += 1;
    }
    best
}

/// Best time of one call for each of `fs`, measured in interleaved rounds
/// (each round times every function once, batched as in [`best_seconds`])
/// for at least `budget_s` seconds and `min_rounds` rounds. On a shared
/// machine the load drifts; interleaving makes the kernels and the ceiling
/// they are divided by see the same conditions.
pub fn interleaved_best(budget_s: f64, min_rounds: usize, fs: &mut [&mut dyn FnMut()]) -> Vec<f64> {
    let batches: Vec<usize> = fs
        .iter_mut()
        .map(|f| {
            let t0 = Instant::now();
            f();
            let once = t0.elapsed().as_secs_f64().max(1e-9);
            ((2e-4 / once).ceil() as usize).max(1)
        })
        .collect();
    let mut best = vec![f64::INFINITY; fs.len()];
    let start = Instant::now();
    let mut rounds = 0;
    while rounds < min_rounds || start.elapsed().as_secs_f64() < budget_s {
        for ((f, &batch), b) in fs.iter_mut().zip(&batches).zip(best.iter_mut()) {
            let t = Instant::now();
            for _ in 0..batch {
                f();
            }
            *b = b.min(t.elapsed().as_secs_f64() / batch as f64);
        }
        rounds += 1;
    }
    best
}

/// Rate in items per second of `f` processing `items` items per call.
pub fn rate(items: usize, budget_s: f64, min_reps: usize, f: impl FnMut()) -> f64 {
    items as f64 / best_seconds(budget_s, min_reps, f)
}

/// Read-ceiling rate (pairs per second) for `xs`, `ys`: the fastest of
/// [`read_loops`] there.
pub fn ceiling_rate(xs: &[f64], ys: &[f64], budget_s: f64) -> f64 {
    best_read_loop(xs, ys, budget_s).1
}

/// Table cell for a ratio to the ceiling: three decimals, or `-` when there
/// is no ratio or it is not a finite number (a ceiling that was not
/// measured must never print as NaN).
pub fn ratio_cell(ratio: Option<f64>) -> String {
    ratio
        .filter(|v| v.is_finite())
        .map_or("-".to_string(), |v| format!("{v:.3}"))
}

/// The 1-, 5- and 15-minute load averages (Linux), for the report header.
pub fn load_average() -> Option<String> {
    let s = std::fs::read_to_string("/proc/loadavg").ok()?;
    Some(s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ceiling_paths_agree_with_a_plain_sum() {
        // Small integers sum exactly in any order, so all paths must agree
        // exactly (tolerance 0: exact arithmetic).
        let xs: Vec<f64> = (0..1003).map(|i| (i % 17) as f64).collect();
        let ys: Vec<f64> = (0..1003).map(|i| (i % 5) as f64).collect();
        let plain: f64 = xs.iter().chain(&ys).sum();
        assert_eq!(read_ceiling(&xs, &ys), plain);
        assert_eq!(ceiling_lanes(&xs, &ys), plain);
        for l in read_loops() {
            // Every length class of the 16- and 32-value blocks.
            for n in [0, 1, 15, 16, 17, 31, 32, 33, 100, 1003] {
                let want: f64 = xs[..n].iter().chain(&ys[..n]).sum();
                assert_eq!((l.run)(&xs[..n], &ys[..n]), want, "{} n = {n}", l.name);
            }
        }
    }

    #[test]
    fn ratio_cells_never_show_nan() {
        assert_eq!(ratio_cell(Some(0.4567)), "0.457");
        for bad in [None, Some(f64::NAN), Some(f64::INFINITY), Some(-f64::NAN)] {
            assert_eq!(ratio_cell(bad), "-");
        }
    }

    #[test]
    fn generator_is_uniform_in_half_open_unit() {
        let mut s = 1;
        let v: Vec<f64> = (0..10_000).map(|_| uniform(&mut s)).collect();
        assert!(v.iter().all(|&u| (-0.5..0.5).contains(&u)));
        // Mean of 10⁴ uniforms has sd 0.0029; 0.02 is about 7 sd.
        let mean = v.iter().sum::<f64>() / v.len() as f64;
        assert!(mean.abs() < 0.02, "mean {mean}");
    }
}
