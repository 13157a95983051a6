//! The pair-moment accumulator: weighted count, means and centred co-moments
//! of paired readings `(x, y)`, updated one pair at a time or a slice at a
//! time, merged exactly, and aged by a forgetting factor.
//!
//! # Tiers
//! * [`Lean`]: weight sums, count, means, `Sxx`, `Sxy`, `Syy`; the fastest path.
//! * [`Full`]: adds the centred co-moments of orders 3 and 4, the lag-1
//!   difference sums `ΣΔx²`, `ΣΔxΔy`, `ΣΔy²` (with the first and last pair so
//!   a merge adds the one boundary term), and the extremes of `x` and `y`.
//!
//! Neither tier allocates; both are plain `Copy` values.
//!
//! # Pending block (lean tier)
//! A lean `push` does not update the centred moments itself: it adds the
//! pair's offsets from the current means to a few plain sums, and every
//! [`PENDING_BLOCK`] pushes, or before anything else reads or changes the
//! moments, those sums are merged in like an `extend` chunk. Queries merge on a copy, so when they run does not change any
//! later result. The block is part of the state and of its saved bytes.
//!
//! # Frame
//! Moments are kept about a frame `(x0, y0, b0)`: `dx = x − x0` and
//! `v = (y − y0) − b0·dx`. The frame is fitted to the first [`STAGE`] pairs
//! (held raw until then), so `v` is nearly the residual and the sums that a
//! fit subtracts are small: shifting alone keeps offset data (means near
//! 1e9) accurate, and the provisional slope keeps near-perfect fits accurate
//! (measured on NIST Norris: Σe⁴ from raw co-moments has 4.9 correct digits,
//! from the provisional frame 13.7). A merge re-expresses one operand in the
//! other's frame with the exact binomial frame change, which needs moments
//! up to the same order, so merges stay exact.
//!
//! # Sources
//! Welford (1962) and West (1979) for one-pair updates; Chan, Golub &
//! LeVeque (1979) for the second-order merge; Pébay (2008) and Pébay et al.
//! (2016) for the higher-order bivariate merge.

use crate::dd::{two_prod, two_sum};
use crate::kernel::{self, FullChunk, LeanChunk, CHUNK, LONG_CHUNK};
use core::fmt::Debug;

mod feed;
pub use feed::PairFeed;

/// Number of pairs held raw before the frame is fitted.
pub const STAGE: usize = 8;

/// Most unit-weight pushes a lean state gathers in its pending block before
/// folding them into the centred moments (one fold per block keeps its cost
/// out of the push).
pub const PENDING_BLOCK: usize = 256;

/// Sets of block sums, by pair position modulo this (see the pending-block notes);
/// one set measured 1.5 times slower per push.
const PEND_LANES: usize = 4;

/// Step of `pend_at` per pair: the new `pend_at & PEND_SET_MASK` is then 8
/// times the place of the pushed pair's position set, which addresses its
/// sums with no more arithmetic (see [`pend_slots`]).
const PEND_STEP: isize = 8;
/// See [`PEND_STEP`].
const PEND_SET_MASK: isize = PEND_STEP * (PEND_LANES as isize - 1);

/// Slots, in the flattened stage, of position set `i`'s
/// `[Σd, Σe, Σd², Σd·e, Σe²]` (see the pending-block notes).
#[inline(always)]
pub(crate) const fn pend_slots(i: usize) -> [usize; 5] {
    // Set `i` sits at place `i + 1` (mod PEND_LANES): a push finds its
    // place from the length after it.
    let p = (i + 1) % PEND_LANES;
    let (a, b) = (2 * p, 2 * PEND_LANES + 2 * p);
    [a, a + 1, b, b + 1, 4 * PEND_LANES + 2 * p]
}

/// Bound on `|d|` and `|e|` of a pair entering the pending block and on
/// the state's means (2^300).
const PEND_LIMIT: f64 = 2.037035976334486e90;
/// `PEND_LIMIT²` (2^600).
const PEND_LIMIT_SQ: f64 = 4.149515568880993e180;
/// Bound on `|b0|` for opening a block (2^190).
const PEND_SLOPE: f64 = 1.5692754338466702e57;
/// Bound on the state's sums and weights for opening a block (2^1000).
const PEND_BIG: f64 = 1.0715086071862673e301;

// Pending-block notes. The pending block: unit-weight pushes not yet folded into the centred
// moments (lean tier, framed state only). It holds sums of `d = dx − mx`
// and `e = v − mv`, the pair's offsets in the frame from the state's means.
// The means do not change while a block is open (everything that changes
// the moments folds the block first), so the block needs no shift of its
// own. About the means, a sum's rounding is relative to what the block adds
// to the state's moments (`Σd² = S_block + n·d̄²`, and the merge adds
// exactly those two parts), as in a one-pair centred update.
//
// Storage: `pend_len()` pairs, and the sums in the stage array, which is
// empty once the frame is fitted. Position set `i` (the block's pairs at
// positions `≡ i (mod PEND_LANES)`) is at the flattened slots
// `pend_slots(i)`: with place `p = (i + 1) mod PEND_LANES`, `[Σd, Σe]` at
// `2p`, `[Σd², Σd·e]` at `2·PEND_LANES + 2p`, `Σe²` at `4·PEND_LANES + 2p`
// (the slot after it stays 0). With `r = 8p` every sum of the set is at
// byte offset `2r` plus a constant, so a push finds its set with one mask
// of its new length (stored first, so the mask needs no copy of the
// length). Separate sets keep the adds through
// memory from forming one dependency chain across pushes. All zero when
// `pend_len() == 0`. Saved bytes keep the version 2 rows
// (`[Σd, Σe, Σd²]`, `[Σd·e, Σe², 0]` in rows `2i`, `2i + 1`; see
// `saved_stage`). The length is kept as `pend_open` and `pend_at`, a
// negative step count while the block has room, so a push tests one sign
// and masks its set out of the same word (a `u16` length cost two
// widenings, an offset compare and a modulo each push; rows of three
// cost a multiply by 3 for the set's offset).
//
// The block opens only on a state whose sums and means are within
// `PEND_BIG` and `PEND_LIMIT` (and `|b0| <= PEND_SLOPE`), and takes only
// pairs with `d² + e² <= PEND_LIMIT²`. Then `Σd² <= 2^608` for at most
// `PENDING_BLOCK` pairs and the fold's terms stay below 2^1001, so the
// fold cannot overflow: every push into the block is final when it returns.
const _: () = assert!(
    2 * PEND_LANES == STAGE && 6 * PEND_LANES <= 3 * STAGE && PENDING_BLOCK < u16::MAX as usize
);

/// Errors from updating a pair-moment accumulator. The accumulator is left
/// exactly as it was before the failing call.
///
/// Display messages are for people and may change; match on the variant or
/// use [`MomentsError::code`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum MomentsError {
    /// An `x` or `y` value (or a weight) is NaN or infinite.
    #[error("non-finite value at index {index}")]
    NonFinite {
        /// Position of the offending pair within the call's input.
        index: usize,
    },
    /// A weight is zero, negative or not finite.
    #[error("weight at index {index} is not a positive finite number")]
    InvalidWeight {
        /// Position of the offending weight within the call's input.
        index: usize,
    },
    /// Input slices differ in length.
    #[error("input lengths differ: {x_len} x values, {other_len} other values")]
    LengthMismatch {
        /// Length of the `x` slice.
        x_len: usize,
        /// Length of the first slice that differs from it.
        other_len: usize,
    },
    /// The input slices are empty.
    #[error("input is empty")]
    EmptyInput,
    /// A forgetting factor outside `(0, 1]`.
    #[error("forgetting factor must lie in (0, 1]")]
    InvalidForgetting,
    /// The update would make a moment overflow to infinity.
    #[error("moment overflow; values too large for this accumulator")]
    Overflow,
}

