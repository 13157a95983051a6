//! The replicate-level state (kind 4) against docs/state-format.md:
//! hand-built bytes, bit-exact round trips for both store types, every
//! truncation and bit error, forged blobs breaking each rule, the level
//! cap, and updates on restored stores.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::calib::{CalibError, FixedLevels, LevelSet};
use plumbfit::state::{self, StateError, StateField, StateKind, MAX_LEVELS};
use plumbfit::LeanMoments;

fn f(v: f64) -> [u8; 8] {
    v.to_le_bytes()
}

/// Wraps `payload` in a header for `c` levels and a CRC, field by field
/// from the specification's tables.
fn envelope(c: u16, payload: &[u8]) -> Vec<u8> {
    let mut b = vec![0xC5, 0x50, 0x46, 0x53]; // magic
    b.extend_from_slice(&state::FORMAT_VERSION.to_le_bytes());
    b.push(4); // kind: levels
    b.push(0); // reserved
    b.extend_from_slice(&c.to_le_bytes()); // p: the level count
    b.extend_from_slice(&0u16.to_le_bytes()); // options
    b.extend_from_slice(&(payload.len() as u32).to_le_bytes());
    b.extend_from_slice(payload);
    let crc = state::crc32(&b);
    b.extend_from_slice(&crc.to_le_bytes());
    b
}

fn record(x: f64, count: u64, w: f64, mean: f64, m2: f64) -> Vec<u8> {
    let mut r = Vec::new();
    r.extend_from_slice(&f(x));
    r.extend_from_slice(&count.to_le_bytes());
    r.extend_from_slice(&f(w));
    r.extend_from_slice(&f(mean));
    r.extend_from_slice(&f(m2));
    r
}

#[test]
fn bytes_match_the_specification() {
    // Readings (invented): x = 1: y = 2, 4 (mean 3, m2 = 1 + 1 = 2);
    // x = -0.5: y = 7 with weight 2 (mean 7, m2 0). Records are sorted by x.
    let mut s = LevelSet::new();
    s.push(1.0, 2.0).unwrap();
    s.push_weighted(-0.5, 7.0, 2.0).unwrap();
    s.push(1.0, 4.0).unwrap();
    let mut payload = record(-0.5, 1, 2.0, 7.0, 0.0);
    payload.extend(record(1.0, 2, 2.0, 3.0, 2.0));
    let want = envelope(2, &payload);
    assert_eq!(want.len(), state::levels_len(2));
    assert_eq!(want.len(), 20 + 2 * 40);
    assert_eq!(s.save_to_vec().unwrap(), want);
    let mut fx = FixedLevels::<4>::new();
    fx.extend(&[1.0, -0.5, 1.0], &[2.0, 7.0, 4.0]).unwrap();
    // Unit weight at -0.5 differs: build the fixed store like the set.
    let mut fx2 = FixedLevels::<4>::new();
    fx2.push(1.0, 2.0).unwrap();
    fx2.push_weighted(-0.5, 7.0, 2.0).unwrap();
    fx2.push(1.0, 4.0).unwrap();
    let mut buf = [0u8; state::MAX_ENCODED_LEN];
    let n = fx2.save_into(&mut buf).unwrap();
    assert_eq!(&buf[..n], &want[..]);
    assert_ne!(fx.encoded_len(), 0);
    let back = LevelSet::restore(&want).unwrap();
    assert_eq!(back, s);
    assert_eq!(FixedLevels::<4>::restore(&want).unwrap(), fx2);
    let info = state::peek(&want).unwrap();
    assert_eq!(info.kind, StateKind::Levels);
    assert_eq!((info.params, info.count, info.len), (2, 3, 100));
    assert_eq!(state::declared_len(&want[..16]), Ok(100));
    assert_eq!(StateKind::Levels.code(), 4);
    assert_eq!(StateKind::from_code(4), Some(StateKind::Levels));
    assert_eq!(StateKind::Levels.name(), "levels");
}

#[test]
fn empty_store_is_twenty_bytes() {
    let s = LevelSet::new();
    let b = s.save_to_vec().unwrap();
    assert_eq!(b, envelope(0, &[]));
    assert_eq!(b.len(), 20);
    assert_eq!(LevelSet::restore(&b).unwrap(), s);
    assert_eq!(FixedLevels::<1>::restore(&b).unwrap(), FixedLevels::new());
}

