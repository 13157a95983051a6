//! Replicate-level store checks for the state harness (a child module of
//! `harness.rs`, sharing its input decoder and operation list).

use super::{decode_one, fix_crc, Op, Src};
use plumbfit::calib::{CalibError, FixedLevels, LackOfFit, Level, LevelSet};
use plumbfit::state::{self, StateError, StateField, StateKind};

/// The two store types behind one interface, for the shared checks.
pub(super) trait Store: Clone + PartialEq + core::fmt::Debug + Sized {
    const NAME: &'static str;
    fn empty() -> Self;
    fn push(&mut self, x: f64, y: f64) -> Result<(), CalibError>;
    fn push_weighted(&mut self, x: f64, y: f64, w: f64) -> Result<(), CalibError>;
    fn extend(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), CalibError>;
    fn extend_weighted(&mut self, xs: &[f64], ys: &[f64], ws: &[f64]) -> Result<(), CalibError>;
    fn merge_from(&mut self, o: &Self) -> Result<(), CalibError>;
    fn save(&self) -> Result<Vec<u8>, StateError>;
    fn restore(b: &[u8]) -> Result<Self, StateError>;
    fn all(&self) -> &[Level];
    fn count(&self) -> u64;
    fn lack_of_fit(&self) -> Option<LackOfFit>;
}

macro_rules! store_common {
    () => {
        fn push(&mut self, x: f64, y: f64) -> Result<(), CalibError> {
            Self::push(self, x, y)
        }
        fn push_weighted(&mut self, x: f64, y: f64, w: f64) -> Result<(), CalibError> {
            Self::push_weighted(self, x, y, w)
        }
        fn extend(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), CalibError> {
            Self::extend(self, xs, ys)
        }
        fn extend_weighted(
            &mut self,
            xs: &[f64],
            ys: &[f64],
            ws: &[f64],
        ) -> Result<(), CalibError> {
            Self::extend_weighted(self, xs, ys, ws)
        }
        fn restore(b: &[u8]) -> Result<Self, StateError> {
            Self::restore(b)
        }
        fn all(&self) -> &[Level] {
            self.levels()
        }
        fn count(&self) -> u64 {
            Self::count(self)
        }
        fn lack_of_fit(&self) -> Option<LackOfFit> {
            self.lack_of_fit_poly(&[0.5, -1.0]).ok()
        }
    };
}

impl Store for LevelSet {
    const NAME: &'static str = "level set";
    fn empty() -> Self {
        LevelSet::new()
    }
    fn merge_from(&mut self, o: &Self) -> Result<(), CalibError> {
        self.merge(o)
    }
    fn save(&self) -> Result<Vec<u8>, StateError> {
        self.save_to_vec()
    }
    store_common!();
}

impl<const N: usize> Store for FixedLevels<N> {
    const NAME: &'static str = "fixed levels";
    fn empty() -> Self {
        FixedLevels::new()
    }
    fn merge_from(&mut self, o: &Self) -> Result<(), CalibError> {
        self.merge(o)
    }
    fn save(&self) -> Result<Vec<u8>, StateError> {
        let mut v = vec![0u8; self.encoded_len()];
        let n = self.save_into(&mut v)?;
        assert_eq!(n, v.len());
        Ok(v)
    }
    store_common!();
}

fn level_bits(s: &[Level]) -> Vec<[u64; 5]> {
    s.iter()
        .map(|l| {
            [
                l.x.to_bits(),
                l.count,
                l.weight_sum.to_bits(),
                l.mean_y.to_bits(),
                l.m2.to_bits(),
            ]
        })
        .collect()
}

