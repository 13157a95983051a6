//! The replicate-level store's state (kind 4): one fixed-size record per
//! level, in increasing `x`.
//!
//! The header's `p` field holds the level count `c`. The store's capacity
//! is not saved: it belongs to the receiving store, not to the readings,
//! so a heap [`LevelSet`] and a [`FixedLevels<N>`] holding the same
//! readings give the same bytes. A fixed store refuses a state with more
//! than `N` levels ([`StateError::StorageTooSmall`]). Level keys are exact
//! bit patterns (no tolerance), so the options field stays zero.

use super::{check, field, open_kind, write_blob, Get, Put, StateError, StateField, StateKind};
use super::{HEADER_LEN, MAX_ENCODED_LEN, TRAILER_LEN};
use crate::calib::{FixedLevels, Level, LevelSet};
use alloc::vec;
use alloc::vec::Vec;

/// The format version that introduced the level kind; a blob of kind 4
/// with an older version is refused as an unknown kind.
pub(super) const LEVELS_SINCE: u16 = 2;

/// Bytes of one level record: `x`, count, weight sum, mean of `y`, `m2`.
pub const LEVEL_RECORD_LEN: usize = 40;

/// Most levels a level state holds: 62 records (2480 bytes) keep the blob
/// within [`MAX_ENCODED_LEN`], so one buffer of that size still holds a
/// state of any kind. A [`LevelSet`] with more levels cannot be saved.
pub const MAX_LEVELS: usize = 62;

/// Encoded length of a level state with `c` levels (`c ≤ MAX_LEVELS`):
/// `20 + 40·c` bytes.
pub const fn levels_len(c: usize) -> usize {
    HEADER_LEN + c * LEVEL_RECORD_LEN + TRAILER_LEN
}

const _: () = assert!(levels_len(MAX_LEVELS) <= MAX_ENCODED_LEN);
const _: () = assert!(levels_len(MAX_LEVELS + 1) > MAX_ENCODED_LEN);
const _: () = assert!(MAX_LEVELS <= u16::MAX as usize);

/// Reading count of an unvalidated payload, saturated (for `peek`).
pub(super) fn peek_count(payload: &[u8]) -> u64 {
    payload
        .chunks_exact(LEVEL_RECORD_LEN)
        .fold(0u64, |n, r| n.saturating_add(super::u64_at(r, 8)))
}

fn put_level(w: &mut Put<'_>, l: &Level) {
    w.f64(l.x);
    w.bytes(&l.count.to_le_bytes());
    w.f64(l.weight_sum);
    w.f64(l.mean_y);
    w.f64(l.m2);
}

fn get_level(r: &mut Get<'_>) -> Level {
    Level {
        x: r.f64(),
        count: r.u64(),
        weight_sum: r.f64(),
        mean_y: r.f64(),
        m2: r.f64(),
    }
}

fn save_levels(levels: &[Level], out: &mut [u8]) -> Result<usize, StateError> {
    let c = levels.len();
    if c > MAX_LEVELS {
        return Err(field(StateField::Params));
    }
    write_blob(out, StateKind::Levels, c as u16, levels_len(c), |b| {
        let mut w = Put { b, at: 0 };
        for l in levels {
            put_level(&mut w, l);
        }
    })
}

/// Opens a level blob and checks every record (no allocation); returns
/// the payload, whose length is exactly `c` records.
fn open_levels(bytes: &[u8]) -> Result<&[u8], StateError> {
    let (h, payload) = open_kind(bytes, StateKind::Levels)?;
    let c = h.p as usize;
    let mut r = Get { b: payload, at: 0 };
    let mut total = 0u64;
    let mut prev: Option<f64> = None;
    for _ in 0..c {
        let l = get_level(&mut r);
        // Keys: finite, the one zero is +0.0, strictly increasing (the
        // store's sorted, duplicate-free order).
        check(
            l.x.is_finite() && l.x.to_bits() != (-0.0f64).to_bits() && prev.is_none_or(|p| p < l.x),
            StateField::LevelX,
        )?;
        prev = Some(l.x);
        check(l.count >= 1, StateField::LevelCount)?;
        total = total
            .checked_add(l.count)
            .ok_or(field(StateField::LevelCount))?;
        check(
            l.weight_sum.is_finite() && l.weight_sum > 0.0,
            StateField::LevelWeightSum,
        )?;
        check(l.mean_y.is_finite(), StateField::LevelMean)?;
        check(
            l.m2.is_finite()
                && l.m2 >= 0.0
                && !l.m2.is_sign_negative()
                && (l.count > 1 || l.m2 == 0.0),
            StateField::LevelM2,
        )?;
    }
    Ok(payload)
}