impl MomentsError {
    /// Stable numeric code, shared with the C and Python bindings.
    pub const fn code(&self) -> u16 {
        match self {
            MomentsError::NonFinite { .. } => 1,
            MomentsError::InvalidWeight { .. } => 2,
            MomentsError::LengthMismatch { .. } => 3,
            MomentsError::EmptyInput => 4,
            MomentsError::InvalidForgetting => 5,
            MomentsError::Overflow => 100,
        }
    }
}

mod sealed {
    use super::HigherMoments;
    pub trait Sealed {
        type Extra: super::Extra;
        fn higher(e: &Self::Extra) -> Option<&HigherMoments>;
        fn with_higher(e: &mut Self::Extra, f: impl FnOnce(&mut HigherMoments));
    }
}

/// Marker for an accumulator tier; implemented by [`Lean`] and [`Full`] only.
pub trait Tier: sealed::Sealed + Copy + Clone + Default + Debug + PartialEq + 'static {
    /// Whether the tier keeps moments of orders 3 and 4.
    const IS_FULL: bool;
    /// Short name used in reports and state bytes.
    const NAME: &'static str;
}

/// Lean tier: second moments only.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Lean;

/// Full tier: co-moments to order 4, lag-1 sums and extremes.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Full;

impl sealed::Sealed for Lean {
    type Extra = NoExtra;
    #[inline]
    fn higher(_: &NoExtra) -> Option<&HigherMoments> {
        None
    }
    #[inline]
    fn with_higher(_: &mut NoExtra, _: impl FnOnce(&mut HigherMoments)) {}
}
impl sealed::Sealed for Full {
    type Extra = HigherMoments;
    #[inline]
    fn higher(e: &HigherMoments) -> Option<&HigherMoments> {
        Some(e)
    }
    #[inline]
    fn with_higher(e: &mut HigherMoments, f: impl FnOnce(&mut HigherMoments)) {
        f(e)
    }
}
impl Tier for Lean {
    const IS_FULL: bool = false;
    const NAME: &'static str = "lean";
}
impl Tier for Full {
    const IS_FULL: bool = true;
    const NAME: &'static str = "full";
}

/// Lean-tier accumulator.
pub type LeanMoments = PairMoments<Lean>;
/// Full-tier accumulator.
pub type FullMoments = PairMoments<Full>;

/// The lean tier's (empty) extra storage.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct NoExtra;

/// The full tier's extra storage: co-moments of orders 3–4 in the frame,
/// lag-1 difference sums, first/last pair and extremes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HigherMoments {
    /// `m[p][q] = Σ w (dx − mx)^p (v − mv)^q` for `3 <= p + q <= 4`.
    pub(crate) m: [[f64; 5]; 5],
    /// `[ΣΔx², ΣΔx·Δv, ΣΔv²]` over consecutive pairs, unweighted.
    pub(crate) lag: [f64; 3],
    pub(crate) first: (f64, f64),
    pub(crate) last: (f64, f64),
    pub(crate) xmin: f64,
    pub(crate) xmax: f64,
    pub(crate) ymin: f64,
    pub(crate) ymax: f64,
}

impl Default for HigherMoments {
    fn default() -> Self {
        HigherMoments {
            m: [[0.0; 5]; 5],
            lag: [0.0; 3],
            first: (0.0, 0.0),
            last: (0.0, 0.0),
            xmin: f64::INFINITY,
            xmax: f64::NEG_INFINITY,
            ymin: f64::INFINITY,
            ymax: f64::NEG_INFINITY,
        }
    }
}

/// Tier-specific storage operations (internal).
pub trait Extra:
    Copy + Clone + Default + Debug + PartialEq + ConstDefault + sealed_extra::Sealed
{
}
mod sealed_extra {
    pub trait Sealed {}
}
impl sealed_extra::Sealed for NoExtra {}
impl sealed_extra::Sealed for HigherMoments {}
impl Extra for NoExtra {}
impl Extra for HigherMoments {}

/// Pair-moment accumulator of tier `T` ([`LeanMoments`] or [`FullMoments`]).
///
/// Pushing, extending and merging in any order and grouping give the same
/// moments to rounding. Every mutating call either succeeds completely or
/// returns an error and leaves the value unchanged.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PairMoments<T: Tier> {
    pub(crate) count: u64,
    pub(crate) w: f64,
    pub(crate) w2: f64,
    pub(crate) x0: f64,
    pub(crate) y0: f64,
    pub(crate) b0: f64,
    /// The frame is fixed and the moments below are live.
    pub(crate) framed: bool,
    /// Every committed pair has `x == x0` exactly, so `b0` may still change
    /// at no cost (all x-moments are zero).
    pub(crate) slope_free: bool,
    pub(crate) weighted: bool,
    pub(crate) forgotten: bool,
    pub(crate) mx: f64,
    pub(crate) mv: f64,
    pub(crate) sxx: f64,
    pub(crate) sxv: f64,
    pub(crate) svv: f64,
    /// Before the frame is fitted, the staged raw pairs `(x, y, w)`;
    /// after, the pending block's sums (see the pending-block notes).
    pub(crate) stage: [[f64; 3]; STAGE],
    pub(crate) stage_len: u8,
    /// A pending block is open (lean tier only, framed; its sums are in
    /// `stage`). Every query folds it on a copy.
    pub(crate) pend_open: bool,
    /// While the block is open and has room, `PEND_STEP · (k − PENDING_BLOCK)`
    /// for its `k` pairs (negative); 0 otherwise. See [`Self::pend_len`].
    pub(crate) pend_at: isize,
    pub(crate) hi: <T as sealed::Sealed>::Extra,
}

impl<T: Tier> Default for PairMoments<T> {
    fn default() -> Self {
        Self::new()
    }
}

/// The second-order moments of a lean state (internal): a fold's result,
/// or the state's own for the pending-block bounds.
#[derive(Clone, Copy, Debug)]
struct Folded {
    count: u64,
    w: f64,
    w2: f64,
    mx: f64,
    mv: f64,
    sxx: f64,
    sxv: f64,
    svv: f64,
}

impl Folded {
    /// Within the bounds a block may be open under, with frame slope `b0`
    /// (see the pending-block notes).
    fn in_pending_bounds(&self, b0: f64) -> bool {
        b0.abs() <= PEND_SLOPE
            && self.mx.abs() <= PEND_LIMIT
            && self.mv.abs() <= PEND_LIMIT
            && self.sxx <= PEND_BIG
            && self.svv <= PEND_BIG
            && self.sxv.abs() <= PEND_BIG
            && self.w <= PEND_BIG
            && self.w2 <= PEND_BIG
            && self.count <= 1 << 62
    }
}

/// A set of moments in one frame, used for merges (internal).
#[derive(Clone, Copy, Debug)]
struct Set {
    w: f64,
    mx: f64,
    mv: f64,
    /// `m[p][q]` for `2 <= p + q <= 4` (orders above 2 only in the full tier).
    m: [[f64; 5]; 5],
}

const BINOM: [[f64; 5]; 5] = [
    [1.0, 0.0, 0.0, 0.0, 0.0],
    [1.0, 1.0, 0.0, 0.0, 0.0],
    [1.0, 2.0, 1.0, 0.0, 0.0],
    [1.0, 3.0, 3.0, 1.0, 0.0],
    [1.0, 4.0, 6.0, 4.0, 1.0],
];

#[inline]
fn powers(a: f64) -> [f64; 5] {
    let a2 = a * a;
    [1.0, a, a2, a2 * a, a2 * a2]
}

