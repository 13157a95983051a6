//! A lean accumulator borrowed for a run of unit-weight pushes, with its
//! pending block held in the borrower (see [`PairFeed`]).

use super::{check_pair, Folded, LeanMoments, MomentsError};
use crate::kernel::LONG_CHUNK;

/// A lean accumulator borrowed for a run of unit-weight pushes.
///
/// [`PairMoments::push`](super::PairMoments::push) keeps its pending block
/// inside the accumulator, so each push reads what the one before it
/// wrote, through memory. On a CPU that does not rename memory, that store
/// and reload costs about 7 cycles and caps the push rate. A feed keeps
/// its own block in plain fields. When the feed lives in one function the
/// compiler holds those fields in registers: a push is one integer test of
/// its inputs and, every second pair, a few two-wide vector operations.
///
/// The feed refuses what `push` refuses, with the same errors. It folds
/// its block into the accumulator every 4096 pairs (as many as a chunk of
/// `extend`) and when it is dropped. The result equals pushing the same
/// pairs one by one up to rounding: its blocks are longer than the
/// pending block's 256 pairs, so their sums are taken about the means at
/// other moments and added in another order, and the bits may differ. A
/// refused pair leaves the accumulator and the open block as they were.
/// Forgetting the feed (`core::mem::forget`) loses its open block.
///
/// # Example
/// ```
/// use plumbfit::LeanMoments;
/// let mut acc = LeanMoments::new();
/// {
///     let mut feed = acc.feed();
///     for i in 0..1000 {
///         let x = i as f64;
///         feed.push(x, 3.0 + 0.5 * x).unwrap();
///     }
///     assert!(feed.push(f64::NAN, 1.0).is_err());
/// } // the feed folds its block here
/// assert_eq!(acc.count(), 1000);
/// assert!((acc.fit().unwrap().slope - 0.5).abs() < 1e-12);
/// ```
#[derive(Debug)]
pub struct PairFeed<'a> {
    acc: &'a mut LeanMoments,
    blk: Block,
}

/// The feed's open block: sums of the offsets of its pairs from the
/// accumulator's means, `d = (x − x0) − mx` and
/// `e = ((y − y0) − b0·(x − x0)) − mv` in its frame, formed exactly as its
/// pending block forms them, so a block's rounding is relative to what it
/// adds to the moments (see the pending-block notes). Pairs are added two
/// at a time, into two lanes of sums, so the arithmetic of a pair of pairs
/// fills two-wide vector operations; a pair waiting for its partner is
/// held. Passed by value to the cold paths so the feed's own address never
/// escapes and its fields can stay in registers.
#[derive(Clone, Copy, Debug)]
struct Block {
    /// The frame `x0`, `y0`, `b0` and the means `mx`, `mv`, each in both
    /// lanes (the compiler then keeps each in one vector register instead
    /// of spreading it for every pair of pairs).
    x0: [f64; 2],
    y0: [f64; 2],
    b0: [f64; 2],
    mx: [f64; 2],
    mv: [f64; 2],
    /// `Σd`, `Σe`, `Σd²`, `Σd·e`, `Σe²` of lanes 0 and 1.
    sd: [f64; 2],
    se: [f64; 2],
    sdd: [f64; 2],
    sde: [f64; 2],
    see: [f64; 2],
    /// The pair taken last while the block holds an odd count (not yet in
    /// the sums).
    hx: f64,
    hy: f64,
    /// Bound on `|x|` and `|y|` of the pairs the block takes, as a test
    /// word for [`within`] (see the bounds below); 0 when the block is
    /// full or closed.
    bound: u64,
    /// Pairs the block can still take (`FEED_BLOCK − left` taken, a held
    /// pair included); 0 when none is open.
    left: u32,
    /// A block is open (it may be empty or full).
    open: bool,
}

