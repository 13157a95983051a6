//! The byte format against its specification (docs/state-format.md):
//! hand-built blobs, every truncation, every single-bit error, header
//! fields, kind checks and bit-exact round trips for every kind.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::model::{storage_len, ModelCore, ModelMoments};
use plumbfit::state::{self, StateError, StateField, StateKind};
use plumbfit::{FullMoments, LeanMoments};

/// A lean blob built byte by byte from the specification's tables: two
/// staged unit-weight pairs (1, 2) and (3, 5).
fn hand_built_lean() -> Vec<u8> {
    let mut b = vec![0xC5, 0x50, 0x46, 0x53]; // magic
    b.extend_from_slice(&2u16.to_le_bytes()); // version
    b.push(1); // kind: line-lean
    b.push(0); // reserved
    b.extend_from_slice(&0u16.to_le_bytes()); // p
    b.extend_from_slice(&0u16.to_le_bytes()); // options
    b.extend_from_slice(&288u32.to_le_bytes()); // payload length
    b.extend_from_slice(&0u64.to_le_bytes()); // count
    b.extend_from_slice(&[0, 2, 0, 0, 0, 0, 0, 0]); // flags, stage_len, pad
    b.extend_from_slice(&[0u8; 80]); // ten moments, all zero
    for v in [1.0f64, 2.0, 1.0, 3.0, 5.0, 1.0] {
        b.extend_from_slice(&v.to_le_bytes());
    }
    b.extend_from_slice(&[0u8; 192 - 48]); // unused stage slots
                                           // CRC of the 304 bytes above, from Python 3.11 `zlib.crc32`.
    b.extend_from_slice(&0x05A8_CB41u32.to_le_bytes());
    b
}

#[test]
fn version_1_blobs_are_still_read() {
    // The same state written by a version 1 build: version 1 and its CRC
    // (from Python 3.11 `zlib.crc32`); version 2 only added the pending
    // block, empty here.
    let mut v1 = hand_built_lean();
    v1[4] = 1;
    v1[304..].copy_from_slice(&0x65FF_0B9Eu32.to_le_bytes());
    assert_eq!(state::peek(&v1).unwrap().version, 1);
    let a = LeanMoments::restore(&v1).unwrap();
    assert_eq!(a.save_to_vec(), hand_built_lean());
    // A framed version 1 state: re-sealed under version 1, it restores to
    // the same state (its stage area is all zero, an empty block).
    let (_, b) = sample_blobs().remove(0);
    let mut old = b.clone();
    old[4] = 1;
    let old = resealed(old);
    assert_eq!(LeanMoments::restore(&old).unwrap().save_to_vec(), b);
}

#[test]
fn lean_bytes_match_the_specification() {
    let mut a = LeanMoments::new();
    a.push(1.0, 2.0).unwrap();
    a.push(3.0, 5.0).unwrap();
    let want = hand_built_lean();
    assert_eq!(want.len(), state::LEAN_LEN);
    assert_eq!(a.save_to_vec(), want);
    let back = LeanMoments::restore(&want).unwrap();
    assert_eq!(back.count(), 2);
    assert_eq!(back.slope_intercept().unwrap(), (1.5, 0.5)); // exact: line through both pairs
}

#[test]
fn full_bytes_match_the_specification() {
    let mut a = FullMoments::new();
    a.push(-0.5, 4.25).unwrap();
    let b = a.save_to_vec();
    assert_eq!(b.len(), state::FULL_LEN);
    assert_eq!(
        &b[..16],
        &[0xC5, 0x50, 0x46, 0x53, 2, 0, 2, 0, 0, 0, 0, 0, 0xC0, 1, 0, 0]
    );
    assert_eq!(b[16 + 9], 1, "stage_len");
    assert_eq!(&b[16 + 96..16 + 104], &(-0.5f64).to_le_bytes());
    // Empty extremes: +inf, -inf, +inf, -inf at payload offset 416.
    let ext: Vec<f64> = (0..4)
        .map(|i| f64::from_le_bytes(b[16 + 416 + 8 * i..16 + 424 + 8 * i].try_into().unwrap()))
        .collect();
    assert_eq!(
        ext,
        [
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY
        ]
    );
    // CRC from Python 3.11 `zlib.crc32` over the same hand-built bytes.
    assert_eq!(&b[464..], &0x57B0_BDECu32.to_le_bytes());
}