/// Pébay's bivariate merge of orders 3–4 (NUMERICS A4, binomial form):
/// each side's points shift by `a` (A) or `b` (B) relative to the new means.
fn merge_higher(a: &Set, b: &Set, dx: f64, dv: f64) -> [[f64; 5]; 5] {
    let w = a.w + b.w;
    let (pax, pav) = (powers(-b.w * dx / w), powers(-b.w * dv / w));
    let (pbx, pbv) = (powers(a.w * dx / w), powers(a.w * dv / w));
    let get = |s: &Set, i: usize, j: usize| -> f64 {
        match (i, j) {
            (0, 0) => s.w,
            (1, 0) | (0, 1) => 0.0,
            _ => s.m[i][j],
        }
    };
    let mut out = [[0.0f64; 5]; 5];
    for p in 0..=4usize {
        for q in 0..=(4 - p) {
            if p + q < 3 {
                continue;
            }
            let mut acc = 0.0;
            for i in 0..=p {
                for j in 0..=q {
                    let c = BINOM[p][i] * BINOM[q][j];
                    acc += c
                        * (get(a, i, j) * pax[p - i] * pav[q - j]
                            + get(b, i, j) * pbx[p - i] * pbv[q - j]);
                }
            }
            out[p][q] = acc;
        }
    }
    out
}

/// Frame change of the centred co-moments when `v` gains `delta·(dx − mx)`:
/// `M'_pq = Σ_j C(q, j) δ^(q−j) M_(p+q−j, j)` (NUMERICS A4).
fn reframe_higher(m: &[[f64; 5]; 5], sxx: f64, sxv: f64, svv: f64, delta: f64) -> [[f64; 5]; 5] {
    let mut full = *m;
    full[2][0] = sxx;
    full[1][1] = sxv;
    full[0][2] = svv;
    let pd = powers(delta);
    let mut out = [[0.0f64; 5]; 5];
    for p in 0..=4usize {
        for q in 0..=(4 - p) {
            if p + q < 3 {
                continue;
            }
            let mut acc = 0.0;
            for j in 0..=q {
                acc += BINOM[q][j] * pd[q - j] * full[p + q - j][j];
            }
            out[p][q] = acc;
        }
    }
    out
}

fn all_finite(vals: &[f64]) -> bool {
    vals.iter().all(|v| v.is_finite())
}

fn check_pair(x: f64, y: f64, index: usize) -> Result<(), MomentsError> {
    if x.is_finite() && y.is_finite() {
        Ok(())
    } else {
        Err(MomentsError::NonFinite { index })
    }
}

fn check_weight(w: f64, index: usize) -> Result<(), MomentsError> {
    if w.is_finite() && w > 0.0 {
        Ok(())
    } else {
        Err(MomentsError::InvalidWeight { index })
    }
}

impl<T: Tier> PairMoments<T> {
    /// An empty accumulator.
    pub const fn new() -> Self {
        // `Default::default` is not const; spell the extra storage per tier
        // through a const helper instead.
        PairMoments {
            count: 0,
            w: 0.0,
            w2: 0.0,
            x0: 0.0,
            y0: 0.0,
            b0: 0.0,
            framed: false,
            slope_free: false,
            weighted: false,
            forgotten: false,
            mx: 0.0,
            mv: 0.0,
            sxx: 0.0,
            sxv: 0.0,
            svv: 0.0,
            stage: [[0.0; 3]; STAGE],
            stage_len: 0,
            pend_open: false,
            pend_at: 0,
            hi: <<T as sealed::Sealed>::Extra as ConstDefault>::DEFAULT,
        }
    }

    /// Adds one pair with unit weight.
    ///
    /// # Errors
    /// [`MomentsError::NonFinite`] (index 0) for NaN or infinite input,
    /// [`MomentsError::Overflow`] if a moment would overflow. The accumulator
    /// is unchanged on error.
    #[inline]
    pub fn push(&mut self, x: f64, y: f64) -> Result<(), MomentsError> {
        if T::IS_FULL {
            check_pair(x, y, 0)?;
            return self.push_checked(x, y, 1.0);
        }
        let at = self.pend_at;
        // An open block with room: the state was checked when the block
        // opened and does not change while it is open, so only the pair is
        // checked here. The sums are independent adds, not a chain through
        // the means.
        if at < 0 {
            let (d, e) = self.pending_offsets(x, y);
            let (dd, de, ee) = (d * d, d * e, e * e);
            // `d² + e² <= 2^600` implies `|d|, |e| <= 2^300`; NaN,
            // infinities and squares that overflow all fail it.
            if dd + ee <= PEND_LIMIT_SQ {
                // `8 · ((k + 1) mod PEND_LANES)`; the slots are
                // `pend_slots(k mod PEND_LANES)`, written so every byte
                // offset is `2r` plus a constant.
                let next = at + PEND_STEP;
                self.pend_at = next;
                let r = (next & PEND_SET_MASK) as usize;
                let a = r / 4;
                let (b, c) = (2 * PEND_LANES + a, 4 * PEND_LANES + a);
                let s = self.stage.as_flattened_mut();
                s[a] += d;
                s[a + 1] += e;
                s[b] += dd;
                s[b + 1] += de;
                s[c] += ee;
                return Ok(());
            }
        }
        self.push_other(x, y)
    }

    /// The lean `push` outside an open block with room: opens a block
    /// (folding a full one first), or takes the general checked path.
    #[cold]
    #[inline(never)]
    fn push_other(&mut self, x: f64, y: f64) -> Result<(), MomentsError> {
        check_pair(x, y, 0)?;
        if !self.pend_open {
            if self.try_open(x, y) {
                return Ok(());
            }
            return self.push_checked(x, y, 1.0);
        }
        // A full block (or a pair it cannot take). When the pair opens the
        // next block after the fold, fold in place: the fold is atomic and
        // opening cannot fail, so no copy of the state is needed.
        let f = self.folded()?;
        let (d, e) = self.offsets_about(x, y, f.mx, f.mv);
        // As `try_open` checks after the fold.
        let opens = !T::IS_FULL && self.framed && !self.slope_free;
        if opens && f.in_pending_bounds(self.b0) && d * d + e * e <= PEND_LIMIT_SQ {
            self.set_folded(f);
            self.open_with(d, e);
            return Ok(());
        }
        let mut t = *self;
        t.fold_pending()?;
        if !t.try_open(x, y) {
            t.push_checked(x, y, 1.0)?;
        }
        *self = t;
        Ok(())
    }

    /// Pairs in the pending block, 0 to [`PENDING_BLOCK`].
    #[inline]
    pub(crate) fn pend_len(&self) -> u16 {
        if self.pend_open {
            (PENDING_BLOCK as isize + self.pend_at / PEND_STEP) as u16
        } else {
            0
        }
    }

    /// Sets the pending block's length (its sums are set apart).
    #[inline]
    pub(crate) fn set_pend_len(&mut self, k: u16) {
        let k = k as isize;
        let room = (k - PENDING_BLOCK as isize) * PEND_STEP;
        self.pend_open = k > 0;
        self.pend_at = if k > 0 && room < 0 { room } else { 0 };
    }

    /// `(d, e)` of a pair: its offsets in the frame from the means.
    #[inline(always)]
    fn pending_offsets(&self, x: f64, y: f64) -> (f64, f64) {
        self.offsets_about(x, y, self.mx, self.mv)
    }

    /// `(d, e)` of a pair about means `(mx, mv)` in the frame.
    #[inline(always)]
    fn offsets_about(&self, x: f64, y: f64, mx: f64, mv: f64) -> (f64, f64) {
        let dx = x - self.x0;
        let v = (y - self.y0) - self.b0 * dx;
        (dx - mx, v - mv)
    }