// Bounds. A block opens only on a framed state, slope fixed, within the
// pending-block bounds (`state_in_pending_bounds`: means within 2^300,
// `|b0| <= 2^190`, sums and weights within 2^1000), and with
// `|x0|, |y0| <= B`, where `B = 2^296 / max(1, |b0|)` (rounded). It takes
// pairs with `|x|, |y| <= B`. Then `|x − x0| <= 2^297.01 / max(1, |b0|)`,
// `|(y − y0) − b0·(x − x0)| <= 2^298.1`, and `|d|, |e| < 2^301`: the
// block's sums are within 2^615 and its fold's terms within 2^618, far
// below the 2^1001 at which the state's sums (within 2^1000) could
// overflow. The fold cannot fail, so every pair taken is final when
// `push` returns. The test is on the inputs, not on `d` and `e`, so the
// branch does not wait for the arithmetic (measured 1.3 times faster per
// pair than testing `d² + e²`); a pair outside it that `push` would take
// goes the slow way, correctly. In bits: for a double `v` and a positive
// double `b`, `|v| <= b` exactly when the bits of `v` without the sign
// are at most those of `b`, and NaN and infinities fail it.

/// Pairs per feed block: as many as a chunk of the unweighted `extend`
/// kernels.
const FEED_BLOCK: usize = LONG_CHUNK;
const _: () = assert!(FEED_BLOCK <= 4096 && FEED_BLOCK.is_multiple_of(2));

/// 2^296.
const FEED_BOUND: f64 = 1.2731474852090538e89;

/// Adds a pair's offsets `(d, e)` to sums `[Σd, Σe, Σd², Σd·e, Σe²]`.
#[inline(always)]
fn add_pair(s: &mut [f64; 5], d: f64, e: f64) {
    s[0] += d;
    s[1] += e;
    s[2] += d * d;
    s[3] += d * e;
    s[4] += e * e;
}

/// The test word of a positive double bound `b` for [`within`] (0 is the
/// word that nothing passes).
fn bound_word(b: f64) -> u64 {
    (b.to_bits() << 1) | 1
}

/// Whether `|x|` and `|y|` are both at most the bound whose test word is
/// `word` ([`bound_word`]); sometimes `false` when one is just below it,
/// as the test is on `x | y`, which is at least each. The shift drops the
/// sign bit (one instruction, where a mask needs a constant loaded) and
/// leaves the low bit 0, so `<` on the word with its low bit set is `<=`
/// on the bound.
#[inline(always)]
fn within(x: f64, y: f64, word: u64) -> bool {
    (x.to_bits() | y.to_bits()) << 1 < word
}

impl Block {
    const CLOSED: Block = Block {
        x0: [0.0; 2],
        y0: [0.0; 2],
        b0: [0.0; 2],
        mx: [0.0; 2],
        mv: [0.0; 2],
        sd: [0.0; 2],
        se: [0.0; 2],
        sdd: [0.0; 2],
        sde: [0.0; 2],
        see: [0.0; 2],
        hx: 0.0,
        hy: 0.0,
        bound: 0,
        left: 0,
        open: false,
    };

    /// An empty block on `acc` if the bounds above allow one; closed
    /// otherwise.
    fn open(acc: &LeanMoments) -> Block {
        if acc.pend_open || !acc.state_in_pending_bounds() {
            return Block::CLOSED;
        }
        Block::open_at(acc, acc.mx, acc.mv)
    }

    /// As [`Block::open`] on `acc` with its moments replaced by a fold's
    /// that are within the pending-block bounds: the means `(mx, mv)`.
    fn open_at(acc: &LeanMoments, mx: f64, mv: f64) -> Block {
        let b = FEED_BOUND / acc.b0.abs().max(1.0);
        let bound = bound_word(b);
        if !acc.framed || acc.slope_free || !within(acc.x0, acc.y0, bound) {
            return Block::CLOSED;
        }
        Block {
            x0: [acc.x0; 2],
            y0: [acc.y0; 2],
            b0: [acc.b0; 2],
            mx: [mx; 2],
            mv: [mv; 2],
            bound,
            left: FEED_BLOCK as u32,
            open: true,
            ..Block::CLOSED
        }
    }