/// Every reachable store obeys the format's rules, saves (unless it has
/// more levels than the cap) and restores bit for bit.
fn levels_roundtrip<S: Store>(a: &S) {
    let ls = a.all();
    for (i, l) in ls.iter().enumerate() {
        assert!(
            l.x.is_finite() && l.x.to_bits() != (-0.0f64).to_bits(),
            "{}: bad key {l:?}",
            S::NAME
        );
        if i > 0 {
            assert!(ls[i - 1].x < l.x, "{}: levels out of order", S::NAME);
        }
        assert!(l.count >= 1 && l.weight_sum.is_finite() && l.weight_sum > 0.0);
        assert!(l.mean_y.is_finite() && l.m2.is_finite() && l.m2 >= 0.0);
        assert!(
            l.count > 1 || l.m2 == 0.0,
            "{}: spread of one reading",
            S::NAME
        );
    }
    match a.save() {
        Ok(bytes) => {
            assert!(ls.len() <= state::MAX_LEVELS);
            assert_eq!(bytes.len(), state::levels_len(ls.len()));
            let r = S::restore(&bytes)
                .unwrap_or_else(|e| panic!("a reachable level store was refused: {e:?}\n{a:?}"));
            assert_eq!(
                level_bits(r.all()),
                level_bits(ls),
                "round trip changed the store"
            );
            assert!(r == *a);
            assert_eq!(r.save().unwrap(), bytes);
            let info = state::peek(&bytes).unwrap();
            assert_eq!(info.kind, StateKind::Levels);
            assert_eq!(info.count, a.count());
            assert_eq!(info.params as usize, ls.len());
            // The heap store reads the fixed store's bytes and vice versa.
            let set = LevelSet::restore(&bytes)
                .unwrap_or_else(|e| panic!("the heap store refused: {e:?}"));
            assert_eq!(level_bits(set.levels()), level_bits(ls));
        }
        Err(e) => {
            assert!(ls.len() > state::MAX_LEVELS, "save refused: {e:?}");
            assert_eq!(
                e,
                StateError::InvalidField {
                    field: StateField::Params
                }
            );
        }
    }
}

fn levels_query<S: Store>(a: &S) {
    if let Some(f) = a.lack_of_fit() {
        for v in [f.ss_lack_of_fit, f.ss_pure_error] {
            assert!(v.is_finite() && v >= 0.0, "lack-of-fit sum {v}\n{a:?}");
        }
        assert!(!f.f_stat.is_nan() && f.f_stat >= 0.0);
        assert_eq!(f.count, a.count());
    }
}

fn levels_step<S: Store>(a: &mut S, f: impl FnOnce(&mut S) -> Result<(), CalibError>) {
    let copy = a.clone();
    let before = level_bits(a.all());
    match f(a) {
        Ok(()) => levels_roundtrip(a),
        Err(_) => {
            assert_eq!(
                level_bits(a.all()),
                before,
                "a failed call changed the store"
            );
            assert!(*a == copy);
        }
    }
}

/// The operation sequence of `check_ops` on one store type (`A` gets the
/// unit-weight operations, `B` the weighted ones, as for the
/// accumulators; the store has no forgetting).
pub(super) fn run_levels<S: Store>(ops: &[Op]) {
    let mut a = S::empty();
    let mut b = S::empty();
    for op in ops {
        match op {
            Op::Push(x, y) => levels_step(&mut a, |a| a.push(*x, *y)),
            Op::PushWeighted(x, y, w) => levels_step(&mut b, |b| b.push_weighted(*x, *y, *w)),
            Op::Extend(xs, ys) => levels_step(&mut a, |a| a.extend(xs, ys)),
            Op::ExtendWeighted(xs, ys, ws) => {
                levels_step(&mut b, |b| b.extend_weighted(xs, ys, ws))
            }
            Op::MergeIntoA => {
                let o = b.clone();
                levels_step(&mut a, |a| a.merge_from(&o))
            }
            Op::MergeIntoB => {
                let o = a.clone();
                levels_step(&mut b, |b| b.merge_from(&o))
            }
            Op::MergeSelf => {
                let o = a.clone();
                levels_step(&mut a, |a| a.merge_from(&o))
            }
            Op::ForgetA(_) | Op::ForgetB(_) => {}
            Op::RoundTrip => {
                levels_roundtrip(&a);
                if let Ok(bytes) = a.save() {
                    a = S::restore(&bytes).unwrap();
                }
            }
            Op::Swap => core::mem::swap(&mut a, &mut b),
            Op::Query => {
                levels_query(&a);
                levels_query(&b);
            }
            Op::ResetB => b = S::empty(),
        }
    }
    levels_query(&a);
    levels_roundtrip(&a);
    levels_roundtrip(&b);
}

/// A restored (possibly forged but valid) store behaves like any other.
fn exercise_levels<S: Store>(mut a: S) {
    levels_query(&a);
    let o = a.clone();
    levels_step(&mut a, |a| a.merge_from(&o));
    levels_step(&mut a, |a| a.push(2.5, -1.0));
    let x0 = a.all().first().map_or(0.0, |l| l.x);
    levels_step(&mut a, |a| a.push_weighted(x0, 1e300, 1e300));
    levels_step(&mut a, |a| a.extend(&[x0, 1.0, x0], &[0.5, 0.25, 0.125]));
    levels_query(&a);
}