    /// Opens a pending block with `(x, y)` as its first pair if the state
    /// and the pair are within the pending-block bounds; `false` (nothing
    /// changed) otherwise.
    fn try_open(&mut self, x: f64, y: f64) -> bool {
        if T::IS_FULL || !self.framed || self.slope_free || self.pend_open {
            return false;
        }
        if !self.state_in_pending_bounds() {
            return false;
        }
        let (d, e) = self.pending_offsets(x, y);
        if !(d * d + e * e <= PEND_LIMIT_SQ) {
            return false;
        }
        self.open_with(d, e);
        true
    }

    /// Opens a pending block whose first pair has offsets `(d, e)` (within
    /// the bounds; the state within them, framed, with no block open).
    fn open_with(&mut self, d: f64, e: f64) {
        // The stage is empty (all zero) in a framed state.
        self.set_pending_set(0, [d, e, d * d, d * e, e * e]);
        self.set_pend_len(1);
    }

    /// The state bounds under which a block may be open (see the pending-block notes).
    pub(crate) fn state_in_pending_bounds(&self) -> bool {
        let now = Folded {
            count: self.count,
            w: self.w,
            w2: self.w2,
            mx: self.mx,
            mv: self.mv,
            sxx: self.sxx,
            sxv: self.sxv,
            svv: self.svv,
        };
        now.in_pending_bounds(self.b0)
    }

    /// The pending block's `[Σd, Σe, Σd², Σd·e, Σe²]`, the position sets
    /// added in order.
    pub(crate) fn pending_sums(&self) -> [f64; 5] {
        let mut t = [0.0; 5];
        for i in 0..PEND_LANES {
            for (t, v) in t.iter_mut().zip(self.pending_set(i)) {
                *t += v;
            }
        }
        t
    }

    /// Position set `i`'s `[Σd, Σe, Σd², Σd·e, Σe²]`.
    pub(crate) fn pending_set(&self, i: usize) -> [f64; 5] {
        let s = self.stage.as_flattened();
        pend_slots(i).map(|j| s[j])
    }

    /// The stage as saved: the raw staged pairs before the frame is
    /// fitted; after, position set `i` in rows `2i` and `2i + 1` as
    /// `[Σd, Σe, Σd²]`, `[Σd·e, Σe², 0]`.
    pub(crate) fn saved_stage(&self) -> [[f64; 3]; STAGE] {
        if !self.framed {
            return self.stage;
        }
        let mut rows = [[0.0; 3]; STAGE];
        for i in 0..PEND_LANES {
            let [sd, se, sdd, sde, see] = self.pending_set(i);
            rows[2 * i] = [sd, se, sdd];
            rows[2 * i + 1] = [sde, see, 0.0];
        }
        rows
    }

    /// Sets the stage from its saved form ([`Self::saved_stage`]; `framed`
    /// already set). `false` if a framed state's unused row slots are not
    /// zero (they are then dropped).
    pub(crate) fn load_saved_stage(&mut self, rows: [[f64; 3]; STAGE]) -> bool {
        if !self.framed {
            self.stage = rows;
            return true;
        }
        self.stage = [[0.0; 3]; STAGE];
        let mut pads_zero = true;
        for i in 0..PEND_LANES {
            let ([sd, se, sdd], [sde, see, pad]) = (rows[2 * i], rows[2 * i + 1]);
            self.set_pending_set(i, [sd, se, sdd, sde, see]);
            // Bit for bit: a −0.0 pad would be dropped, so the bytes would not
            // survive a save.
            pads_zero &= pad.to_bits() == 0;
        }
        pads_zero
    }

    /// Sets position set `i`'s sums (see [`Self::pending_set`]).
    pub(crate) fn set_pending_set(&mut self, i: usize, v: [f64; 5]) {
        let s = self.stage.as_flattened_mut();
        for (j, v) in pend_slots(i).into_iter().zip(v) {
            s[j] = v;
        }
    }

    /// Whether the pending block's length and sums are ones its pushes can
    /// reach from this state: the state within the bounds a block opens
    /// under, and each position set holding `m` pairs with
    /// `d² + e² <= PEND_LIMIT²`, so within `2m` times the one-pair bounds
    /// (room for the rounding of the sums). Then the fold cannot overflow.
    pub(crate) fn pending_in_bounds(&self) -> bool {
        let k = self.pend_len() as usize;
        if k == 0 {
            return self.stage.iter().flatten().all(|&v| v == 0.0);
        }
        let sets_ok = (0..PEND_LANES).all(|i| {
            // Positions i, i + PEND_LANES, ... below k.
            let m = ((k + PEND_LANES - 1 - i) / PEND_LANES) as f64;
            let [sd, se, sdd, sde, see] = self.pending_set(i);
            let (l1, l2) = (2.0 * m * PEND_LIMIT, 2.0 * m * PEND_LIMIT_SQ);
            sd.abs() <= l1
                && se.abs() <= l1
                && sdd >= 0.0
                && see >= 0.0
                && sdd + see <= l2
                && sde.abs() <= l2
        });
        let spare_ok =
            (0..PEND_LANES).all(|i| self.stage.as_flattened()[pend_slots(i)[4] + 1] == 0.0);
        !T::IS_FULL
            && self.framed
            && !self.slope_free
            && k <= PENDING_BLOCK
            && self.state_in_pending_bounds()
            && sets_ok
            && spare_ok
    }

    /// Folds the pending block into the centred moments: the block's sums
    /// about the means give its own centred moments and its mean offset,
    /// merged as any chunk is (Chan–Golub–LeVeque). Atomic; cannot fail
    /// for a block that kept the pending-block bounds.
    pub(crate) fn fold_pending(&mut self) -> Result<(), MomentsError> {
        if !self.pend_open {
            return Ok(());
        }
        let f = self.folded()?;
        self.set_folded(f);
        Ok(())
    }

    /// The moments with the pending block (open) folded in; see
    /// [`Self::fold_pending`].
    fn folded(&self) -> Result<Folded, MomentsError> {
        self.folded_with(self.pend_len(), self.pending_sums())
    }

    /// The moments with a block of `k > 0` unit-weight pairs folded in,
    /// given its sums `[Σd, Σe, Σd², Σd·e, Σe²]` of offsets from the
    /// state's means (the pending block's, or a feed's).
    fn folded_with(&self, k: u16, sums: [f64; 5]) -> Result<Folded, MomentsError> {
        let [s_x, s_v, s_xx, s_xv, s_vv] = sums;
        let n = k as f64;
        // The block's mean offsets from the state's means, and its centred
        // moments (exact values are non-negative; a negative one is
        // rounding).
        let (ox, ov) = (s_x / n, s_v / n);
        let bxx = (s_xx - ox * s_x).max(0.0);
        let bxv = s_xv - ox * s_v;
        let bvv = (s_vv - ov * s_v).max(0.0);
        let w = self.w + n;
        let (r, f) = (n / w, self.w * n / w);
        let mx = self.mx + ox * r;
        let mv = self.mv + ov * r;
        let sxx = self.sxx + bxx + f * ox * ox;
        let sxv = self.sxv + bxv + f * ox * ov;
        let svv = self.svv + bvv + f * ov * ov;
        let w2 = self.w2 + n;
        let count = self.count.checked_add(k as u64);
        let ok = all_finite(&[w, w2, mx, mv, sxx, sxv, svv]);
        let Some(count) = count.filter(|_| ok) else {
            return Err(MomentsError::Overflow);
        };
        Ok(Folded {
            count,
            w,
            w2,
            mx,
            mv,
            sxx,
            sxv,
            svv,
        })
    }

    /// Commits folded moments and empties the block.
    fn set_folded(&mut self, f: Folded) {
        self.w = f.w;
        self.w2 = f.w2;
        self.mx = f.mx;
        self.mv = f.mv;
        self.sxx = f.sxx;
        self.sxv = f.sxv;
        self.svv = f.svv;
        self.count = f.count;
        self.stage = [[0.0; 3]; STAGE];
        self.set_pend_len(0);
    }