    /// Pairs in the block.
    fn len(&self) -> u32 {
        if self.open {
            FEED_BLOCK as u32 - self.left
        } else {
            0
        }
    }

    /// Takes a pair if the block is open with room and the pair within the
    /// bounds; `false` (nothing changed) otherwise.
    #[inline(always)]
    fn take(&mut self, x: f64, y: f64) -> bool {
        // A full or closed block has test word 0, which nothing passes.
        if !within(x, y, self.bound) {
            return false;
        }
        self.left -= 1;
        // `FEED_BLOCK` is even: an odd count taken now means hold the pair.
        if self.left & 1 == 1 {
            self.hx = x;
            self.hy = y;
            return true;
        }
        // Lane 0 the held pair, lane 1 this one, written lane-wise so the
        // compiler pairs them; each lane as `pending_offsets`.
        let (xs, ys) = ([self.hx, x], [self.hy, y]);
        let (mut d, mut e) = ([0.0; 2], [0.0; 2]);
        for k in 0..2 {
            let dx = xs[k] - self.x0[k];
            let v = (ys[k] - self.y0[k]) - self.b0[k] * dx;
            d[k] = dx - self.mx[k];
            e[k] = v - self.mv[k];
        }
        for k in 0..2 {
            self.sd[k] += d[k];
            self.se[k] += e[k];
            self.sdd[k] += d[k] * d[k];
            self.sde[k] += d[k] * e[k];
            self.see[k] += e[k] * e[k];
        }
        // `left` reaches 0 here, never on a held pair (it counts down from
        // an even number).
        if self.left == 0 {
            self.bound = 0;
        }
        true
    }

    /// The block's `[Σd, Σe, Σd², Σd·e, Σe²]`: the lanes, then a held pair.
    fn sums(&self, k: u32) -> [f64; 5] {
        let lane = |k: usize| {
            [
                self.sd[k],
                self.se[k],
                self.sdd[k],
                self.sde[k],
                self.see[k],
            ]
        };
        let mut t = lane(0);
        for (t, v) in t.iter_mut().zip(lane(1)) {
            *t += v;
        }
        if k % 2 == 1 {
            let dx = self.hx - self.x0[0];
            let v = (self.hy - self.y0[0]) - self.b0[0] * dx;
            add_pair(&mut t, dx - self.mx[0], v - self.mv[0]);
        }
        t
    }

    /// `acc`'s moments with the block (holding `k > 0` pairs) folded in.
    /// Cannot fail for a block within the bounds above.
    fn folded(&self, acc: &LeanMoments, k: u32) -> Result<Folded, MomentsError> {
        acc.folded_with(k as u16, self.sums(k))
    }

    /// Folds the block into `acc`, which it is about.
    fn fold_into(&self, acc: &mut LeanMoments) -> Result<(), MomentsError> {
        let k = self.len();
        if k > 0 {
            let f = self.folded(acc, k)?;
            acc.set_folded(f);
        }
        Ok(())
    }
}

impl LeanMoments {
    /// Borrows the accumulator for a run of unit-weight pushes that keep
    /// their pending block in the returned [`PairFeed`] (faster per pair
    /// than [`push`](super::PairMoments::push); see there). An open pending
    /// block is folded first.
    #[inline]
    pub fn feed(&mut self) -> PairFeed<'_> {
        // A block within the bounds cannot fail to fold; if it ever did, it
        // stays open and the feed passes every pair to `push`.
        let _ = self.fold_pending();
        PairFeed {
            acc: self,
            blk: Block::CLOSED,
        }
    }
}

