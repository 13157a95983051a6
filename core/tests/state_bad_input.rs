//! Bad-input matrix for every public update of the line (lean and full)
//! and model accumulators: each bad call returns its typed error with the
//! stable code of DEVELOPERS.md, and the state is unchanged bit for bit
//! (compared through the saved bytes, which cover every field).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::model::{storage_len, ModelCore, ModelError, ModelMoments, MAX_PARAMS};
use plumbfit::state::{self, StateError, StateTier};
use plumbfit::{Full, Lean, MomentsError, PairMoments};

const NAN: f64 = f64::NAN;
const INF: f64 = f64::INFINITY;

type LineOp<T> = fn(&mut PairMoments<T>) -> Result<(), MomentsError>;

/// `(name, call, expected code, expected error if it carries data)`.
fn line_cases<T: StateTier>() -> Vec<(&'static str, LineOp<T>, u16, Option<MomentsError>)> {
    let nf = |index| Some(MomentsError::NonFinite { index });
    let iw = |index| Some(MomentsError::InvalidWeight { index });
    vec![
        ("push nan x", |a| a.push(NAN, 1.0), 1, nf(0)),
        ("push nan y", |a| a.push(1.0, NAN), 1, nf(0)),
        ("push +inf x", |a| a.push(INF, 1.0), 1, nf(0)),
        ("push -inf y", |a| a.push(1.0, -INF), 1, nf(0)),
        (
            "weighted nan x",
            |a| a.push_weighted(NAN, 1.0, 1.0),
            1,
            nf(0),
        ),
        ("weight zero", |a| a.push_weighted(1.0, 1.0, 0.0), 2, iw(0)),
        ("weight -0", |a| a.push_weighted(1.0, 1.0, -0.0), 2, iw(0)),
        (
            "weight negative",
            |a| a.push_weighted(1.0, 1.0, -1.0),
            2,
            iw(0),
        ),
        ("weight nan", |a| a.push_weighted(1.0, 1.0, NAN), 2, iw(0)),
        ("weight inf", |a| a.push_weighted(1.0, 1.0, INF), 2, iw(0)),
        (
            "extend empty",
            |a| a.extend(&[], &[]),
            4,
            Some(MomentsError::EmptyInput),
        ),
        (
            "extend lengths differ",
            |a| a.extend(&[1.0, 2.0], &[1.0]),
            3,
            Some(MomentsError::LengthMismatch {
                x_len: 2,
                other_len: 1,
            }),
        ),
        (
            "extend nan at 2",
            |a| a.extend(&[1.0, 2.0, NAN, 4.0], &[1.0; 4]),
            1,
            nf(2),
        ),
        (
            "extend inf y at 0",
            |a| a.extend(&[1.0, 2.0], &[INF, 1.0]),
            1,
            nf(0),
        ),
        (
            "extend nan deep in a chunk",
            |a| {
                let mut xs: Vec<f64> = (0..700).map(|i| i as f64).collect();
                xs[650] = NAN;
                a.extend(&xs, &xs.clone())
            },
            1,
            nf(650),
        ),
        (
            "extend_weighted weights short",
            |a| a.extend_weighted(&[1.0, 2.0], &[1.0, 2.0], &[1.0]),
            3,
            Some(MomentsError::LengthMismatch {
                x_len: 2,
                other_len: 1,
            }),
        ),
        (
            "extend_weighted empty",
            |a| a.extend_weighted(&[], &[], &[]),
            4,
            Some(MomentsError::EmptyInput),
        ),
        (
            "extend_weighted zero weight at 1",
            |a| a.extend_weighted(&[1.0, 2.0, 3.0], &[1.0; 3], &[1.0, 0.0, 1.0]),
            2,
            iw(1),
        ),
        (
            "extend_weighted negative weight at 2",
            |a| a.extend_weighted(&[1.0, 2.0, 3.0], &[1.0; 3], &[1.0, 2.0, -3.0]),
            2,
            iw(2),
        ),
        (
            "forget 0",
            |a| a.forget(0.0),
            5,
            Some(MomentsError::InvalidForgetting),
        ),
        ("forget negative", |a| a.forget(-0.5), 5, None),
        ("forget above 1", |a| a.forget(1.5), 5, None),
        ("forget nan", |a| a.forget(NAN), 5, None),
        ("forget inf", |a| a.forget(INF), 5, None),
        (
            "extend huge magnitudes",
            |a| {
                let xs: Vec<f64> = (0..20)
                    .map(|i| if i % 2 == 0 { 1e300 } else { -1e300 })
                    .collect();
                a.extend(&xs, &xs.clone())
            },
            100,
            Some(MomentsError::Overflow),
        ),
        (
            "merge a far-away state",
            |a| {
                // 20 pairs at x = y = 1e300: a valid state (no spread), but
                // its distance from anything near 0 squares to infinity.
                let mut far = PairMoments::new();
                far.extend(&[1e300; 20], &[1e300; 20]).unwrap();
                a.merge(&far)
            },
            100,
            Some(MomentsError::Overflow),
        ),
    ]
}