    /// Adds one pair with weight `w > 0`. Weights are relative or known
    /// inverse variances; which one is chosen when fitting ([`crate::FitOptions`]).
    ///
    /// # Errors
    /// As [`push`](Self::push), plus [`MomentsError::InvalidWeight`] for a
    /// weight that is zero, negative or not finite.
    pub fn push_weighted(&mut self, x: f64, y: f64, w: f64) -> Result<(), MomentsError> {
        check_pair(x, y, 0)?;
        check_weight(w, 0)?;
        self.push_checked(x, y, w)?;
        if w != 1.0 {
            self.weighted = true;
        }
        Ok(())
    }

    fn push_checked(&mut self, x: f64, y: f64, w: f64) -> Result<(), MomentsError> {
        if self.pend_open {
            // Earlier pushes come first.
            let mut t = *self;
            t.fold_pending()?;
            t.push_checked(x, y, w)?;
            *self = t;
            return Ok(());
        }
        if !self.framed {
            let k = self.stage_len as usize;
            if k + 1 < STAGE {
                self.stage[k] = [x, y, w];
                self.stage_len += 1;
                return Ok(());
            }
            // The stage fills: fit the frame; commit only if nothing overflows.
            let mut t = *self;
            t.stage[k] = [x, y, w];
            t.stage_len += 1;
            t.flush()?;
            *self = t;
            return Ok(());
        }
        // Work on a copy: `update` may fix a free slope before it finds an
        // overflow, and the lag sums are only checked afterwards.
        let mut t = *self;
        t.update(x, y, w)?;
        if !t.is_state_finite() {
            return Err(MomentsError::Overflow);
        }
        *self = t;
        Ok(())
    }

    /// Framed one-pair update (West 1979, plus Pébay for orders 3–4).
    fn update(&mut self, x: f64, y: f64, w: f64) -> Result<(), MomentsError> {
        if self.slope_free && x != self.x0 && self.w > 0.0 {
            // First pair off the single x level seen so far: every committed
            // x-moment is exactly zero, so choosing the slope now is exact.
            let ybar = self.y0 + self.mv;
            let b0 = (y - ybar) / (x - self.x0);
            if b0.is_finite() {
                self.set_free_slope(b0);
            }
        }
        let dx = x - self.x0;
        let v = (y - self.y0) - self.b0 * dx;
        let w_new = self.w + w;
        let r = w / w_new;
        let ddx = dx - self.mx;
        let ddv = v - self.mv;
        let mx = self.mx + r * ddx;
        let mv = self.mv + r * ddv;
        // West's `w·ddx·(dx − mx)` goes negative when `r` rounds to 1 (a
        // pair far heavier than the history); `w·(W/W')·ddx²` cannot.
        let f = w * (self.w / w_new);
        let sxx = self.sxx + f * ddx * ddx;
        let sxv = self.sxv + f * ddx * ddv;
        let svv = self.svv + f * ddv * ddv;
        let w2 = self.w2 + w * w;
        if !all_finite(&[dx, v, sxx, sxv, svv, w_new, w2]) {
            return Err(MomentsError::Overflow);
        }
        let hi = if T::IS_FULL && self.w > 0.0 {
            let a = self.set();
            let b = Set {
                w,
                mx: dx,
                mv: v,
                m: [[0.0; 5]; 5],
            };
            Some(merge_higher(&a, &b, ddx, ddv))
        } else {
            None
        };
        if let Some(h) = &hi {
            if !h.iter().flatten().all(|v| v.is_finite()) {
                return Err(MomentsError::Overflow);
            }
        }
        // A count at the top of the range only comes from a forged state.
        let count = self.count.checked_add(1).ok_or(MomentsError::Overflow)?;
        let was_empty = self.count == 0;
        let last = self.last_pair();
        self.count = count;
        self.w = w_new;
        self.w2 = w2;
        self.mx = mx;
        self.mv = mv;
        self.sxx = sxx;
        self.sxv = sxv;
        self.svv = svv;
        if x != self.x0 {
            self.slope_free = false;
        }
        let b0 = self.b0;
        T::with_higher(&mut self.hi, |h| {
            if let Some(m) = hi {
                h.m = m;
            }
            if was_empty {
                h.first = (x, y);
            } else {
                let (lx, ly) = last;
                let ddx = x - lx;
                let ddv = (y - ly) - b0 * ddx;
                h.lag[0] += ddx * ddx;
                h.lag[1] += ddx * ddv;
                h.lag[2] += ddv * ddv;
            }
            h.last = (x, y);
            h.xmin = h.xmin.min(x);
            h.xmax = h.xmax.max(x);
            h.ymin = h.ymin.min(y);
            h.ymax = h.ymax.max(y);
        });
        Ok(())
    }

    fn last_pair(&self) -> (f64, f64) {
        T::higher(&self.hi).map(|h| h.last).unwrap_or((0.0, 0.0))
    }

    /// Sets `b0` while all committed x equal `x0` (moments are unaffected
    /// except the lag sums, which change by the exact frame rule).
    fn set_free_slope(&mut self, b0: f64) {
        let delta = self.b0 - b0;
        T::with_higher(&mut self.hi, |h| reframe_lag(&mut h.lag, delta));
        self.b0 = b0;
        self.slope_free = false;
    }

    /// Fits the frame to the staged pairs and commits them.
    fn flush(&mut self) -> Result<(), MomentsError> {
        if self.framed {
            return Ok(());
        }
        let k = self.stage_len as usize;
        let staged = self.stage;
        let mut t = *self;
        t.stage_len = 0;
        t.stage = [[0.0; 3]; STAGE];
        if k == 0 {
            return Ok(());
        }
        let (x0, y0, b0, free) = stage_frame(&staged[..k]);
        t.x0 = x0;
        t.y0 = y0;
        t.b0 = b0;
        t.framed = true;
        t.slope_free = free;
        for p in &staged[..k] {
            t.update(p[0], p[1], p[2])?;
        }
        if !t.is_state_finite() {
            return Err(MomentsError::Overflow);
        }
        *self = t;
        Ok(())
    }

    /// A copy with the staged and pending pairs committed (what every
    /// query reads).
    pub(crate) fn flushed(&self) -> Result<Self, MomentsError> {
        let mut t = *self;
        t.flush()?;
        t.fold_pending()?;
        Ok(t)
    }

    /// Adds the pairs `(xs[i], ys[i])` with unit weight.
    ///
    /// Runs in chunks: a one-pass kernel per chunk about a local shift, then
    /// an exact merge into the state.
    ///
    /// # Errors
    /// [`MomentsError::LengthMismatch`], [`MomentsError::EmptyInput`],
    /// [`MomentsError::NonFinite`] with the index of the first offending
    /// pair, [`MomentsError::Overflow`]. Nothing is committed on error.
    pub fn extend(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), MomentsError> {
        if xs.len() != ys.len() {
            return Err(MomentsError::LengthMismatch {
                x_len: xs.len(),
                other_len: ys.len(),
            });
        }
        self.extend_inner(xs, ys, None)
    }

    /// Adds weighted pairs; see [`extend`](Self::extend) and
    /// [`push_weighted`](Self::push_weighted).
    ///
    /// # Errors
    /// As [`extend`](Self::extend), plus [`MomentsError::InvalidWeight`] with
    /// the index of the first weight that is zero, negative or not finite.
    pub fn extend_weighted(
        &mut self,
        xs: &[f64],
        ys: &[f64],
        ws: &[f64],
    ) -> Result<(), MomentsError> {
        for len in [ys.len(), ws.len()] {
            if len != xs.len() {
                return Err(MomentsError::LengthMismatch {
                    x_len: xs.len(),
                    other_len: len,
                });
            }
        }
        let mut t = *self;
        t.extend_inner(xs, ys, Some(ws))?;
        if ws.iter().any(|&w| w != 1.0) {
            t.weighted = true;
        }
        *self = t;
        Ok(())
    }

