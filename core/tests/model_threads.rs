//! The threaded block fold gives the same state, bit for bit, as the
//! single-threaded one for every thread count, and refuses bad input with
//! the state unchanged. Data are invented.

use plumbfit::model::{ModelError, ModelMoments};

/// Invented rows: a constant column and p − 1 columns from a xorshift
/// generator, with a response near a fixed line plus noise.
fn rows(n: usize, p: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut s = 0x9e37_79b9_7f4a_7c15u64;
    let mut next = move || {
        s ^= s << 13;
        s ^= s >> 7;
        s ^= s << 17;
        (s >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut xs = Vec::with_capacity(n * p);
    let mut ys = Vec::with_capacity(n);
    let mut ws = Vec::with_capacity(n);
    for _ in 0..n {
        xs.push(1.0);
        let mut y = 0.5;
        for j in 1..p {
            let v = 1e3 + 10.0 * next();
            y += j as f64 * v;
            xs.push(v);
        }
        ys.push(y + next() - 0.5);
        ws.push(0.5 + next());
    }
    (xs, ys, ws)
}

fn bits(m: &ModelMoments) -> Vec<u64> {
    m.storage().iter().map(|v| v.to_bits()).collect()
}

#[test]
fn every_thread_count_gives_the_serial_bits() {
    let p = 5;
    // Several segments of 16 384 rows plus a short tail.
    let n = 3 * 16_384 + 77;
    let (xs, ys, ws) = rows(n, p);
    for weighted in [false, true] {
        let mut serial = ModelMoments::new(p).unwrap();
        serial.push_row(&xs[..p], ys[0]).unwrap();
        let first = serial.clone();
        if weighted {
            serial.extend_rows_weighted(&xs, &ys, &ws).unwrap();
        } else {
            serial.extend_rows(&xs, &ys).unwrap();
        }
        let want = bits(&serial);
        for threads in [0, 1, 2, 3, 4, 9] {
            let mut m = first.clone();
            m.extend_rows_threads(&xs, &ys, weighted.then_some(&ws[..]), threads)
                .unwrap();
            assert_eq!(bits(&m), want, "threads = {threads}, weighted = {weighted}");
        }
        // The segmented fold still solves the problem: the slopes match
        // the construction to the noise level (invented data).
        let fit = serial.fit(&Default::default()).unwrap();
        for j in 1..p {
            assert!((fit.coefficients[j] - j as f64).abs() < 0.01);
        }
    }
}

#[test]
fn a_bad_row_leaves_the_state_unchanged_on_any_thread_count() {
    let p = 3;
    let n = 2 * 16_384 + 3;
    let (mut xs, ys, _) = rows(n, p);
    xs[(n - 2) * p + 1] = f64::NAN;
    let mut m = ModelMoments::new(p).unwrap();
    m.push_row(&[1.0, 2.0, 3.0], 4.0).unwrap();
    let before = bits(&m);
    for threads in [1, 2, 0] {
        let e = m.extend_rows_threads(&xs, &ys, None, threads).unwrap_err();
        assert_eq!(
            e,
            ModelError::NonFinite {
                row: n - 2,
                column: 1
            }
        );
        assert_eq!(bits(&m), before);
    }
}