/// States every case is tried on: empty, staged (frame not yet fitted),
/// framed, framed with weights and forgetting.
fn line_states<T: StateTier>() -> Vec<(&'static str, PairMoments<T>)> {
    let mut staged = PairMoments::<T>::new();
    staged.extend(&[1.0, 2.0, 3.0], &[2.0, 4.5, 5.5]).unwrap();
    let xs: Vec<f64> = (0..20).map(|i| i as f64 * 0.25).collect();
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| 1.5 * x - 2.0 + 0.01 * (x * 3.0).cos())
        .collect();
    let mut framed = PairMoments::<T>::new();
    framed.extend(&xs, &ys).unwrap();
    let mut aged = framed;
    aged.push_weighted(0.5, 1.0, 3.0).unwrap();
    aged.forget(0.9).unwrap();
    vec![
        ("empty", PairMoments::new()),
        ("staged", staged),
        ("framed", framed),
        ("weighted and forgotten", aged),
    ]
}

fn run_line_matrix<T: StateTier>() {
    let mut tried = 0;
    for (sname, s) in line_states::<T>() {
        for (cname, op, code, want) in line_cases::<T>() {
            // Merging a far state into an empty one is a plain copy, and
            // huge staged pairs are only combined once the frame is fitted;
            // both are valid, so those two cases apply to framed states.
            let needs_frame = cname == "merge a far-away state";
            if needs_frame && !(sname == "framed" || sname == "weighted and forgotten") {
                continue;
            }
            let mut a = s;
            let before = a.save_to_vec();
            let err = op(&mut a).expect_err(&format!("{} / {sname} / {cname}: accepted", T::NAME));
            assert_eq!(err.code(), code, "{} / {sname} / {cname}: {err:?}", T::NAME);
            if let Some(w) = want {
                assert_eq!(err, w, "{} / {sname} / {cname}", T::NAME);
            }
            assert_eq!(
                a.save_to_vec(),
                before,
                "{} / {sname} / {cname}: state changed",
                T::NAME
            );
            tried += 1;
        }
    }
    assert_eq!(tried, 4 * 26 - 2, "matrix size");
}

#[test]
fn lean_bad_input_matrix() {
    run_line_matrix::<Lean>();
}

#[test]
fn full_bad_input_matrix() {
    run_line_matrix::<Full>();
}

type ModelOp = fn(&mut ModelMoments) -> Result<(), ModelError>;

/// Model cases for `p = 3` (rows `[1, x, x²]`).
fn model_cases() -> Vec<(&'static str, ModelOp, u16)> {
    vec![
        ("row too short", |m| m.push_row(&[1.0, 2.0], 1.0), 22),
        (
            "row too long",
            |m| m.push_row(&[1.0, 2.0, 3.0, 4.0], 1.0),
            22,
        ),
        ("row nan", |m| m.push_row(&[1.0, NAN, 1.0], 1.0), 20),
        ("row inf", |m| m.push_row(&[1.0, 2.0, -INF], 1.0), 20),
        ("response nan", |m| m.push_row(&[1.0, 2.0, 4.0], NAN), 20),
        (
            "weight zero",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, 0.0),
            21,
        ),
        (
            "weight negative",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, -2.0),
            21,
        ),
        (
            "weight nan",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, NAN),
            21,
        ),
        (
            "weight inf",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, INF),
            21,
        ),
        ("powers nan x", |m| m.push_powers(NAN, 1.0, 1.0), 20),
        ("powers bad weight", |m| m.push_powers(1.0, 1.0, 0.0), 21),
        (
            "block length mismatch",
            |m| m.extend_rows(&[1.0, 2.0, 4.0, 1.0], &[1.0, 2.0]),
            22,
        ),
        (
            "block weights mismatch",
            |m| m.extend_rows_weighted(&[1.0, 2.0, 4.0], &[1.0], &[1.0, 1.0]),
            22,
        ),
        (
            "block nan in row 1",
            |m| m.extend_rows(&[1.0, 2.0, 4.0, 1.0, NAN, 9.0], &[1.0, 2.0]),
            20,
        ),
        (
            "block bad weight in row 1",
            |m| m.extend_rows_weighted(&[1.0, 2.0, 4.0, 1.0, 3.0, 9.0], &[1.0, 2.0], &[1.0, -1.0]),
            21,
        ),
        ("forget 0", |m| m.forget(0.0), 24),
        ("forget negative", |m| m.forget(-0.5), 24),
        ("forget above 1", |m| m.forget(1.5), 24),
        ("forget nan", |m| m.forget(NAN), 24),
        ("forget inf", |m| m.forget(INF), 24),
        (
            "huge magnitudes",
            |m| m.push_row(&[1.0, 1e300, 1e300], 1e300),
            122,
        ),
        (
            "merge a different p",
            |m| m.merge(&ModelMoments::new(2).unwrap()),
            22,
        ),
        (
            "merge bad storage",
            |m| m.merge_storage(&[1.0, 2.0, 3.0]),
            28,
        ),
    ]
}