    fn extend_inner(
        &mut self,
        xs: &[f64],
        ys: &[f64],
        ws: Option<&[f64]>,
    ) -> Result<(), MomentsError> {
        if xs.is_empty() {
            return Err(MomentsError::EmptyInput);
        }
        let mut t = *self;
        t.fold_pending()?;
        let mut i = 0;
        // Until the frame is fixed (and has a slope), go pair by pair.
        while i < xs.len() && (!t.framed || t.slope_free) {
            check_pair(xs[i], ys[i], i)?;
            let w = match ws {
                Some(w) => {
                    check_weight(w[i], i)?;
                    w[i]
                }
                None => 1.0,
            };
            t.push_checked(xs[i], ys[i], w)?;
            i += 1;
        }
        // Unweighted chunks are longer: less merge overhead per pair, and the
        // full kernel's stream from memory restarts less often (its second
        // pass re-reads the chunk from cache).
        let chunk = if ws.is_some() { CHUNK } else { LONG_CHUNK };
        while i < xs.len() {
            let end = (i + chunk).min(xs.len());
            let (cx, cy) = (&xs[i..end], &ys[i..end]);
            let cw = ws.map(|w| &w[i..end]);
            if T::IS_FULL {
                let c = kernel::full_chunk(cx, cy, cw, t.b0);
                validate_chunk(&c.lean, cx, cy, cw, i)?;
                t.absorb(&c.lean, Some(&c))?;
            } else {
                let c = kernel::lean_chunk(cx, cy, cw, t.b0);
                validate_chunk(&c, cx, cy, cw, i)?;
                t.absorb(&c, None)?;
            }
            i = end;
        }
        *self = t;
        Ok(())
    }

    /// Merges a chunk summary (given about its own local shift) into the
    /// state. Atomic: the new values are formed and checked before any is
    /// stored, so no copy of the whole state is needed per chunk.
    fn absorb(&mut self, c: &LeanChunk, full: Option<&FullChunk>) -> Result<(), MomentsError> {
        // The chunk's v was taken about (xc, yc) with slope b0; in the state's
        // frame it differs by a constant only.
        let (off_x, off_v) = frame_offset(c.xc, c.yc, self.x0, self.y0, self.b0);
        let (bmx, bmv) = (c.mx + off_x, c.mv + off_v);
        // Chan–Golub–LeVeque merge of the second moments (as in `combine`).
        let (w, mx, mv, sxx, sxv, svv, dx, dv) = if self.w == 0.0 {
            (c.w, bmx, bmv, c.sxx, c.sxv, c.svv, 0.0, 0.0)
        } else {
            let w = self.w + c.w;
            let dx = bmx - self.mx;
            let dv = bmv - self.mv;
            let f = self.w * c.w / w;
            (
                w,
                self.mx + dx * (c.w / w),
                self.mv + dv * (c.w / w),
                self.sxx + c.sxx + f * dx * dx,
                self.sxv + c.sxv + f * dx * dv,
                self.svv + c.svv + f * dv * dv,
                dx,
                dv,
            )
        };
        let w2 = self.w2 + c.w2;
        let mut hi = self.hi;
        if let Some(f) = full {
            let mut m = f.m;
            m[2][0] = c.sxx;
            m[1][1] = c.sxv;
            m[0][2] = c.svv;
            let b = Set {
                w: c.w,
                mx: bmx,
                mv: bmv,
                m,
            };
            let merged = if self.w == 0.0 {
                m
            } else {
                merge_higher(&self.set(), &b, dx, dv)
            };
            let had = self.count > 0;
            let b0 = self.b0;
            T::with_higher(&mut hi, |h| {
                copy_higher(&mut h.m, &merged);
                if had {
                    let ddx = c.xc - h.last.0;
                    let ddv = (c.yc - h.last.1) - b0 * ddx;
                    h.lag[0] += ddx * ddx;
                    h.lag[1] += ddx * ddv;
                    h.lag[2] += ddv * ddv;
                } else {
                    h.first = (c.xc, c.yc);
                }
                for k in 0..3 {
                    h.lag[k] += f.lag[k];
                }
                h.xmin = h.xmin.min(f.xmin);
                h.xmax = h.xmax.max(f.xmax);
                h.ymin = h.ymin.min(f.ymin);
                h.ymax = h.ymax.max(f.ymax);
                // The chunk's last pair is needed for the next boundary term.
                h.last = f.last;
            });
        }
        let ok = all_finite(&[w, w2, mx, mv, sxx, sxv, svv])
            && sxx >= 0.0
            && svv >= 0.0
            && T::higher(&hi).is_none_or(|h| {
                h.m.iter()
                    .flatten()
                    .chain(h.lag.iter())
                    .all(|v| v.is_finite())
            });
        let count = self.count.checked_add(c.n as u64);
        let Some(count) = count.filter(|_| ok) else {
            return Err(MomentsError::Overflow);
        };
        self.w = w;
        self.w2 = w2;
        self.mx = mx;
        self.mv = mv;
        self.sxx = sxx;
        self.sxv = sxv;
        self.svv = svv;
        self.count = count;
        self.hi = hi;
        Ok(())
    }

    fn set(&self) -> Set {
        let mut m = T::higher(&self.hi).map(|h| h.m).unwrap_or([[0.0; 5]; 5]);
        m[2][0] = self.sxx;
        m[1][1] = self.sxv;
        m[0][2] = self.svv;
        Set {
            w: self.w,
            mx: self.mx,
            mv: self.mv,
            m,
        }
    }

    /// Combines a same-frame moment set into the state (weights, means and
    /// moments only; the caller handles counts and lag sums).
    fn combine(&mut self, b: &Set) -> Result<(), MomentsError> {
        if self.w == 0.0 {
            self.w = b.w;
            self.mx = b.mx;
            self.mv = b.mv;
            self.sxx = b.m[2][0];
            self.sxv = b.m[1][1];
            self.svv = b.m[0][2];
            T::with_higher(&mut self.hi, |h| copy_higher(&mut h.m, &b.m));
            return Ok(());
        }
        let a = self.set();
        let w = a.w + b.w;
        let dx = b.mx - a.mx;
        let dv = b.mv - a.mv;
        let f = a.w * b.w / w;
        let hi = if T::IS_FULL {
            Some(merge_higher(&a, b, dx, dv))
        } else {
            None
        };
        self.mx = a.mx + dx * (b.w / w);
        self.mv = a.mv + dv * (b.w / w);
        self.sxx = a.m[2][0] + b.m[2][0] + f * dx * dx;
        self.sxv = a.m[1][1] + b.m[1][1] + f * dx * dv;
        self.svv = a.m[0][2] + b.m[0][2] + f * dv * dv;
        self.w = w;
        if let Some(h) = hi {
            T::with_higher(&mut self.hi, |e| copy_higher(&mut e.m, &h));
        }
        Ok(())
    }