/// A store with `c` levels, replicates, weights, signed zeros and wide
/// magnitudes (invented readings).
fn sample(c: usize) -> LevelSet {
    let mut s = LevelSet::new();
    for i in 0..c {
        let x = if i == 0 {
            -0.0
        } else {
            (i as f64 - 7.5) * 1.25e-3 * (1.0 + i as f64).powi(3)
        };
        for k in 0..(1 + i % 4) {
            let y = 3.0 * x + 1e6 + (k as f64 * 0.37).sin();
            if k % 2 == 0 {
                s.push(x, y).unwrap();
            } else {
                s.push_weighted(x, y, 0.25 + k as f64).unwrap();
            }
        }
    }
    s
}

#[test]
fn round_trips_are_bit_exact_for_both_store_types() {
    for c in [1, 2, 5, 31, 32, MAX_LEVELS] {
        let s = sample(c);
        assert_eq!(s.level_count(), c);
        let b = s.save_to_vec().unwrap();
        assert_eq!(b.len(), state::levels_len(c));
        let r = LevelSet::restore(&b).unwrap();
        let bits = |s: &LevelSet| {
            s.levels()
                .iter()
                .flat_map(|l| {
                    [
                        l.x.to_bits(),
                        l.count,
                        l.weight_sum.to_bits(),
                        l.mean_y.to_bits(),
                        l.m2.to_bits(),
                    ]
                })
                .collect::<Vec<u64>>()
        };
        assert_eq!(bits(&r), bits(&s), "c = {c}");
        assert_eq!(r.save_to_vec().unwrap(), b);
        let fx = FixedLevels::<MAX_LEVELS>::restore(&b).unwrap();
        let mut out = vec![0u8; fx.encoded_len()];
        assert_eq!(fx.save_into(&mut out), Ok(b.len()));
        assert_eq!(out, b);
        assert_eq!(fx.count(), s.count());
        assert_eq!(fx.pure_error(), s.pure_error());
    }
}

#[test]
fn too_many_levels_cannot_be_saved_and_small_stores_refuse_large_states() {
    let s = sample(MAX_LEVELS + 1);
    let want = StateError::InvalidField {
        field: StateField::Params,
    };
    assert_eq!(s.save_to_vec(), Err(want));
    let mut big = vec![0u8; 4096];
    assert_eq!(s.save_into(&mut big), Err(want));
    assert!(big.iter().all(|&v| v == 0), "a refused save wrote bytes");
    let b = sample(5).save_to_vec().unwrap();
    assert_eq!(
        FixedLevels::<4>::restore(&b),
        Err(StateError::StorageTooSmall { needed: 5, have: 4 })
    );
    assert_eq!(
        FixedLevels::<4>::restore(&b).unwrap_err().code(),
        59 // DEVELOPERS.md: 59 storage too small
    );
    // A short output buffer names the length needed and writes nothing.
    let mut short = [0u8; 50];
    assert_eq!(
        sample(5).save_into(&mut short),
        Err(StateError::BufferTooSmall {
            needed: 220,
            have: 50
        })
    );
    assert!(short.iter().all(|&v| v == 0));
}

#[test]
fn header_rules() {
    let good = sample(3).save_to_vec().unwrap();
    // p above the cap: refused from the header, before any payload byte.
    let mut b = good.clone();
    b[8..10].copy_from_slice(&((MAX_LEVELS + 1) as u16).to_le_bytes());
    assert_eq!(
        state::declared_len(&b),
        Err(StateError::InvalidField {
            field: StateField::Params
        })
    );
    b[8..10].copy_from_slice(&u16::MAX.to_le_bytes());
    assert_eq!(LevelSet::restore(&b).unwrap_err().code(), 57);
    // Declared length not matching p.
    let mut b = good.clone();
    b[12..16].copy_from_slice(&(3 * 40 + 8u32).to_le_bytes());
    assert_eq!(
        LevelSet::restore(&b),
        Err(StateError::LengthMismatch {
            expected: 120,
            found: 128
        })
    );
    // Options must be zero.
    let mut b = good.clone();
    b[10] = 1;
    assert_eq!(
        LevelSet::restore(&b),
        Err(StateError::InvalidField {
            field: StateField::Options
        })
    );
    // p = 2 with three records' bytes: the length implied by p wins.
    let mut b = good.clone();
    b[8..10].copy_from_slice(&2u16.to_le_bytes());
    assert_eq!(LevelSet::restore(&b).unwrap_err().code(), 55);
    // The kind exists from version 2 on: a version-1 blob of kind 4 is
    // an unknown kind (with a correct CRC, so only the rule refuses it).
    let mut b = good.clone();
    b[4..6].copy_from_slice(&1u16.to_le_bytes());
    let body = b.len() - 4;
    let crc = state::crc32(&b[..body]);
    b[body..].copy_from_slice(&crc.to_le_bytes());
    assert_eq!(
        LevelSet::restore(&b),
        Err(StateError::UnknownKind { kind: 4 })
    );
    assert_eq!(state::FORMAT_VERSION, 2);
    // Kinds are told apart both ways.
    assert_eq!(
        LeanMoments::restore(&good),
        Err(StateError::WrongKind {
            expected: StateKind::LineLean,
            found: StateKind::Levels
        })
    );
    let lean = LeanMoments::new().save_to_vec();
    assert_eq!(
        LevelSet::restore(&lean),
        Err(StateError::WrongKind {
            expected: StateKind::Levels,
            found: StateKind::LineLean
        })
    );
    assert_eq!(FixedLevels::<8>::restore(&lean).unwrap_err().code(), 53);
}