#[test]
fn model_bad_input_matrix() {
    let mut some = ModelMoments::new(3).unwrap();
    some.push_row(&[1.0, 1.0, 1.0], 2.0).unwrap();
    some.push_row(&[1.0, 2.0, 4.0], 3.5).unwrap();
    let mut many = ModelMoments::new(3).unwrap();
    for i in 0..20 {
        let x = i as f64 * 0.3;
        many.push_powers(x, 0.5 * x * x - x + 2.0, 1.0).unwrap();
    }
    let mut tried = 0;
    for (sname, s) in [
        ("empty", ModelMoments::new(3).unwrap()),
        ("two rows", some),
        ("twenty rows", many),
    ] {
        for (cname, op, code) in model_cases() {
            let mut a = s.clone();
            let before = a.save_to_vec();
            let err = op(&mut a).expect_err(&format!("model / {sname} / {cname}: accepted"));
            assert_eq!(err.code(), code, "model / {sname} / {cname}: {err:?}");
            assert_eq!(
                a.save_to_vec(),
                before,
                "model / {sname} / {cname}: state changed"
            );
            tried += 1;
        }
    }
    assert_eq!(tried, 3 * 23);
}

#[test]
fn model_empty_block_is_refused() {
    // Like the line accumulator, the model refuses an empty block with
    // code 4 (DEVELOPERS.md: empty input) and changes nothing.
    let mut m = ModelMoments::new(2).unwrap();
    m.push_row(&[1.0, 2.0], 3.0).unwrap();
    let before = m.save_to_vec();
    assert_eq!(m.extend_rows(&[], &[]).unwrap_err().code(), 4);
    assert_eq!(m.save_to_vec(), before);
}

#[test]
fn parameter_count_out_of_range() {
    for p in [0usize, MAX_PARAMS + 1, 1000] {
        assert_eq!(ModelMoments::new(p).unwrap_err().code(), 23, "p = {p}");
        let mut buf = [0.0; 400];
        assert_eq!(
            ModelCore::new_in(&mut buf, p).unwrap_err().code(),
            23,
            "p = {p}"
        );
    }
    let mut small = [0.0; 5];
    assert_eq!(ModelCore::new_in(&mut small, 2).unwrap_err().code(), 27);
}

#[test]
fn restore_refuses_p_out_of_range_with_a_good_checksum() {
    let good = ModelMoments::new(2).unwrap().save_to_vec();
    for p in [0u16, MAX_PARAMS as u16 + 1, u16::MAX] {
        let mut b = good.clone();
        b[8..10].copy_from_slice(&p.to_le_bytes());
        let body = b.len() - 4;
        let crc = state::crc32(&b[..body]);
        b[body..].copy_from_slice(&crc.to_le_bytes());
        let e = ModelMoments::restore(&b).unwrap_err();
        assert_eq!(
            e,
            StateError::InvalidField {
                field: state::StateField::Params
            },
            "p = {p}"
        );
        assert_eq!(e.code(), 57);
    }
}

#[test]
fn save_into_a_short_buffer_writes_nothing() {
    let mut a = PairMoments::<Full>::new();
    a.extend(&[1.0, 2.0, 3.0], &[1.0, 2.0, 2.5]).unwrap();
    let mut buf = [0xAAu8; state::FULL_LEN - 1];
    assert_eq!(
        a.save_into(&mut buf),
        Err(StateError::BufferTooSmall {
            needed: state::FULL_LEN,
            have: state::FULL_LEN - 1
        })
    );
    assert!(buf.iter().all(|&b| b == 0xAA));
    let m = ModelMoments::new(4).unwrap();
    let mut buf = [0x55u8; 16];
    assert_eq!(m.save_into(&mut buf).unwrap_err().code(), 58);
    assert!(buf.iter().all(|&b| b == 0x55));
}

#[test]
fn restore_into_short_storage_writes_nothing() {
    let mut m = ModelMoments::new(3).unwrap();
    m.push_row(&[1.0, 2.0, 4.0], 1.0).unwrap();
    let bytes = m.save_to_vec();
    let mut buf = [9.5f64; 10];
    assert_eq!(
        ModelCore::restore_in(&mut buf, &bytes).unwrap_err(),
        StateError::StorageTooSmall {
            needed: storage_len(3),
            have: 10
        }
    );
    assert!(buf.iter().all(|&v| v == 9.5));
}