fn sample_blobs() -> Vec<(StateKind, Vec<u8>)> {
    let xs: Vec<f64> = (0..30).map(|i| 1e6 + i as f64 * 0.125).collect();
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| 0.5 * x - 3.0 + (x * 13.0).sin() * 1e-3)
        .collect();
    let mut l = LeanMoments::new();
    l.extend(&xs, &ys).unwrap();
    l.forget(0.75).unwrap();
    let mut f = FullMoments::new();
    f.extend(&xs, &ys).unwrap();
    f.push_weighted(1e6, 5e5, 2.0).unwrap();
    let mut m = ModelMoments::new(3).unwrap();
    for (x, y) in xs.iter().zip(&ys) {
        m.push_powers(x - 1e6, *y, 1.0).unwrap();
    }
    vec![
        (StateKind::LineLean, l.save_to_vec()),
        (StateKind::LineFull, f.save_to_vec()),
        (StateKind::Model, m.save_to_vec()),
    ]
}

fn restore_any(kind: StateKind, b: &[u8]) -> Result<Vec<u8>, StateError> {
    match kind {
        StateKind::LineLean => LeanMoments::restore(b).map(|a| a.save_to_vec()),
        StateKind::LineFull => FullMoments::restore(b).map(|a| a.save_to_vec()),
        _ => ModelMoments::restore(b).map(|a| a.save_to_vec()),
    }
}

#[test]
fn every_kind_round_trips_bit_for_bit() {
    for (kind, b) in sample_blobs() {
        assert_eq!(restore_any(kind, &b).unwrap(), b, "{kind}");
        let info = state::peek(&b).unwrap();
        assert_eq!((info.kind, info.version, info.len), (kind, 2, b.len()));
        assert_eq!(state::declared_len(&b[..16]), Ok(b.len()));
    }
    let (_, mb) = &sample_blobs()[2];
    let mut buf = [0.0; storage_len(3)];
    let core = ModelCore::restore_in(&mut buf, mb).unwrap();
    assert_eq!(core.params(), 3);
    assert_eq!(core.count(), 30);
    assert_eq!(&core.save_to_vec(), mb);
}

#[test]
fn every_truncation_is_refused() {
    for (kind, b) in sample_blobs() {
        for n in 0..b.len() {
            let e = restore_any(kind, &b[..n]).unwrap_err();
            let want = if n < 16 { 16 } else { b.len() };
            assert_eq!(
                e,
                StateError::Truncated {
                    needed: want,
                    have: n
                },
                "{kind} at {n}"
            );
            assert_eq!(e.code(), 54);
        }
        let mut long = b.clone();
        long.push(0);
        assert_eq!(
            restore_any(kind, &long).unwrap_err(),
            StateError::LengthMismatch {
                expected: b.len(),
                found: b.len() + 1
            }
        );
    }
}

#[test]
fn every_single_bit_error_is_refused() {
    // CRC-32 detects all single-bit errors (common practice); errors in
    // the header may be caught earlier by the header rules.
    for (kind, b) in sample_blobs() {
        for i in 0..b.len() {
            for bit in 0..8 {
                let mut c = b.clone();
                c[i] ^= 1 << bit;
                let e = restore_any(kind, &c).unwrap_err();
                assert!(
                    (50..=57).contains(&e.code()),
                    "{kind} byte {i} bit {bit}: {e:?}"
                );
                if i >= 16 {
                    assert_eq!(e.code(), 56, "{kind} byte {i} bit {bit}: {e:?}");
                }
            }
        }
    }
}

/// Rewrites the CRC after an edit so the rule after the checksum is tested.
fn resealed(mut b: Vec<u8>) -> Vec<u8> {
    let body = b.len() - 4;
    let crc = state::crc32(&b[..body]);
    b[body..].copy_from_slice(&crc.to_le_bytes());
    b
}

#[test]
fn header_rules() {
    let (_, b) = sample_blobs().remove(0);
    let edit = |at: usize, v: &[u8]| {
        let mut c = b.clone();
        c[at..at + v.len()].copy_from_slice(v);
        resealed(c)
    };
    assert_eq!(
        LeanMoments::restore(&edit(0, b"PFS")),
        Err(StateError::BadMagic)
    );
    assert_eq!(
        LeanMoments::restore(&edit(4, &3u16.to_le_bytes())),
        Err(StateError::UnsupportedVersion {
            found: 3,
            supported: 2
        })
    );
    assert_eq!(
        LeanMoments::restore(&edit(4, &0u16.to_le_bytes()))
            .unwrap_err()
            .code(),
        51
    );
    assert_eq!(
        LeanMoments::restore(&edit(6, &[9])),
        Err(StateError::UnknownKind { kind: 9 })
    );
    let invalid = |f| Err(StateError::InvalidField { field: f });
    assert_eq!(
        LeanMoments::restore(&edit(7, &[1])),
        invalid(StateField::Reserved)
    );
    assert_eq!(
        LeanMoments::restore(&edit(8, &[1])),
        invalid(StateField::Params)
    );
    assert_eq!(
        LeanMoments::restore(&edit(10, &[1])),
        invalid(StateField::Options)
    );
    assert_eq!(
        LeanMoments::restore(&edit(12, &4_000_000_000u32.to_le_bytes())),
        Err(StateError::LengthMismatch {
            expected: 288,
            found: 4_000_000_000
        })
    );
    // A length field can never make a decoder want more than the largest
    // kind, whatever it says.
    assert_eq!(state::declared_len(&b[..16]), Ok(state::LEAN_LEN));
    assert_eq!(state::MAX_ENCODED_LEN, 2532);
}