#[test]
fn every_truncation_and_every_bit_error_is_refused() {
    let good = sample(4).save_to_vec().unwrap();
    for n in 0..good.len() {
        let e = LevelSet::restore(&good[..n]).unwrap_err();
        assert!(
            matches!(e, StateError::Truncated { .. }),
            "prefix {n}: {e:?}"
        );
    }
    let mut long = good.clone();
    long.push(0);
    assert_eq!(LevelSet::restore(&long).unwrap_err().code(), 55);
    for bit in 0..good.len() * 8 {
        let mut b = good.clone();
        b[bit / 8] ^= 1 << (bit % 8);
        let e = LevelSet::restore(&b).unwrap_err();
        assert!((50..=59).contains(&e.code()), "bit {bit}: {e:?}");
        assert!(FixedLevels::<8>::restore(&b).is_err());
    }
}

/// Forged blobs with a correct CRC, each breaking one payload rule.
#[test]
fn forged_payloads_name_the_broken_field() {
    let ok = |x: f64| record(x, 2, 2.0, 1.0, 0.5);
    let cases: Vec<(&str, Vec<Vec<u8>>, StateField)> = vec![
        ("unsorted", vec![ok(2.0), ok(1.0)], StateField::LevelX),
        ("duplicate", vec![ok(1.0), ok(1.0)], StateField::LevelX),
        ("negative zero", vec![ok(-0.0)], StateField::LevelX),
        (
            "zero twice",
            vec![ok(-1.0), ok(0.0), ok(0.0)],
            StateField::LevelX,
        ),
        ("nan x", vec![ok(f64::NAN)], StateField::LevelX),
        (
            "inf x",
            vec![ok(1.0), ok(f64::INFINITY)],
            StateField::LevelX,
        ),
        (
            "count 0",
            vec![record(1.0, 0, 1.0, 1.0, 0.0)],
            StateField::LevelCount,
        ),
        (
            "total count wraps",
            vec![
                record(1.0, u64::MAX, 1.0, 1.0, 0.0),
                record(2.0, 2, 1.0, 1.0, 0.0),
            ],
            StateField::LevelCount,
        ),
        (
            "zero weight",
            vec![record(1.0, 1, 0.0, 1.0, 0.0)],
            StateField::LevelWeightSum,
        ),
        (
            "negative weight",
            vec![record(1.0, 1, -1.0, 1.0, 0.0)],
            StateField::LevelWeightSum,
        ),
        (
            "inf weight",
            vec![record(1.0, 1, f64::INFINITY, 1.0, 0.0)],
            StateField::LevelWeightSum,
        ),
        (
            "nan mean",
            vec![record(1.0, 1, 1.0, f64::NAN, 0.0)],
            StateField::LevelMean,
        ),
        (
            "negative m2",
            vec![record(1.0, 2, 2.0, 1.0, -1e-300)],
            StateField::LevelM2,
        ),
        (
            "m2 -0.0",
            vec![record(1.0, 2, 2.0, 1.0, -0.0)],
            StateField::LevelM2,
        ),
        (
            "inf m2",
            vec![record(1.0, 2, 2.0, 1.0, f64::INFINITY)],
            StateField::LevelM2,
        ),
        (
            "spread of one reading",
            vec![record(1.0, 1, 1.0, 1.0, 0.5)],
            StateField::LevelM2,
        ),
    ];
    for (name, recs, fld) in cases {
        let payload: Vec<u8> = recs.concat();
        let b = envelope(recs.len() as u16, &payload);
        let want = StateError::InvalidField { field: fld };
        assert_eq!(LevelSet::restore(&b), Err(want), "{name}");
        assert_eq!(FixedLevels::<8>::restore(&b), Err(want), "{name}");
        // The header and CRC are fine: peek accepts it.
        assert!(state::peek(&b).is_ok(), "{name}");
    }
    // The largest total the format allows restores, and further readings
    // are refused instead of wrapping the count.
    let b = envelope(
        2,
        &[
            record(1.0, u64::MAX - 1, 1.0, 1.0, 0.0),
            record(2.0, 1, 1.0, 1.0, 0.0),
        ]
        .concat(),
    );
    let mut s = LevelSet::restore(&b).unwrap();
    assert_eq!(s.count(), u64::MAX);
    assert_eq!(state::peek(&b).unwrap().count, u64::MAX);
    let before = s.clone();
    assert_eq!(s.push(3.0, 1.0), Err(CalibError::Overflow));
    assert_eq!(s.push(1.0, 1.0), Err(CalibError::Overflow));
    let one = {
        let mut o = LevelSet::new();
        o.push(1.0, 1.0).unwrap();
        o
    };
    assert_eq!(s.merge(&one), Err(CalibError::Overflow));
    assert_eq!(s, before);
    let mut fx = FixedLevels::<4>::restore(&b).unwrap();
    let fb = fx;
    let mut fone = FixedLevels::<4>::new();
    fone.push(5.0, 1.0).unwrap();
    assert_eq!(fx.merge(&fone), Err(CalibError::Overflow));
    assert_eq!(fx, fb);
}