impl PairFeed<'_> {
    /// Adds one pair with unit weight.
    ///
    /// # Errors
    /// As [`PairMoments::push`](super::PairMoments::push):
    /// [`MomentsError::NonFinite`] (index 0) or [`MomentsError::Overflow`];
    /// the accumulator and the feed's block are unchanged on error.
    #[inline]
    pub fn push(&mut self, x: f64, y: f64) -> Result<(), MomentsError> {
        if self.blk.take(x, y) {
            return Ok(());
        }
        self.blk = push_cold(self.acc, self.blk, x, y)?;
        Ok(())
    }

    /// Pairs taken by the open block and not yet folded into the accumulator.
    pub fn pending(&self) -> usize {
        self.blk.len() as usize
    }
}

impl Drop for PairFeed<'_> {
    #[inline]
    fn drop(&mut self) {
        drop_cold(self.acc, self.blk);
    }
}

/// A pair the open block cannot take: the block is full or closed, or the
/// pair is out of its bound or not finite. Folds the block (on a copy, so
/// a refused pair changes nothing) and opens the next one with the pair,
/// or passes the pair to `push`.
#[cold]
#[inline(never)]
fn push_cold(acc: &mut LeanMoments, blk: Block, x: f64, y: f64) -> Result<Block, MomentsError> {
    check_pair(x, y, 0)?;
    // The common case: a full block, and the pair opens the next one. The
    // fold is atomic, so it can be done in place.
    let k = blk.len();
    if k > 0 {
        let f = blk.folded(acc, k)?;
        if f.in_pending_bounds(acc.b0) {
            let mut next = Block::open_at(acc, f.mx, f.mv);
            if next.take(x, y) {
                acc.set_folded(f);
                return Ok(next);
            }
        }
    }
    // Otherwise on a copy, so a refused pair changes nothing.
    let mut t = *acc;
    blk.fold_into(&mut t)?;
    let mut next = Block::open(&t);
    if !next.take(x, y) {
        t.push(x, y)?;
        // `push` may have opened the accumulator's own block; fold it so
        // the next pair can open the feed's.
        let _ = t.fold_pending();
        next = Block::CLOSED;
    }
    *acc = t;
    Ok(next)
}

#[cold]
#[inline(never)]
fn drop_cold(acc: &mut LeanMoments, blk: Block) {
    let folded = blk.fold_into(acc);
    debug_assert!(folded.is_ok(), "a feed block within the bounds folds");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn feed_bound_is_two_to_the_296() {
        assert_eq!(FEED_BOUND, 2f64.powi(296));
    }

    /// `within` implies both bounds hold, and is exact for one value when
    /// the other is zero.
    #[test]
    fn within_never_passes_a_value_over_the_bound() {
        let b = FEED_BOUND / 3.7;
        let w = bound_word(b);
        let up = f64::from_bits(b.to_bits() + 1);
        let down = f64::from_bits(b.to_bits() - 1);
        for (v, want) in [
            (b, true),
            (-b, true),
            (down, true),
            (up, false),
            (-up, false),
            (0.0, true),
            (-0.0, true),
            (f64::MIN_POSITIVE / 4.0, true),
            (f64::NAN, false),
            (-f64::NAN, false),
            (f64::INFINITY, false),
            (f64::NEG_INFINITY, false),
            (f64::MAX, false),
        ] {
            assert_eq!(within(v, 0.0, w), want, "{v}");
            assert_eq!(within(0.0, v, w), want, "{v}");
        }
        assert!(!within(0.0, 0.0, 0), "the zero word passes nothing");
        // Pairs from a fixed bit mix: a pass means both are within.
        let mut s = 0x9E37_79B9_7F4A_7C15u64;
        for _ in 0..100_000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let x = f64::from_bits(s);
            let y = f64::from_bits(s.rotate_left(29) ^ 0x0123_4567_89AB_CDEF);
            if within(x, y, w) {
                assert!(x.abs() <= b && y.abs() <= b, "{x} {y}");
            }
        }
    }
}