/// Both store types on one blob; returns whether it was accepted.
pub(super) fn levels_decode_one(bytes: &[u8]) -> bool {
    let set = LevelSet::restore(bytes);
    let big = FixedLevels::<{ state::MAX_LEVELS }>::restore(bytes);
    let small = FixedLevels::<4>::restore(bytes);
    match (&set, &big) {
        (Ok(s), Ok(f)) => {
            // The kind exists only from version 2 on, so only the current
            // version is read and the encoding is exactly canonical.
            assert_eq!(
                s.save_to_vec().unwrap(),
                bytes,
                "level encoding is not canonical"
            );
            assert_eq!(level_bits(s.levels()), level_bits(f.levels()));
            let info = state::peek(bytes).unwrap();
            assert_eq!(info.count, s.count());
            assert_eq!(info.params as usize, s.level_count());
            match &small {
                Ok(t) => assert_eq!(level_bits(t.levels()), level_bits(s.levels())),
                Err(e) => {
                    assert!(s.level_count() > 4, "small store refused: {e:?}");
                    assert_eq!(
                        *e,
                        StateError::StorageTooSmall {
                            needed: s.level_count(),
                            have: 4
                        }
                    );
                }
            }
            exercise_levels(s.clone());
            exercise_levels(*f);
            true
        }
        (Err(e1), Err(e2)) => {
            assert_eq!(e1, e2, "the store types disagree on why");
            assert_eq!(small.as_ref().err(), Some(e1));
            assert!(
                (50..=59).contains(&e1.code()),
                "code {} for {e1:?}",
                e1.code()
            );
            false
        }
        _ => panic!("the store types disagree: {set:?} / {big:?}"),
    }
}

/// A level blob around `c` records decoded from `s` (well-formed envelope,
/// correct CRC); keys sorted when `sorted`, so that the deeper rules are
/// reached.
fn built_blob(s: &mut Src<'_>, sorted: bool) -> Vec<u8> {
    let c = s.byte() as usize % (state::MAX_LEVELS + 2);
    let mut recs: Vec<(f64, u64, f64, f64, f64)> = Vec::with_capacity(c);
    for _ in 0..c {
        let count = match s.byte() % 8 {
            0 => 0,
            1 => u64::MAX - s.byte() as u64,
            2 => s.u64(),
            3 => 1,
            _ => 1 + s.byte() as u64,
        };
        let m2 = if count == 1 && !s.byte().is_multiple_of(4) {
            0.0
        } else {
            s.value()
        };
        recs.push((s.value(), count, s.weight(), s.value(), m2));
    }
    if sorted {
        recs.sort_by(|p, q| p.0.total_cmp(&q.0));
    }
    let mut b = Vec::with_capacity(state::levels_len(c));
    b.extend_from_slice(&state::MAGIC);
    b.extend_from_slice(&state::FORMAT_VERSION.to_le_bytes());
    b.push(StateKind::Levels.code());
    b.push(0);
    b.extend_from_slice(&(c as u16).to_le_bytes());
    b.extend_from_slice(&0u16.to_le_bytes());
    b.extend_from_slice(&((c * state::LEVEL_RECORD_LEN) as u32).to_le_bytes());
    for (x, n, w, m, v) in recs {
        for word in [x.to_bits(), n, w.to_bits(), m.to_bits(), v.to_bits()] {
            b.extend_from_slice(&word.to_le_bytes());
        }
    }
    let crc = state::crc32(&b);
    b.extend_from_slice(&crc.to_le_bytes());
    b
}

/// Level-store decoding: byte 0 picks the form — the input as a blob, the
/// input with its checksum corrected, or records decoded from the input
/// (sorted or not) in a well-formed envelope. The generic decode checks
/// run on the same bytes.
pub fn check_levels_decode(data: &[u8]) {
    let mode = data.first().copied().unwrap_or(0);
    let rest = data.get(1..).unwrap_or(&[]);
    let blob = match mode % 4 {
        0 => rest.to_vec(),
        1 => fix_crc(rest),
        m => built_blob(&mut Src::new(rest), m == 2),
    };
    levels_decode_one(&blob);
    decode_one(&blob);
}
