//! Replays the committed fuzz corpus (`fuzz/corpus/state_*/`) through the
//! same checks the fuzz targets run, plus a fixed-seed sweep of random
//! inputs, so every case the fuzzer found interesting stays a regression
//! test in a plain `cargo test`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

#[path = "state_support/harness.rs"]
mod harness;

use std::path::PathBuf;

fn corpus(target: &str) -> Vec<(PathBuf, Vec<u8>)> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../fuzz/corpus")
        .join(target);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("corpus folder {} unreadable: {e}", dir.display()))
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let d = std::fs::read(&p).unwrap();
            (p, d)
        })
        .collect()
}

fn replay(target: &str, check: fn(&[u8])) {
    let files = corpus(target);
    // A stale path must fail, not pass on nothing.
    assert!(
        files.len() >= 10,
        "only {} corpus files for {target}",
        files.len()
    );
    for (path, data) in files {
        let r = std::panic::catch_unwind(|| check(&data));
        assert!(r.is_ok(), "corpus case {} failed", path.display());
    }
}

#[test]
fn decode_corpus_replays() {
    replay("state_decode", harness::check_decode);
}

#[test]
fn ops_corpus_replays() {
    replay("state_ops", harness::check_ops);
}

#[test]
fn levels_decode_corpus_replays() {
    replay("levels_decode", harness::check_levels_decode);
}

/// Fixed-seed random inputs (xorshift), more in release builds.
fn sweep(check: fn(&[u8]), seed: u64) {
    let n = if cfg!(debug_assertions) { 300 } else { 3000 };
    let mut g = seed;
    for _ in 0..n {
        g ^= g << 13;
        g ^= g >> 7;
        g ^= g << 17;
        let len = (g % 700) as usize;
        let mut d = Vec::with_capacity(len);
        for _ in 0..len {
            g ^= g << 13;
            g ^= g >> 7;
            g ^= g << 17;
            d.push((g >> 32) as u8);
        }
        check(&d);
    }
}

#[test]
fn decode_random_sweep() {
    sweep(harness::check_decode, 0x5EED_0001_D1CE_F00D);
}

#[test]
fn ops_random_sweep() {
    sweep(harness::check_ops, 0x5EED_0002_0BAD_CAFE);
}

#[test]
fn levels_decode_random_sweep() {
    sweep(harness::check_levels_decode, 0x5EED_0003_1E7E_150D);
}

/// Writes valid blobs of every kind as fuzz seeds into
/// `$PLUMBFIT_SEED_DIR` (run by hand: `cargo test --test state_corpus --
/// --ignored`).
#[test]
#[ignore]
fn write_seed_blobs() {
    use plumbfit::model::ModelMoments;
    use plumbfit::{FullMoments, LeanMoments};
    let Some(dir) = std::env::var_os("PLUMBFIT_SEED_DIR") else {
        return;
    };
    let dir = PathBuf::from(dir);
    std::fs::create_dir_all(&dir).unwrap();
    let xs: Vec<f64> = (0..40).map(|i| i as f64 * 0.5 - 3.0).collect();
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| 2.0 * x + 1.0 + (x * 7.0).sin() * 0.1)
        .collect();
    let mut blobs = Vec::new();
    for n in [0usize, 1, 3, 7, 8, 9, 40] {
        let mut l = LeanMoments::new();
        let mut f = FullMoments::new();
        if n > 0 {
            l.extend(&xs[..n], &ys[..n]).unwrap();
            f.extend(&xs[..n], &ys[..n]).unwrap();
        }
        blobs.push(l.save_to_vec());
        blobs.push(f.save_to_vec());
        if n > 1 {
            l.forget(0.5).unwrap();
            f.push_weighted(1.0, 2.0, 3.0).unwrap();
            blobs.push(l.save_to_vec());
            blobs.push(f.save_to_vec());
        }
    }
    for p in 1..=4 {
        let mut m = ModelMoments::new(p).unwrap();
        blobs.push(m.save_to_vec());
        for (x, y) in xs.iter().zip(&ys) {
            m.push_powers(*x, *y, 1.0).unwrap();
        }
        blobs.push(m.save_to_vec());
    }
    for c in [0usize, 1, 2, 8, 32, plumbfit::state::MAX_LEVELS] {
        let mut lv = plumbfit::calib::LevelSet::new();
        for (i, y) in ys.iter().enumerate() {
            if c > 0 {
                lv.push_weighted((i % c) as f64 + 0.5, *y, 1.0 + (i % 3) as f64)
                    .unwrap();
            }
        }
        blobs.push(lv.save_to_vec().unwrap());
    }
    for (i, b) in blobs.iter().enumerate() {
        std::fs::write(dir.join(format!("seed-{i:03}")), b).unwrap();
    }
}