    /// Merges `other` into `self`, as if `other`'s pairs had been pushed
    /// after `self`'s (the order matters only for the lag-1 sums).
    ///
    /// # Errors
    /// [`MomentsError::Overflow`]; `self` is unchanged on error.
    pub fn merge(&mut self, other: &Self) -> Result<(), MomentsError> {
        if other.count == 0 && other.stage_len == 0 {
            return Ok(());
        }
        let mut o = *other;
        o.fold_pending()?;
        let other = &o;
        let mut t = *self;
        t.fold_pending()?;
        if !other.framed {
            // Few pairs: replaying them is exact and keeps sequential order.
            for p in &other.stage[..other.stage_len as usize] {
                t.push_checked(p[0], p[1], p[2])?;
            }
        } else {
            t.flush()?;
            if t.count == 0 {
                t = Self {
                    weighted: t.weighted,
                    forgotten: t.forgotten,
                    ..*other
                };
            } else {
                let mut b = *other;
                if t.slope_free && !b.slope_free {
                    // Adopt the other side's slope: exact for a slope-free side.
                    let slope = b.b0;
                    t.set_free_slope(slope);
                } else if t.slope_free && b.slope_free && b.x0 != t.x0 {
                    let slope = ((b.y0 + b.mv) - (t.y0 + t.mv)) / (b.x0 - t.x0);
                    if slope.is_finite() {
                        t.set_free_slope(slope);
                        b.set_free_slope(slope);
                    }
                }
                let bs = b.in_frame_of(&t);
                let last = t.last_pair();
                let b0 = t.b0;
                t.combine(&bs.0)?;
                // Counts far beyond any real stream only come from forged
                // or repeatedly self-merged states; refuse, never wrap.
                t.count = match t.count.checked_add(b.count) {
                    Some(c) if c <= 1 << 63 => c,
                    _ => return Err(MomentsError::Overflow),
                };
                t.w2 += b.w2;
                t.slope_free = t.slope_free && b.slope_free && b.x0 == t.x0;
                if let (Some(hb), true) = (T::higher(&b.hi), T::IS_FULL) {
                    let hb = *hb;
                    let lag_b = bs.1;
                    T::with_higher(&mut t.hi, |h| {
                        let ddx = hb.first.0 - last.0;
                        let ddv = (hb.first.1 - last.1) - b0 * ddx;
                        h.lag[0] += ddx * ddx + lag_b[0];
                        h.lag[1] += ddx * ddv + lag_b[1];
                        h.lag[2] += ddv * ddv + lag_b[2];
                        h.last = hb.last;
                        h.xmin = h.xmin.min(hb.xmin);
                        h.xmax = h.xmax.max(hb.xmax);
                        h.ymin = h.ymin.min(hb.ymin);
                        h.ymax = h.ymax.max(hb.ymax);
                    });
                }
            }
        }
        t.weighted |= other.weighted;
        t.forgotten |= other.forgotten;
        if !t.is_state_finite() {
            return Err(MomentsError::Overflow);
        }
        *self = t;
        Ok(())
    }

    /// `self`'s moments expressed in `target`'s frame, and its lag sums.
    fn in_frame_of(&self, target: &Self) -> (Set, [f64; 3]) {
        let delta = self.b0 - target.b0;
        let (shift_x, c) = frame_offset(self.x0, self.y0, target.x0, target.y0, target.b0);
        // v_target = v_self + delta·dx_self + c, with c the frame offset.
        let mut s = self.set();
        let mx = self.mx + shift_x;
        let mv = self.mv + delta * self.mx + c;
        if T::IS_FULL && delta != 0.0 {
            let h = reframe_higher(&s.m, self.sxx, self.sxv, self.svv, delta);
            copy_higher(&mut s.m, &h);
        }
        let sxv = self.sxv + delta * self.sxx;
        // Expanding Σ(v + δ·dx)² cancels for a near-perfect fit; the exact
        // value is non-negative, so a negative result is rounding.
        let svv = (self.svv + 2.0 * delta * self.sxv + delta * delta * self.sxx).max(0.0);
        s.m[1][1] = sxv;
        s.m[0][2] = svv;
        s.mx = mx;
        s.mv = mv;
        let mut lag = T::higher(&self.hi).map(|h| h.lag).unwrap_or([0.0; 3]);
        reframe_lag(&mut lag, delta);
        (s, lag)
    }

    /// Multiplies every weight by `lambda` (exponential forgetting: the
    /// state becomes the fit with weights `λ^age`). Means are unchanged.
    ///
    /// # Errors
    /// [`MomentsError::InvalidForgetting`] unless `0 < lambda <= 1`.
    pub fn forget(&mut self, lambda: f64) -> Result<(), MomentsError> {
        if !(lambda > 0.0 && lambda <= 1.0) {
            return Err(MomentsError::InvalidForgetting);
        }
        if lambda == 1.0 {
            return Ok(());
        }
        let mut t = *self;
        t.fold_pending()?;
        t.w *= lambda;
        t.w2 *= lambda * lambda;
        t.sxx *= lambda;
        t.sxv *= lambda;
        t.svv *= lambda;
        for p in t.stage[..t.stage_len as usize].iter_mut() {
            p[2] *= lambda;
        }
        T::with_higher(&mut t.hi, |h| {
            for v in h.m.iter_mut().flatten() {
                *v *= lambda;
            }
            for v in h.lag.iter_mut() {
                *v *= lambda;
            }
        });
        if (t.w == 0.0 && t.count > 0)
            || t.stage[..t.stage_len as usize].iter().any(|p| p[2] == 0.0)
        {
            // Weights underflowed: the history would vanish silently.
            return Err(MomentsError::Overflow);
        }
        t.forgotten = true;
        *self = t;
        Ok(())
    }

    /// Whether the state may be committed: every sum finite and the second
    /// moments non-negative (a negative one only arises from rounding with
    /// extreme weight ratios and would poison every later result).
    fn is_state_finite(&self) -> bool {
        let base = all_finite(&[
            self.w, self.w2, self.mx, self.mv, self.sxx, self.sxv, self.svv,
        ]) && self.sxx >= 0.0
            && self.svv >= 0.0;
        base && T::higher(&self.hi)
            .map(|h| {
                h.m.iter()
                    .flatten()
                    .chain(h.lag.iter())
                    .all(|v| v.is_finite())
            })
            .unwrap_or(true)
    }

    /// Number of pairs added (forgetting does not change it).
    pub fn count(&self) -> u64 {
        self.count + self.stage_len as u64 + self.pend_len() as u64
    }

    /// Whether no pair has been added.
    pub fn is_empty(&self) -> bool {
        self.count() == 0
    }

    /// Whether any weight other than 1 was used.
    pub fn is_weighted(&self) -> bool {
        self.weighted
    }

    /// Whether a forgetting factor below 1 was applied.
    pub fn is_forgotten(&self) -> bool {
        self.forgotten
    }

    /// The moments as plain numbers (staged pairs included).
    ///
    /// # Errors
    /// [`MomentsError::Overflow`] if committing the staged pairs overflows
    /// or a moment of `y` overflows.
    pub fn summary(&self) -> Result<MomentSummary, MomentsError> {
        let f = self.flushed()?;
        let s = f.summary_flushed();
        // Converting from the frame to y can overflow (a steep b0 times a
        // large Sxx) even though the frame itself is finite.
        if !all_finite(&[s.mean_x, s.mean_y, s.sxx, s.sxy, s.syy]) {
            return Err(MomentsError::Overflow);
        }
        Ok(s)
    }

    pub(crate) fn summary_flushed(&self) -> MomentSummary {
        let b0 = self.b0;
        MomentSummary {
            count: self.count,
            weight_sum: self.w,
            weight_sq_sum: self.w2,
            mean_x: self.x0 + self.mx,
            mean_y: self.y0 + self.mv + b0 * self.mx,
            sxx: self.sxx,
            sxy: self.sxv + b0 * self.sxx,
            syy: self.svv + 2.0 * b0 * self.sxv + b0 * b0 * self.sxx,
            frame: Frame {
                x0: self.x0,
                y0: self.y0,
                b0,
                mean_dx: self.mx,
                mean_v: self.mv,
                sxv: self.sxv,
                svv: self.svv,
            },
        }
    }
}