#[test]
fn kinds_are_not_interchangeable() {
    let blobs = sample_blobs();
    for (kind, b) in &blobs {
        for want in [StateKind::LineLean, StateKind::LineFull, StateKind::Model] {
            if want == *kind {
                continue;
            }
            assert_eq!(
                restore_any(want, b),
                Err(StateError::WrongKind {
                    expected: want,
                    found: *kind
                })
            );
        }
    }
    let mut buf = [0.0; 400];
    assert_eq!(
        ModelCore::restore_in(&mut buf, &blobs[0].1)
            .unwrap_err()
            .code(),
        53
    );
    assert!(buf.iter().all(|&v| v == 0.0));
}

/// Payload edits with a good checksum hit the semantic rules.
#[test]
fn payload_rules_name_the_field() {
    let (_, lean) = sample_blobs().remove(0);
    let put = |b: &[u8], at: usize, v: f64| {
        let mut c = b.to_vec();
        c[16 + at..16 + at + 8].copy_from_slice(&v.to_le_bytes());
        resealed(c)
    };
    let field_of = |b: Vec<u8>| match LeanMoments::restore(&b) {
        Err(StateError::InvalidField { field }) => field,
        other => panic!("{other:?}"),
    };
    assert_eq!(field_of(put(&lean, 16, -1.0)), StateField::WeightSum);
    assert_eq!(field_of(put(&lean, 16, f64::NAN)), StateField::WeightSum);
    assert_eq!(
        field_of(put(&lean, 24, f64::INFINITY)),
        StateField::WeightSqSum
    );
    assert_eq!(field_of(put(&lean, 48, f64::NAN)), StateField::Frame);
    assert_eq!(field_of(put(&lean, 56, f64::INFINITY)), StateField::Means);
    assert_eq!(field_of(put(&lean, 72, -1e-300)), StateField::Sxx);
    assert_eq!(field_of(put(&lean, 80, f64::NAN)), StateField::Sxv);
    assert_eq!(field_of(put(&lean, 88, -2.0)), StateField::Svv);
    // Framed: the stage area holds the (here empty) pending block.
    assert_eq!(field_of(put(&lean, 96, 1.0)), StateField::Pending);
    let mut c = lean.clone();
    c[16 + 8] |= 0x40;
    assert_eq!(field_of(resealed(c)), StateField::Flags);
    let mut c = lean.clone();
    c[16 + 9] = 8;
    assert_eq!(field_of(resealed(c)), StateField::StageLen);
    let mut c = lean.clone();
    c[16 + 12] = 1;
    assert_eq!(field_of(resealed(c)), StateField::Reserved);
    let mut c = lean.clone();
    c[16..24].copy_from_slice(&0u64.to_le_bytes());
    assert_eq!(field_of(resealed(c)), StateField::Count);

    // Unweighted, never forgotten: Σw must count the pairs.
    let mut a = LeanMoments::new();
    a.extend(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0], &[1.0; 9])
        .unwrap();
    let b = a.save_to_vec();
    assert_eq!(field_of(put(&b, 16, 9.5)), StateField::WeightSum);

    let (_, model) = sample_blobs().remove(2);
    let mfield = |at: usize, v: f64| {
        let mut c = model.clone();
        c[16 + 8 * at..24 + 8 * at].copy_from_slice(&v.to_le_bytes());
        match ModelMoments::restore(&resealed(c)) {
            Err(StateError::InvalidField { field }) => field,
            other => panic!("{other:?}"),
        }
    };
    assert_eq!(mfield(0, 1.0), StateField::ModelLayout);
    assert_eq!(mfield(1, 4.0), StateField::Params);
    assert_eq!(mfield(2, 2.5), StateField::Count);
    assert_eq!(mfield(3, -1.0), StateField::WeightSum);
    assert_eq!(mfield(5, 3.0), StateField::ModelColumn0);
    assert_eq!(mfield(7, 0.5), StateField::ModelForgetFlag);
    assert_eq!(mfield(8, -1.0), StateField::ModelDiagonal);
    assert_eq!(mfield(8 + 3, 1.0), StateField::ModelDiagonal); // low part not normalised
}

/// A lean state with an open pending block: 8 staged pairs fit the frame,
/// the 9th opens the block, 11 more join it.
fn lean_with_block() -> (LeanMoments, Vec<u8>) {
    let mut a = LeanMoments::new();
    for i in 0..20 {
        let x = i as f64 * 0.5;
        a.push(x, 3.0 - 2.0 * x + (i % 3) as f64 * 0.125).unwrap();
    }
    let b = a.save_to_vec();
    (a, b)
}