/// The records of a payload that [`open_levels`] accepted.
fn records(payload: &[u8]) -> impl ExactSizeIterator<Item = Level> + '_ {
    payload.chunks_exact(LEVEL_RECORD_LEN).map(|b| {
        let mut r = Get { b, at: 0 };
        get_level(&mut r)
    })
}

impl LevelSet {
    /// Encoded length of this store's state: [`levels_len`]`(c)`.
    pub fn encoded_len(&self) -> usize {
        levels_len(self.level_count())
    }

    /// Writes the state into `out` (no allocation); returns the number of
    /// bytes written. The same readings always give the same bytes, from
    /// either store type and every door.
    ///
    /// # Errors
    /// [`StateError::BufferTooSmall`] with the required length;
    /// [`StateError::InvalidField`] naming `p` if the store holds more
    /// than [`MAX_LEVELS`] levels. Nothing is written on error.
    pub fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        save_levels(self.levels(), out)
    }

    /// The encoded state in a new vector.
    ///
    /// # Errors
    /// [`StateError::InvalidField`] naming `p` for more than
    /// [`MAX_LEVELS`] levels.
    pub fn save_to_vec(&self) -> Result<Vec<u8>, StateError> {
        let c = self.level_count();
        if c > MAX_LEVELS {
            return Err(field(StateField::Params));
        }
        let mut v = vec![0u8; levels_len(c)];
        save_levels(self.levels(), &mut v)?;
        Ok(v)
    }

    /// Rebuilds a store from bytes written by any door's save.
    /// `restore(save(s))` equals `s` bit for bit. Everything is checked
    /// before the store is built, which allocates only the `c ≤ 62` levels
    /// of the checked length.
    ///
    /// # Errors
    /// Every [`StateError`] format error; [`StateError::WrongKind`] for an
    /// accumulator state; [`StateError::InvalidField`] naming the first
    /// level field that breaks a rule of `docs/state-format.md`.
    pub fn restore(bytes: &[u8]) -> Result<Self, StateError> {
        let payload = open_levels(bytes)?;
        Ok(LevelSet::from_checked(records(payload).collect()))
    }
}

impl<const N: usize> FixedLevels<N> {
    /// Encoded length of this store's state: [`levels_len`]`(c)`.
    pub fn encoded_len(&self) -> usize {
        levels_len(self.level_count())
    }

    /// Writes the state into `out` (no allocation); returns the number of
    /// bytes written (the same bytes as a [`LevelSet`] with the same
    /// readings).
    ///
    /// # Errors
    /// [`StateError::BufferTooSmall`] with the required length;
    /// [`StateError::InvalidField`] naming `p` if the store holds more
    /// than [`MAX_LEVELS`] levels (only possible for `N > 62`). Nothing
    /// is written on error.
    pub fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        save_levels(self.levels(), out)
    }

    /// Rebuilds a store in place (no allocation) from bytes written by any
    /// door's save.
    ///
    /// # Errors
    /// As [`LevelSet::restore`], plus [`StateError::StorageTooSmall`]
    /// (levels needed, capacity `N`) for a state with more than `N` levels.
    pub fn restore(bytes: &[u8]) -> Result<Self, StateError> {
        let payload = open_levels(bytes)?;
        let c = payload.len() / LEVEL_RECORD_LEN;
        FixedLevels::from_checked(records(payload))
            .ok_or(StateError::StorageTooSmall { needed: c, have: N })
    }
}