/// Plain-number view of an accumulator's second moments.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MomentSummary {
    /// Number of pairs.
    pub count: u64,
    /// Σw.
    pub weight_sum: f64,
    /// Σw² (for the effective sample size).
    pub weight_sq_sum: f64,
    /// Weighted mean of x.
    pub mean_x: f64,
    /// Weighted mean of y.
    pub mean_y: f64,
    /// Σw(x − x̄)².
    pub sxx: f64,
    /// Σw(x − x̄)(y − ȳ).
    pub sxy: f64,
    /// Σw(y − ȳ)². Derived from the frame; a fit uses the frame directly.
    pub syy: f64,
    /// The frame the moments are kept in.
    pub frame: Frame,
}

/// The provisional frame and the second moments of `v` in it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// Shift of x.
    pub x0: f64,
    /// Shift of y.
    pub y0: f64,
    /// Provisional slope.
    pub b0: f64,
    /// Weighted mean of `x − x0`.
    pub mean_dx: f64,
    /// Weighted mean of `v = (y − y0) − b0 (x − x0)`.
    pub mean_v: f64,
    /// Σw(dx − mean)(v − mean).
    pub sxv: f64,
    /// Σw(v − mean)².
    pub svv: f64,
}

impl PairMoments<Full> {
    /// Centred co-moments of `(x, y)`: `m[p][q] = Σw(x − x̄)^p (y − ȳ)^q` for
    /// `2 <= p + q <= 4` (other entries 0), converted from the frame.
    ///
    /// For residual statistics prefer the frame quantities (see
    /// [`crate::diag`]): converting to `y` reintroduces the cancellation the
    /// frame avoids when the fit is nearly perfect.
    ///
    /// # Errors
    /// [`MomentsError::Overflow`] if committing staged pairs overflows.
    pub fn comoments(&self) -> Result<[[f64; 5]; 5], MomentsError> {
        let f = self.flushed()?;
        let b0 = f.b0;
        let mut m = reframe_higher(&f.hi.m, f.sxx, f.sxv, f.svv, b0);
        m[2][0] = f.sxx;
        m[1][1] = f.sxv + b0 * f.sxx;
        m[0][2] = f.svv + 2.0 * b0 * f.sxv + b0 * b0 * f.sxx;
        Ok(m)
    }

    /// Lag-1 difference sums `[ΣΔx², ΣΔxΔy, ΣΔy²]` over consecutive pairs
    /// (unweighted; scaled by forgetting like every other sum).
    ///
    /// # Errors
    /// [`MomentsError::Overflow`] if committing staged pairs overflows.
    pub fn lag_sums(&self) -> Result<[f64; 3], MomentsError> {
        let f = self.flushed()?;
        let mut lag = f.hi.lag;
        reframe_lag(&mut lag, f.b0);
        Ok(lag)
    }

    /// First and last pair in time order, or `None` when empty.
    pub fn ends(&self) -> Option<((f64, f64), (f64, f64))> {
        let f = self.flushed().ok()?;
        (f.count > 0).then_some((f.hi.first, f.hi.last))
    }

    /// Smallest and largest x, or `None` when empty.
    pub fn x_range(&self) -> Option<(f64, f64)> {
        let f = self.flushed().ok()?;
        (f.count > 0).then_some((f.hi.xmin, f.hi.xmax))
    }

    /// Smallest and largest y, or `None` when empty.
    pub fn y_range(&self) -> Option<(f64, f64)> {
        let f = self.flushed().ok()?;
        (f.count > 0).then_some((f.hi.ymin, f.hi.ymax))
    }
}

fn copy_higher(dst: &mut [[f64; 5]; 5], src: &[[f64; 5]; 5]) {
    for p in 0..=4usize {
        for q in 0..=(4 - p) {
            if p + q >= 3 {
                dst[p][q] = src[p][q];
            }
        }
    }
}

/// Offset of a point `(xa, ya)` in the frame `(x0, y0, b0)`: returns
/// `(dx, v)` with `dx = fl(xa − x0)` and `v = (ya − y0) − b0·(xa − x0)` using
/// the exact difference `xa − x0`, not its rounding. A whole chunk (or
/// accumulator) shifts by this one offset, so its rounding is not averaged
/// away as per-pair roundings are: carrying `x`'s rounding into `v` keeps the
/// shifted pairs on the provisional line, which leaves the fit unchanged
/// (measured on NIST Norris via one `extend`: intercept LRE 12.9 before, as
/// good as pushing pair by pair after).
fn frame_offset(xa: f64, ya: f64, x0: f64, y0: f64, b0: f64) -> (f64, f64) {
    let (dx, ex) = two_sum(xa, -x0);
    let (dy, ey) = two_sum(ya, -y0);
    let (p, ep) = two_prod(b0, dx);
    (dx, (dy - p) + ((ey - ep) - b0 * ex))
}

/// Lag sums when `Δv` gains `delta·Δx`.
fn reframe_lag(lag: &mut [f64; 3], delta: f64) {
    let [xx, xv, vv] = *lag;
    lag[1] = xv + delta * xx;
    lag[2] = vv + 2.0 * delta * xv + delta * delta * xx;
}

/// Frame from the staged pairs: the first pair as the shift, and the
/// weighted two-pass slope of the staged pairs (0 with no x spread).
fn stage_frame(p: &[[f64; 3]]) -> (f64, f64, f64, bool) {
    let (x0, y0) = (p[0][0], p[0][1]);
    let (mut sw, mut sx, mut sy) = (0.0, 0.0, 0.0);
    for q in p {
        sw += q[2];
        sx += q[2] * (q[0] - x0);
        sy += q[2] * (q[1] - y0);
    }
    let (mx, my) = (sx / sw, sy / sw);
    let (mut sxx, mut sxy) = (0.0, 0.0);
    for q in p {
        let dx = (q[0] - x0) - mx;
        sxx += q[2] * dx * dx;
        sxy += q[2] * dx * ((q[1] - y0) - my);
    }
    let free = p.iter().all(|q| q[0] == x0);
    let b0 = if !free && sxx > 0.0 { sxy / sxx } else { 0.0 };
    if b0.is_finite() {
        (x0, y0, b0, free)
    } else {
        (x0, y0, 0.0, free)
    }
}

fn validate_chunk(
    c: &LeanChunk,
    xs: &[f64],
    ys: &[f64],
    ws: Option<&[f64]>,
    base: usize,
) -> Result<(), MomentsError> {
    let finite = all_finite(&[c.w, c.mx, c.mv, c.sxx, c.sxv, c.svv]);
    let weights_ok = c.wmin > 0.0 && c.wmin.is_finite() && c.w.is_finite();
    if finite && weights_ok {
        return Ok(());
    }
    for i in 0..xs.len() {
        check_pair(xs[i], ys[i], base + i)?;
        if let Some(w) = ws {
            check_weight(w[i], base + i)?;
        }
    }
    Err(MomentsError::Overflow)
}

/// Const default for the tier storage (internal).
pub trait ConstDefault {
    /// The empty value.
    const DEFAULT: Self;
}
impl ConstDefault for NoExtra {
    const DEFAULT: Self = NoExtra;
}
impl ConstDefault for HigherMoments {
    const DEFAULT: Self = HigherMoments {
        m: [[0.0; 5]; 5],
        lag: [0.0; 3],
        first: (0.0, 0.0),
        last: (0.0, 0.0),
        xmin: f64::INFINITY,
        xmax: f64::NEG_INFINITY,
        ymin: f64::INFINITY,
        ymax: f64::NEG_INFINITY,
    };
}

#[cfg(test)]
mod pending_bounds {
    #[test]
    fn bounds_are_the_stated_powers_of_two() {
        // Exact: powers of two are exact doubles.
        assert_eq!(super::PEND_LIMIT, 2f64.powi(300));
        assert_eq!(super::PEND_LIMIT_SQ, 2f64.powi(600));
        assert_eq!(super::PEND_SLOPE, 2f64.powi(190));
        assert_eq!(super::PEND_BIG, 2f64.powi(1000));
    }
}