#[test]
fn pending_block_bytes_and_rules() {
    let (a, b) = lean_with_block();
    assert_eq!(a.count(), 20);
    // Payload offset 10: pending pairs (u16); 96: four sets of six values
    // [Σd, Σe, Σd², Σd·e, Σe², 0] (each set holds 3 of the 12 pairs, at
    // distinct x, so Σd² > 0).
    assert_eq!(u16::from_le_bytes([b[16 + 10], b[16 + 11]]), 12);
    for set in 0..4 {
        let at = 16 + 96 + 48 * set;
        let v = |k: usize| f64::from_le_bytes(b[at + 8 * k..at + 8 * k + 8].try_into().unwrap());
        assert!(v(2) > 0.0 && v(4) >= 0.0 && v(5) == 0.0, "set {set}");
    }
    assert_eq!(state::peek(&b).unwrap().count, 20);
    let back = LeanMoments::restore(&b).unwrap();
    assert_eq!(back, a);

    let field_of = |c: Vec<u8>| match LeanMoments::restore(&resealed(c)) {
        Err(StateError::InvalidField { field }) => field,
        other => panic!("{other:?}"),
    };
    let with = |at: usize, v: &[u8]| {
        let mut c = b.clone();
        c[16 + at..16 + at + v.len()].copy_from_slice(v);
        c
    };
    // Longer than a block.
    assert_eq!(
        field_of(with(10, &257u16.to_le_bytes())),
        StateField::Pending
    );
    // An empty block must be all zero.
    assert_eq!(field_of(with(10, &0u16.to_le_bytes())), StateField::Pending);
    // A sum not finite; the unused value of the last set not zero.
    assert_eq!(
        field_of(with(96, &f64::NAN.to_le_bytes())),
        StateField::Pending
    );
    assert_eq!(
        field_of(with(96 + 48 * 3 + 40, &1.0f64.to_le_bytes())),
        StateField::Pending
    );
    // A negative Σd² in the second position set.
    assert_eq!(
        field_of(with(96 + 48 + 16, &(-1.0f64).to_le_bytes())),
        StateField::Pending
    );
    // Sums a block of 12 pairs cannot reach (Σd² and Σd of the first set).
    assert_eq!(
        field_of(with(112, &1e300f64.to_le_bytes())),
        StateField::Pending
    );
    assert_eq!(
        field_of(with(96, &1e200f64.to_le_bytes())),
        StateField::Pending
    );
    // A state beyond the bounds a block opens under (Sxx of 2^1010).
    assert_eq!(
        field_of(with(72, &1.1e304f64.to_le_bytes())),
        StateField::Pending
    );
    // Pending pairs in a state whose frame is not fitted yet.
    let mut staged = hand_built_lean();
    staged[16 + 10] = 1;
    assert_eq!(field_of(staged), StateField::Pending);
    // The full tier never holds a block.
    let mut f = FullMoments::new();
    for i in 0..20 {
        f.push(i as f64, 1.0 + i as f64).unwrap();
    }
    let mut c = f.save_to_vec();
    c[16 + 10] = 1;
    c[16 + 96..16 + 104].copy_from_slice(&19.0f64.to_le_bytes());
    c[16 + 104..16 + 112].copy_from_slice(&20.0f64.to_le_bytes());
    assert_eq!(
        FullMoments::restore(&resealed(c)),
        Err(StateError::InvalidField {
            field: StateField::Pending
        })
    );
}

#[test]
fn error_codes_are_stable() {
    let cases = [
        (StateError::BadMagic, 50),
        (
            StateError::UnsupportedVersion {
                found: 3,
                supported: 2,
            },
            51,
        ),
        (StateError::UnknownKind { kind: 7 }, 52),
        (
            StateError::WrongKind {
                expected: StateKind::Model,
                found: StateKind::LineLean,
            },
            53,
        ),
        (
            StateError::Truncated {
                needed: 16,
                have: 0,
            },
            54,
        ),
        (
            StateError::LengthMismatch {
                expected: 1,
                found: 2,
            },
            55,
        ),
        (
            StateError::ChecksumMismatch {
                stored: 1,
                computed: 2,
            },
            56,
        ),
        (
            StateError::InvalidField {
                field: StateField::Count,
            },
            57,
        ),
        (StateError::BufferTooSmall { needed: 2, have: 1 }, 58),
        (StateError::StorageTooSmall { needed: 2, have: 1 }, 59),
    ];
    for (e, code) in cases {
        assert_eq!(e.code(), code, "{e:?}");
        assert!(!e.to_string().is_empty());
    }
    fn bounds<T: Send + Sync + Copy + 'static + std::error::Error>() {}
    bounds::<StateError>();
}