#[test]
fn updates_that_would_overflow_are_refused_and_change_nothing() {
    let mut s = LevelSet::new();
    s.push_weighted(1.0, 1.0, 1e308).unwrap();
    let before = s.clone();
    // The weight sum would pass f64::MAX.
    assert_eq!(s.push_weighted(1.0, 2.0, 1e308), Err(CalibError::Overflow));
    assert_eq!(
        s.extend_weighted(&[2.0, 1.0], &[1.0, 1.0], &[1.0, 1e308]),
        Err(CalibError::Overflow)
    );
    assert_eq!(s, before);
    let mut m = LevelSet::new();
    m.push(1.0, 1e153).unwrap();
    m.push(1.0, -1e153).unwrap();
    // The spread would pass f64::MAX: m2 = 2e306 + 2e154 · (2/3 · 2e154).
    let snap = m.clone();
    assert_eq!(m.push(1.0, 2e154), Err(CalibError::Overflow));
    // A spread of two readings that is itself too large.
    let mut t = LevelSet::new();
    t.push(1.0, 1e300).unwrap();
    assert_eq!(t.push(1.0, -1e300), Err(CalibError::Overflow));
    assert_eq!(t.count(), 1);
    assert_eq!(m, snap);
    // Whatever is accepted saves and restores.
    for st in [&s, &m] {
        assert_eq!(&LevelSet::restore(&st.save_to_vec().unwrap()).unwrap(), st);
    }
}

#[test]
fn restored_stores_merge_and_test_like_the_originals() {
    // Two halves saved, restored and merged equal the whole store's
    // lack-of-fit statistics (exact per-level merge, so 1e-12 relative
    // covers only the summation order of the pure error).
    let xs: Vec<f64> = (0..24).map(|i| (i % 6) as f64).collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 2.0 * x + 0.1 * x * x + ((i * 7) % 5) as f64 * 0.05)
        .collect();
    let mut whole = LevelSet::new();
    whole.extend(&xs, &ys).unwrap();
    let mut a = LevelSet::new();
    a.extend(&xs[..11], &ys[..11]).unwrap();
    let mut b = LevelSet::new();
    b.extend(&xs[11..], &ys[11..]).unwrap();
    let mut ra = LevelSet::restore(&a.save_to_vec().unwrap()).unwrap();
    let rb = FixedLevels::<8>::restore(&b.save_to_vec().unwrap()).unwrap();
    let rb_set = LevelSet::restore(&{
        let mut v = vec![0u8; rb.encoded_len()];
        rb.save_into(&mut v).unwrap();
        v
    })
    .unwrap();
    ra.merge(&rb_set).unwrap();
    let fa = ra.lack_of_fit_poly(&[0.0, 2.0]).unwrap();
    let fw = whole.lack_of_fit_poly(&[0.0, 2.0]).unwrap();
    assert_eq!(fa.count, fw.count);
    assert_eq!(fa.df_pure_error, fw.df_pure_error);
    let rel = |p: f64, q: f64| ((p - q) / q).abs();
    assert!(rel(fa.ss_pure_error, fw.ss_pure_error) < 1e-12);
    assert!(rel(fa.ss_lack_of_fit, fw.ss_lack_of_fit) < 1e-12);
}
