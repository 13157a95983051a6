//! Streaming least squares for linear models with `p` coefficients
//! (multiple and polynomial regression), one pass, mergeable.
//!
//! # Method
//! Rows are folded into an upper-triangular factor by square-root-free
//! Givens rotations: Gentleman (1974), "Algorithm AS 75: Basic procedures for
//! large, sparse or weighted linear least squares problems", Applied
//! Statistics 23(3):448–454, with the supplementary routines of Miller
//! (1992), "Algorithm AS 274", Applied Statistics 41(2):458–478. The state is
//! `XᵀWX = R̄ᵀ D R̄` with `R̄` unit upper triangular and `D` diagonal, the
//! rotated response `θ` (so `R̄ β = θ`), and the residual sum of squares.
//!
//! Every quantity of the factor is carried in double-double (about 106 bits)
//! using Dekker (1971), "A floating-point technique for extending the
//! available precision", Numer. Math. 18:224–242 (Veltkamp splitting and the
//! exact product) and Knuth's branch-free TwoSum (TAOCP vol. 2, §4.2.2). Plain
//! double Givens or Householder QR reaches only 7–8 correct digits on
//! ill-conditioned polynomial designs such as NIST's Filip (condition about
//! 1.8e15); carried in double-double the same rotations reach the limit set
//! by the double inputs (about 14 digits).
//!
//! * Merge: the other factor's rows are fed in as weighted observations
//!   (row `i` is `e_i + R̄[i, i+1..]` with response `θ_i` and weight `d_i`),
//!   which is exact in exact arithmetic.
//! * Forgetting: multiplying `D` and the residual sum of squares by
//!   `λ ∈ (0, 1]` before the next rows gives exponentially weighted least
//!   squares (a square-root-free QR recursive least squares).
//!
//! # Storage
//! One implementation works over a flat `[f64]` state of
//! [`storage_len`]`(p)` values; [`ModelCore`] borrows caller storage (no
//! allocation, for firmware and the C interface), [`ModelMoments`] owns a
//! `Vec`. The layout (all `f64`, offsets for `p` coefficients and
//! `m = p(p−1)/2`):
//!
//! | offset | length | content |
//! |---|---|---|
//! | 0 | 1 | layout tag [`LAYOUT_TAG`] |
//! | 1 | 1 | `p` |
//! | 2 | 1 | rows pushed (an integer) |
//! | 3 | 1 | sum of weights (decayed by forgetting) |
//! | 4 | 1 | sum of squared weights (decayed by `λ²`) |
//! | 5 | 1 | column-0 status: 0 no rows, 1 constant so far, 2 varies |
//! | 6 | 1 | column-0 value seen while constant |
//! | 7 | 1 | 1 if forgetting with `λ < 1` was ever applied, else 0 |
//! | 8 | p | `D` high parts |
//! | 8+p | p | `D` low parts |
//! | 8+2p | p | `θ` high parts |
//! | 8+3p | p | `θ` low parts |
//! | 8+4p | 2 | residual sum of squares, high then low part |
//! | 10+4p | m | `R̄` strict upper triangle, row-major, high parts |
//! | 10+4p+m | m | `R̄` low parts |
//!
//! High and low parts are stored apart so the inner loop runs over
//! contiguous arrays.
//!
//! # Accuracy
//! On the eleven NIST StRD linear least-squares datasets, in file order,
//! reversed, and split in three and merged, every certified value is
//! reproduced to at least 13.5 digits (Filip: 14.0), except three
//! Wampler2 coefficients (13.2–13.4) whose decimal x values are not binary
//! numbers: the exact solution of the double-rounded data is itself that
//! far from the certified values, and the fit matches that exact solution
//! to 15 digits.
//!
//! # Speed
//! Double-double costs about ten times plain double per operation. The
//! block paths ([`ModelMoments::extend_rows`], `extend_powers`) run several
//! independent factors side by side so the compiler can vectorise them,
//! then merge. With the `simd` feature the block and row updates run, on
//! CPUs with AVX2 and FMA, in code compiled for those instructions and
//! chosen at run time (`plumbfit-kernels` makes the one `unsafe` call);
//! the exact products then take one fused multiply-add instead of
//! Dekker's split. Both forms are exact, so the two paths give the same
//! bits. Measured at `p = 8` (CPU time of one core of a heavily shared AMD
//! EPYC): 1.4–1.7 million rows/s on the portable path (SSE2, no FMA) and
//! 5.5–6.5 million rows/s on the AVX2 + FMA path of the same portable
//! build, as fast as a build for `x86-64-v3`.
//!
//! # Limits
//! Values above about 1e150 in magnitude (so that squared terms pass
//! 1e300) make the state overflow; that is reported as
//! [`ModelError::Overflow`] and the accumulator is left as it was.
#![allow(clippy::needless_range_loop)] // index loops mirror the triangular algebra

use crate::dd::Dd;
use alloc::vec;
use alloc::vec::Vec;

/// Largest number of coefficients an accumulator can hold.
pub const MAX_PARAMS: usize = 16;

/// Strict upper triangle size at [`MAX_PARAMS`].
const MAX_RBAR: usize = MAX_PARAMS * (MAX_PARAMS - 1) / 2;

/// First value of every state: identifies the layout (version 1).
pub const LAYOUT_TAG: f64 = 1_346_784_561.0;

/// Number of header values before the factor.
const HEADER_LEN: usize = 8;
const H_TAG: usize = 0;
const H_P: usize = 1;
const H_COUNT: usize = 2;
const H_WSUM: usize = 3;
const H_WSQ: usize = 4;
const H_COL0_STATE: usize = 5;
const H_COL0_VALUE: usize = 6;
const H_FORGOT: usize = 7;

const COL0_NONE: f64 = 0.0;
const COL0_CONST: f64 = 1.0;
const COL0_VARIES: f64 = 2.0;

/// Rows handled together by the block path: independent factors whose
/// arithmetic the compiler can interleave and vectorise, merged at the end.
/// Eight was fastest both with SSE2 only and with AVX2 (measured against
/// four and sixteen).
const LANES: usize = 8;

/// Blocks shorter than this go row by row; the split only pays once the
/// final merges of the extra lanes are amortised.
const LANE_MIN_ROWS: usize = 64;

/// Rows of a block folded as one unit: the first segment continues the
/// state, each later one is folded from an empty factor and then merged in,
/// in order. Fixed, so that spreading the segments over threads changes
/// nothing in the result; large enough that the merges cost well under
/// 1 % (up to LANES · p merged rows per segment), small enough that a
/// 2 × 10⁵-row block still splits over several threads.
const SEGMENT_ROWS: usize = 16_384;

/// Number of `f64` values the state of a `p`-coefficient model occupies.
///
/// This is `p² + 3p + 10`; see the module documentation for the layout.
pub const fn storage_len(p: usize) -> usize {
    HEADER_LEN + 4 * p + 2 + p * (p.saturating_sub(1))
}

/// Errors of the model accumulator and its fits.
///
/// Display messages are lowercase and not a stable interface; match on the
/// variant or on [`ModelError::code`].
#[non_exhaustive]
#[derive(Copy, Clone, PartialEq, Eq, Debug, thiserror::Error)]
pub enum ModelError {
    /// A regressor value or the response is NaN or infinite.
    #[error("non-finite value at row {row}, column {column}")]
    NonFinite {
        /// Row index within the call's input (0 for a single row).
        row: usize,
        /// Column index; `p` means the response.
        column: usize,
    },
    /// A weight is zero, negative or not finite.
    #[error("invalid weight at row {row}: weights must be finite and positive")]
    InvalidWeight {
        /// Row index within the call's input (0 for a single row).
        row: usize,
    },
    /// A slice has the wrong length, or two accumulators have different `p`.
    #[error("dimension mismatch: expected {expected}, found {found}")]
    DimensionMismatch {
        /// Length (or parameter count) that was required.
        expected: usize,
        /// Length (or parameter count) that was given.
        found: usize,
    },
    /// The parameter count is 0 or above [`MAX_PARAMS`].
    #[error("invalid parameter count {p}: must be between 1 and 16")]
    InvalidParamCount {
        /// The rejected count.
        p: usize,
    },
    /// A forgetting factor outside `(0, 1]`.
    #[error("invalid forgetting factor: must lie in (0, 1]")]
    InvalidForgetting {
        /// IEEE-754 bits of the rejected value (`f64::from_bits`).
        bits: u64,
    },
    /// A confidence level outside the open interval `(0, 1)`.
    #[error("invalid confidence level: must lie strictly between 0 and 1")]
    InvalidLevel {
        /// IEEE-754 bits of the rejected value (`f64::from_bits`).
        bits: u64,
    },
    /// A replicate count of zero for a prediction interval.
    #[error("invalid replicate count: must be at least 1")]
    InvalidReplicates,
    /// Caller storage shorter than [`storage_len`].
    #[error("storage too small: {needed} values needed, {have} given")]
    StorageTooSmall {
        /// Values required for this `p`.
        needed: usize,
        /// Values provided.
        have: usize,
    },
    /// Storage that does not hold a valid state (wrong tag or header).
    #[error("storage does not hold a valid model state")]
    InvalidStorage,
    /// A column is (numerically) a linear combination of earlier columns.
    #[error("rank deficient: column {column} depends on earlier columns")]
    RankDeficient {
        /// Index of the first dependent column.
        column: usize,
    },
    /// Too few rows for the requested result.
    #[error("too few rows: {needed} needed, {have} available")]
    TooFewRows {
        /// Rows required.
        needed: u64,
        /// Rows accumulated.
        have: u64,
    },
    /// The state, or a fit result, would overflow (values too large in
    /// magnitude, or weights so small that their inverses overflow).
    #[error("overflow in the accumulator state or its fit")]
    Overflow,
    /// A block of rows with no rows (the same condition and code as the
    /// line accumulator's empty input).
    #[error("input is empty")]
    EmptyInput,
}

impl ModelError {
    /// Stable numeric code: 20–29 for caller errors, 120–129 for numerical
    /// conditions, and the shared code 4 for empty input. Numbers are never
    /// reused.
    pub const fn code(&self) -> u16 {
        match self {
            ModelError::NonFinite { .. } => 20,
            ModelError::InvalidWeight { .. } => 21,
            ModelError::DimensionMismatch { .. } => 22,
            ModelError::InvalidParamCount { .. } => 23,
            ModelError::InvalidForgetting { .. } => 24,
            ModelError::InvalidLevel { .. } => 25,
            ModelError::InvalidReplicates => 26,
            ModelError::StorageTooSmall { .. } => 27,
            ModelError::InvalidStorage => 28,
            ModelError::RankDeficient { .. } => 120,
            ModelError::TooFewRows { .. } => 121,
            ModelError::Overflow => 122,
            ModelError::EmptyInput => 4,
        }
    }
}

// ---------------------------------------------------------------------------
// Branch-free double-double kernels for the hot loop.
//
// These avoid `libm::fma`, which on x86 dispatches at run time through a
// function pointer and so can neither be inlined nor vectorised; Dekker's
// Veltkamp split gives the exact product with plain multiplies and adds.
// Values are (hi, lo) pairs of f64.
mod kern {
    /// 2^27 + 1, Veltkamp's splitting constant for 53-bit doubles.
    const SPLITTER: f64 = 134_217_729.0;

    /// Splits `a` into two halves of at most 26 significant bits each.
    #[inline(always)]
    pub fn split(a: f64) -> (f64, f64) {
        let t = SPLITTER * a;
        let h = t - (t - a);
        (h, a - h)
    }

    /// Exact product error: `a·b − fl(a·b)` given both operands split.
    #[inline(always)]
    pub fn prod_err(p: f64, ah: f64, al: f64, bh: f64, bl: f64) -> f64 {
        ((ah * bh - p) + ah * bl + al * bh) + al * bl
    }

    /// `(p, e)` with `p = fl(a·b)` and `p + e = a·b` exactly, `a` given
    /// pre-split. With `FMA` (code run under the caller's run-time AVX2 +
    /// FMA dispatch) or a hardware FMA enabled at compile time, and `std`
    /// for `f64::mul_add`, this is two instructions and the split is dead
    /// code; otherwise Dekker's product. Both forms give the exact error,
    /// so the choice changes speed, not bits.
    #[inline(always)]
    pub fn two_prod_split<const FMA: bool>(a: f64, ah: f64, al: f64, b: f64) -> (f64, f64) {
        let p = a * b;
        #[cfg(feature = "std")]
        if FMA || cfg!(target_feature = "fma") {
            return (p, a.mul_add(b, -p));
        }
        let (bh, bl) = split(b);
        (p, prod_err(p, ah, al, bh, bl))
    }

    /// Exact product `(p, e)` of two doubles.
    #[inline(always)]
    pub fn two_prod<const FMA: bool>(a: f64, b: f64) -> (f64, f64) {
        let (ah, al) = split(a);
        two_prod_split::<FMA>(a, ah, al, b)
    }

    /// `(s, e)` with `s + e = a + b` exactly, `|e| ≤ ulp(s)/2` (Dekker's
    /// Fast2Sum; needs `|a| ≥ |b|` or `a = 0`).
    #[inline(always)]
    pub fn fast_two_sum(a: f64, b: f64) -> (f64, f64) {
        let s = a + b;
        (s, b - (s - a))
    }

    /// Double-double product.
    #[inline(always)]
    pub fn mul<const FMA: bool>(ah: f64, al: f64, bh: f64, bl: f64) -> (f64, f64) {
        let (p, e) = two_prod::<FMA>(ah, bh);
        fast_two_sum(p, e + (ah * bl + al * bh))
    }

    /// Double-double product with `a` given pre-split (`ahh + ahl = ah`).
    #[inline(always)]
    pub fn mul_split<const FMA: bool>(
        ah: f64,
        al: f64,
        ahh: f64,
        ahl: f64,
        bh: f64,
        bl: f64,
    ) -> (f64, f64) {
        let (p, e) = two_prod_split::<FMA>(ah, ahh, ahl, bh);
        fast_two_sum(p, e + (ah * bl + al * bh))
    }

    /// Double-double sum (the cheap form: the low parts are added in
    /// double, which is backward stable at double-double precision).
    #[inline(always)]
    pub fn add(ah: f64, al: f64, bh: f64, bl: f64) -> (f64, f64) {
        let s = ah + bh;
        let bb = s - ah;
        let err = (ah - (s - bb)) + (bh - bb);
        fast_two_sum(s, err + (al + bl))
    }

    /// `a + b·c` with `b` given pre-split (`bhh + bhl = bh`).
    #[allow(clippy::too_many_arguments)]
    #[inline(always)]
    pub fn fma<const FMA: bool>(
        ah: f64,
        al: f64,
        bh: f64,
        bl: f64,
        bhh: f64,
        bhl: f64,
        ch: f64,
        cl: f64,
    ) -> (f64, f64) {
        let (p, e) = two_prod_split::<FMA>(bh, bhh, bhl, ch);
        let e = e + (bh * cl + bl * ch);
        let s = ah + p;
        let bb = s - ah;
        let err = (ah - (s - bb)) + (p - bb);
        fast_two_sum(s, err + (al + e))
    }

    /// Double-double reciprocal `1 / b` (about 104 correct bits).
    #[inline(always)]
    pub fn recip<const FMA: bool>(bh: f64, bl: f64) -> (f64, f64) {
        let q1 = 1.0 / bh;
        let (p, e) = two_prod::<FMA>(bh, q1);
        // 1 − p is exact (Sterbenz): p lies within an ulp of 1.
        let r = ((1.0 - p) - e) - bl * q1;
        fast_two_sum(q1, r * q1)
    }
}

// ---------------------------------------------------------------------------
// Offsets into the flat state.

#[inline(always)]
const fn off_dh(_p: usize) -> usize {
    HEADER_LEN
}
#[inline(always)]
const fn off_dl(p: usize) -> usize {
    HEADER_LEN + p
}
#[inline(always)]
const fn off_th(p: usize) -> usize {
    HEADER_LEN + 2 * p
}
#[inline(always)]
const fn off_tl(p: usize) -> usize {
    HEADER_LEN + 3 * p
}
#[inline(always)]
const fn off_sse(p: usize) -> usize {
    HEADER_LEN + 4 * p
}
#[inline(always)]
const fn off_rh(p: usize) -> usize {
    HEADER_LEN + 4 * p + 2
}
#[inline(always)]
const fn off_rl(p: usize) -> usize {
    HEADER_LEN + 4 * p + 2 + rbar_len(p)
}
#[inline(always)]
const fn rbar_len(p: usize) -> usize {
    p * (p.saturating_sub(1)) / 2
}
/// Index of `R̄[i, i+1]` in the packed strict upper triangle.
#[inline(always)]
const fn rbar_row(p: usize, i: usize) -> usize {
    i * (2 * p - i - 1) / 2
}

// ---------------------------------------------------------------------------
// Working copy of the factor, `N` independent factors side by side.

#[derive(Clone)]
struct Work<const N: usize> {
    p: usize,
    dh: [[f64; N]; MAX_PARAMS],
    dl: [[f64; N]; MAX_PARAMS],
    th: [[f64; N]; MAX_PARAMS],
    tl: [[f64; N]; MAX_PARAMS],
    rh: [[f64; N]; MAX_RBAR],
    rl: [[f64; N]; MAX_RBAR],
    sh: [f64; N],
    sl: [f64; N],
}

/// One observation per lane: the working row, response and weight.
struct Obs<const N: usize> {
    xh: [[f64; N]; MAX_PARAMS],
    xl: [[f64; N]; MAX_PARAMS],
    yh: [f64; N],
    yl: [f64; N],
    wh: [f64; N],
    wl: [f64; N],
}

impl<const N: usize> Obs<N> {
    #[inline(always)]
    fn zero() -> Self {
        Obs {
            xh: [[0.0; N]; MAX_PARAMS],
            xl: [[0.0; N]; MAX_PARAMS],
            yh: [0.0; N],
            yl: [0.0; N],
            wh: [0.0; N],
            wl: [0.0; N],
        }
    }
}

impl<const N: usize> Work<N> {
    fn empty(p: usize) -> Self {
        Work {
            p,
            dh: [[0.0; N]; MAX_PARAMS],
            dl: [[0.0; N]; MAX_PARAMS],
            th: [[0.0; N]; MAX_PARAMS],
            tl: [[0.0; N]; MAX_PARAMS],
            rh: [[0.0; N]; MAX_RBAR],
            rl: [[0.0; N]; MAX_RBAR],
            sh: [0.0; N],
            sl: [0.0; N],
        }
    }

    fn load_lane(&mut self, lane: usize, s: &[f64]) {
        let p = self.p;
        for i in 0..p {
            self.dh[i][lane] = s[off_dh(p) + i];
            self.dl[i][lane] = s[off_dl(p) + i];
            self.th[i][lane] = s[off_th(p) + i];
            self.tl[i][lane] = s[off_tl(p) + i];
        }
        for r in 0..rbar_len(p) {
            self.rh[r][lane] = s[off_rh(p) + r];
            self.rl[r][lane] = s[off_rl(p) + r];
        }
        self.sh[lane] = s[off_sse(p)];
        self.sl[lane] = s[off_sse(p) + 1];
    }

    /// Sets lane `lane` to the single factor `from` (over the same `p`).
    fn set_lane(&mut self, lane: usize, from: &Work<1>) {
        let p = self.p;
        for i in 0..p {
            self.dh[i][lane] = from.dh[i][0];
            self.dl[i][lane] = from.dl[i][0];
            self.th[i][lane] = from.th[i][0];
            self.tl[i][lane] = from.tl[i][0];
        }
        for r in 0..rbar_len(p) {
            self.rh[r][lane] = from.rh[r][0];
            self.rl[r][lane] = from.rl[r][0];
        }
        self.sh[lane] = from.sh[0];
        self.sl[lane] = from.sl[0];
    }

    fn store_lane(&self, lane: usize, s: &mut [f64]) {
        let p = self.p;
        for i in 0..p {
            s[off_dh(p) + i] = self.dh[i][lane];
            s[off_dl(p) + i] = self.dl[i][lane];
            s[off_th(p) + i] = self.th[i][lane];
            s[off_tl(p) + i] = self.tl[i][lane];
        }
        for r in 0..rbar_len(p) {
            s[off_rh(p) + r] = self.rh[r][lane];
            s[off_rl(p) + r] = self.rl[r][lane];
        }
        s[off_sse(p)] = self.sh[lane];
        s[off_sse(p) + 1] = self.sl[lane];
    }

    /// True when every used value in every lane is finite.
    fn is_finite(&self) -> bool {
        let p = self.p;
        let mut acc = 0.0f64;
        // A product by zero keeps this branch-free: any NaN or infinity in a
        // lane turns the accumulator into NaN.
        for i in 0..p {
            for l in 0..N {
                acc += 0.0 * (self.dh[i][l] + self.dl[i][l] + self.th[i][l] + self.tl[i][l]);
            }
        }
        for r in 0..rbar_len(p) {
            for l in 0..N {
                acc += 0.0 * (self.rh[r][l] + self.rl[r][l]);
            }
        }
        for l in 0..N {
            acc += 0.0 * (self.sh[l] + self.sl[l]);
        }
        acc == 0.0
    }

    /// Folds one observation per lane into the factors (Gentleman's update),
    /// starting at column `start` (the observation is zero before it).
    ///
    /// Branch-free so the lanes vectorise: a pivot with zero new diagonal
    /// (empty column and zero regressor) leaves the weight and factor
    /// unchanged, and a zero weight makes the whole update a no-op.
    #[inline(always)]
    fn include<const FMA: bool>(&mut self, start: usize, o: &mut Obs<N>) {
        let p = self.p;
        let mut wh = o.wh;
        let mut wl = o.wl;
        let mut yh = o.yh;
        let mut yl = o.yl;
        let mut row = rbar_row(p, start);
        for i in start..p {
            // Per-lane rotation scalars, with −x_i, s̄ and c̄ pre-split for
            // the products of the inner loop.
            let mut nx = [[0.0f64; N]; 4];
            let mut sb = [[0.0f64; N]; 4];
            let mut cb = [[0.0f64; N]; 4];
            let mut cheap = true;
            for l in 0..N {
                let (xih, xil) = (o.xh[i][l], o.xl[i][l]);
                let (di_h, di_l) = (self.dh[i][l], self.dl[i][l]);
                let (wxh, wxl) = kern::mul::<FMA>(wh[l], wl[l], xih, xil);
                let (th, tl) = kern::mul::<FMA>(wxh, wxl, xih, xil);
                let (nh, nl) = kern::add(di_h, di_l, th, tl);
                let zero = nh == 0.0;
                let (ih, il) =
                    kern::recip::<FMA>(if zero { 1.0 } else { nh }, if zero { 0.0 } else { nl });
                let (sh, sl) = kern::mul::<FMA>(wxh, wxl, ih, il);
                let (ch, cl) = kern::mul::<FMA>(di_h, di_l, ih, il);
                // An empty column met by a zero regressor: identity rotation.
                let (sh, sl) = if zero { (0.0, 0.0) } else { (sh, sl) };
                let (ch, cl) = if zero { (1.0, 0.0) } else { (ch, cl) };
                let (nwh, nwl) = kern::mul::<FMA>(wh[l], wl[l], ch, cl);
                wh[l] = nwh;
                wl[l] = nwl;
                self.dh[i][l] = nh;
                self.dl[i][l] = nl;
                cheap &= ch >= 0.5;
                let (a, b) = kern::split(-xih);
                nx[0][l] = -xih;
                nx[1][l] = -xil;
                nx[2][l] = a;
                nx[3][l] = b;
                let (a, b) = kern::split(sh);
                sb[0][l] = sh;
                sb[1][l] = sl;
                sb[2][l] = a;
                sb[3][l] = b;
                let (a, b) = kern::split(ch);
                cb[0][l] = ch;
                cb[1][l] = cl;
                cb[2][l] = a;
                cb[3][l] = b;
            }
            // Slices instead of indices: no bounds checks in the hot loop.
            let len = p - i - 1;
            let rh = &mut self.rh[row..row + len];
            let rl = &mut self.rl[row..row + len];
            let (_, xh) = o.xh[..p].split_at_mut(i + 1);
            let (_, xl) = o.xl[..p].split_at_mut(i + 1);
            let entries = rh
                .iter_mut()
                .zip(rl.iter_mut())
                .zip(xh.iter_mut())
                .zip(xl.iter_mut());
            if cheap {
                // Steady state (c̄ ≥ 1/2): R̄_ik ← R̄_ik + s̄·x_k(new) equals
                // c̄·R̄_ik + s̄·x_k(old) because c̄ + s̄·x_i = 1, one product
                // cheaper, and the sum cannot cancel by more than a factor 2.
                for (((rh, rl), xh), xl) in entries {
                    for l in 0..N {
                        let (xkh, xkl) = kern::fma::<FMA>(
                            xh[l], xl[l], nx[0][l], nx[1][l], nx[2][l], nx[3][l], rh[l], rl[l],
                        );
                        xh[l] = xkh;
                        xl[l] = xkl;
                        let (nrh, nrl) = kern::fma::<FMA>(
                            rh[l], rl[l], sb[0][l], sb[1][l], sb[2][l], sb[3][l], xkh, xkl,
                        );
                        rh[l] = nrh;
                        rl[l] = nrl;
                    }
                }
            } else {
                // A heavy row against a light factor row (early rows, merges,
                // a nearly singular start): the cheap form would cancel a
                // large old R̄ against itself, so use Gentleman's original
                // c̄·R̄ + s̄·x(old).
                for (((rh, rl), xh), xl) in entries {
                    for l in 0..N {
                        let (oxh, oxl) = (xh[l], xl[l]);
                        let (xkh, xkl) = kern::fma::<FMA>(
                            oxh, oxl, nx[0][l], nx[1][l], nx[2][l], nx[3][l], rh[l], rl[l],
                        );
                        xh[l] = xkh;
                        xl[l] = xkl;
                        let (crh, crl) = kern::mul_split::<FMA>(
                            cb[0][l], cb[1][l], cb[2][l], cb[3][l], rh[l], rl[l],
                        );
                        let (nrh, nrl) = kern::fma::<FMA>(
                            crh, crl, sb[0][l], sb[1][l], sb[2][l], sb[3][l], oxh, oxl,
                        );
                        rh[l] = nrh;
                        rl[l] = nrl;
                    }
                }
            }
            for l in 0..N {
                let (oyh, oyl) = (yh[l], yl[l]);
                let (th0, tl0) = (self.th[i][l], self.tl[i][l]);
                let (nyh, nyl) =
                    kern::fma::<FMA>(oyh, oyl, nx[0][l], nx[1][l], nx[2][l], nx[3][l], th0, tl0);
                yh[l] = nyh;
                yl[l] = nyl;
                let (th, tl) = if cheap {
                    kern::fma::<FMA>(th0, tl0, sb[0][l], sb[1][l], sb[2][l], sb[3][l], nyh, nyl)
                } else {
                    let (ch, cl) =
                        kern::mul_split::<FMA>(cb[0][l], cb[1][l], cb[2][l], cb[3][l], th0, tl0);
                    kern::fma::<FMA>(ch, cl, sb[0][l], sb[1][l], sb[2][l], sb[3][l], oyh, oyl)
                };
                self.th[i][l] = th;
                self.tl[i][l] = tl;
            }
            row += p - i - 1;
        }
        for l in 0..N {
            // SSE += w·e², e the residual of the row after all rotations.
            let (eh, el) = kern::mul::<FMA>(yh[l], yl[l], yh[l], yl[l]);
            let (ah, al) = kern::mul::<FMA>(wh[l], wl[l], eh, el);
            let (sh, sl) = kern::add(self.sh[l], self.sl[l], ah, al);
            self.sh[l] = sh;
            self.sl[l] = sl;
        }
    }

    /// Feeds lane `lane` of `other` (a factor over the same `p`) into lane 0
    /// of `self`, row by row, as weighted observations.
    fn absorb_lane<const M: usize, const FMA: bool>(&mut self, other: &Work<M>, lane: usize) {
        let p = self.p;
        for i in 0..p {
            if other.dh[i][lane] == 0.0 {
                continue; // an empty row carries nothing
            }
            let mut o = Obs::<N>::zero();
            o.xh[i][0] = 1.0;
            let row = rbar_row(p, i);
            for k in i + 1..p {
                o.xh[k][0] = other.rh[row + k - i - 1][lane];
                o.xl[k][0] = other.rl[row + k - i - 1][lane];
            }
            o.yh[0] = other.th[i][lane];
            o.yl[0] = other.tl[i][lane];
            o.wh[0] = other.dh[i][lane];
            o.wl[0] = other.dl[i][lane];
            self.include::<FMA>(i, &mut o);
        }
        let (sh, sl) = kern::add(self.sh[0], self.sl[0], other.sh[lane], other.sl[lane]);
        self.sh[0] = sh;
        self.sl[0] = sl;
    }
}

// ---------------------------------------------------------------------------
// Operations on the flat state. `s` always has exactly `storage_len(p)`
// values and a valid header.

fn check_p(p: usize) -> Result<(), ModelError> {
    if p == 0 || p > MAX_PARAMS {
        Err(ModelError::InvalidParamCount { p })
    } else {
        Ok(())
    }
}

fn init_state(s: &mut [f64], p: usize) {
    for v in s.iter_mut() {
        *v = 0.0;
    }
    s[H_TAG] = LAYOUT_TAG;
    s[H_P] = p as f64;
}

/// Reads and checks the header; returns `p`.
fn header_p(s: &[f64]) -> Result<usize, ModelError> {
    if s.len() < HEADER_LEN || s[H_TAG] != LAYOUT_TAG {
        return Err(ModelError::InvalidStorage);
    }
    let pf = s[H_P];
    if !(pf >= 1.0 && pf <= MAX_PARAMS as f64 && pf == libm::floor(pf)) {
        return Err(ModelError::InvalidStorage);
    }
    let p = pf as usize;
    let need = storage_len(p);
    if s.len() < need {
        return Err(ModelError::StorageTooSmall {
            needed: need,
            have: s.len(),
        });
    }
    let st = s[H_COL0_STATE];
    let count = s[H_COUNT];
    if !(st == COL0_NONE || st == COL0_CONST || st == COL0_VARIES)
        || !(count >= 0.0 && count == libm::floor(count))
        || s[..need].iter().any(|v| !v.is_finite())
    {
        return Err(ModelError::InvalidStorage);
    }
    Ok(p)
}

fn check_row(row: &[f64], y: f64, w: f64, idx: usize) -> Result<(), ModelError> {
    for (j, v) in row.iter().enumerate() {
        if !v.is_finite() {
            return Err(ModelError::NonFinite {
                row: idx,
                column: j,
            });
        }
    }
    if !y.is_finite() {
        return Err(ModelError::NonFinite {
            row: idx,
            column: row.len(),
        });
    }
    if !(w.is_finite() && w > 0.0) {
        return Err(ModelError::InvalidWeight { row: idx });
    }
    Ok(())
}

/// Whether every regressor and response value is finite and every weight
/// finite and positive: the test of [`check_row`] over a whole block, on
/// the bit patterns and without early exit so that it vectorises.
fn block_is_valid(xs: &[f64], ys: &[f64], ws: Option<&[f64]>) -> bool {
    const EXP: u64 = 0x7ff0_0000_0000_0000;
    const EXP_ONE: u64 = 0x0010_0000_0000_0000;
    // A value is NaN or infinite exactly when its exponent field is all
    // ones; adding one unit of the exponent then carries into bit 63.
    let non_finite = |v: &[f64]| {
        v.iter().fold(0u64, |acc, x| {
            acc | (x.to_bits() & EXP).wrapping_add(EXP_ONE)
        })
    };
    let mut bad = (non_finite(xs) | non_finite(ys)) >> 63;
    if let Some(ws) = ws {
        // Finite and > 0 (subnormals included): bits in 1 ..= largest
        // finite, so bits − 1 (wrapping) below the largest finite.
        const LIMIT: u64 = 0x7fef_ffff_ffff_ffff;
        bad |= ws.iter().fold(0u64, |acc, w| {
            acc | (w.to_bits().wrapping_sub(1) >= LIMIT) as u64
        });
    }
    bad == 0
}

/// Header bookkeeping shared by the row paths: counts, weight sums, and
/// whether column 0 has stayed constant (for intercept detection).
#[derive(Clone, Copy)]
struct Tally {
    count: f64,
    wsum: f64,
    wsq: f64,
    col0_state: f64,
    col0_value: f64,
}

impl Tally {
    fn read(s: &[f64]) -> Self {
        Tally {
            count: s[H_COUNT],
            wsum: s[H_WSUM],
            wsq: s[H_WSQ],
            col0_state: s[H_COL0_STATE],
            col0_value: s[H_COL0_VALUE],
        }
    }
    fn write(&self, s: &mut [f64]) {
        s[H_COUNT] = self.count;
        s[H_WSUM] = self.wsum;
        s[H_WSQ] = self.wsq;
        s[H_COL0_STATE] = self.col0_state;
        s[H_COL0_VALUE] = self.col0_value;
    }
    #[inline(always)]
    fn add_row(&mut self, x0: f64, w: f64) {
        self.count += 1.0;
        self.wsum += w;
        self.wsq += w * w;
        if self.col0_state == COL0_NONE {
            self.col0_state = COL0_CONST;
            self.col0_value = x0;
        } else if self.col0_state == COL0_CONST && x0 != self.col0_value {
            self.col0_state = COL0_VARIES;
        }
    }
    /// [`add_row`](Self::add_row) for rows `0..n` (column-0 values from
    /// `x0`, weights `ws` or all 1), with the same result in every bit.
    fn add_rows(&mut self, n: usize, x0: impl Fn(usize) -> f64, ws: Option<&[f64]>) {
        // Adding 1 n times to a whole number c is exact, and so equals
        // c + n, while c + n stays within 2^53 (`n as f64` is exact: a
        // slice of doubles is far shorter than 2^53).
        let room = 9_007_199_254_740_992.0 - n as f64;
        let whole = |c: f64| c >= 0.0 && c <= room && c == libm::trunc(c);
        if whole(self.count) {
            self.count += n as f64;
        } else {
            for _ in 0..n {
                self.count += 1.0;
            }
        }
        match ws {
            // Unit weights: w = w·w = 1.
            None if whole(self.wsum) && whole(self.wsq) => {
                self.wsum += n as f64;
                self.wsq += n as f64;
            }
            _ => {
                for r in 0..n {
                    let w = ws.map_or(1.0, |w| w[r]);
                    self.wsum += w;
                    self.wsq += w * w;
                }
            }
        }
        let mut first = 0;
        if self.col0_state == COL0_NONE && n > 0 {
            self.col0_state = COL0_CONST;
            self.col0_value = x0(0);
            first = 1;
        }
        if self.col0_state == COL0_CONST && (first..n).any(|r| x0(r) != self.col0_value) {
            self.col0_state = COL0_VARIES;
        }
    }

    fn merge(&mut self, o: &Tally) {
        self.count += o.count;
        self.wsum += o.wsum;
        self.wsq += o.wsq;
        if self.col0_state == COL0_NONE {
            self.col0_state = o.col0_state;
            self.col0_value = o.col0_value;
        } else if o.col0_state == COL0_VARIES
            || (o.col0_state == COL0_CONST && o.col0_value != self.col0_value)
        {
            self.col0_state = COL0_VARIES;
        }
    }
}

fn state_push(s: &mut [f64], p: usize, row: &[f64], y: f64, w: f64) -> Result<(), ModelError> {
    if row.len() != p {
        return Err(ModelError::DimensionMismatch {
            expected: p,
            found: row.len(),
        });
    }
    check_row(row, y, w, 0)?;
    let mut work = Work::<1>::empty(p);
    work.load_lane(0, s);
    let mut o = Obs::<1>::zero();
    for j in 0..p {
        o.xh[j][0] = row[j];
    }
    o.yh[0] = y;
    o.wh[0] = w;
    #[cfg(feature = "simd")]
    let fast = FMA_DISPATCH.load(core::sync::atomic::Ordering::Relaxed)
        && plumbfit_kernels::dispatch::with_avx2_fma(|| work.include::<true>(0, &mut o)).is_some();
    #[cfg(not(feature = "simd"))]
    let fast = false;
    if !fast {
        work.include::<false>(0, &mut o);
    }
    let mut t = Tally::read(s);
    t.add_row(row[0], w);
    if !work.is_finite() || !t.wsq.is_finite() {
        return Err(ModelError::Overflow);
    }
    work.store_lane(0, s);
    t.write(s);
    Ok(())
}

/// Where the block paths read a row's regressors from.
trait RowSource {
    /// Column-0 value of row `r` (for intercept detection).
    fn x0(&self, r: usize) -> f64;
    /// Writes row `r` into lane `l` of `o`.
    fn fill<const N: usize, const FMA: bool>(&self, r: usize, l: usize, o: &mut Obs<N>);
}

/// Row-major `n × p` doubles.
struct FlatRows<'a> {
    rows: &'a [f64],
    p: usize,
}

impl RowSource for FlatRows<'_> {
    #[inline(always)]
    fn x0(&self, r: usize) -> f64 {
        self.rows[r * self.p]
    }
    #[inline(always)]
    fn fill<const N: usize, const FMA: bool>(&self, r: usize, l: usize, o: &mut Obs<N>) {
        let row = &self.rows[r * self.p..(r + 1) * self.p];
        // The low parts are reset too: `include` leaves the rotated
        // working row in the buffer.
        for ((xh, xl), v) in o.xh.iter_mut().zip(o.xl.iter_mut()).zip(row) {
            xh[l] = *v;
            xl[l] = 0.0;
        }
    }
}

/// Powers `1, x, …, x^(p−1)` formed in double-double.
struct PowerRows<'a> {
    xs: &'a [f64],
    p: usize,
}

impl RowSource for PowerRows<'_> {
    #[inline(always)]
    fn x0(&self, _r: usize) -> f64 {
        1.0
    }
    #[inline(always)]
    fn fill<const N: usize, const FMA: bool>(&self, r: usize, l: usize, o: &mut Obs<N>) {
        let x = self.xs[r];
        let (mut h, mut lo) = (1.0, 0.0);
        for j in 0..self.p {
            o.xh[j][l] = h;
            o.xl[j][l] = lo;
            let (ph, pl) = kern::two_prod::<FMA>(h, x);
            (h, lo) = kern::fast_two_sum(ph, pl + lo * x);
        }
    }
}

fn check_block_lengths(
    n: usize,
    found: usize,
    per_row: usize,
    ws: Option<&[f64]>,
) -> Result<(), ModelError> {
    if found != n * per_row {
        return Err(ModelError::DimensionMismatch {
            expected: n * per_row,
            found,
        });
    }
    if let Some(ws) = ws {
        if ws.len() != n {
            return Err(ModelError::DimensionMismatch {
                expected: n,
                found: ws.len(),
            });
        }
    }
    Ok(())
}

fn state_extend(
    s: &mut [f64],
    p: usize,
    rows: &[f64],
    ys: &[f64],
    ws: Option<&[f64]>,
    threads: usize,
) -> Result<(), ModelError> {
    let n = ys.len();
    check_block_lengths(n, rows.len(), p, ws)?;
    if n == 0 {
        return Err(ModelError::EmptyInput);
    }
    // Validate the whole block before touching the state; the row-by-row
    // pass only runs to name the first bad value.
    if !block_is_valid(rows, ys, ws) {
        for r in 0..n {
            let w = ws.map_or(1.0, |w| w[r]);
            check_row(&rows[r * p..(r + 1) * p], ys[r], w, r)?;
        }
    }
    fold_rows(s, p, &FlatRows { rows, p }, ys, ws, threads)
}

fn state_extend_powers(
    s: &mut [f64],
    p: usize,
    xs: &[f64],
    ys: &[f64],
    ws: Option<&[f64]>,
) -> Result<(), ModelError> {
    let n = ys.len();
    check_block_lengths(n, xs.len(), 1, ws)?;
    if n == 0 {
        return Err(ModelError::EmptyInput);
    }
    if !block_is_valid(xs, ys, ws) {
        for r in 0..n {
            let w = ws.map_or(1.0, |w| w[r]);
            check_row(&xs[r..r + 1], ys[r], w, r)?;
        }
    }
    fold_rows(s, p, &PowerRows { xs, p }, ys, ws, 1)
}

/// Folds validated rows into the state; commits only if it stays finite.
/// `threads` caps the threads sharing the segments (1: this thread only);
/// the result is the same in every bit for any count.
fn fold_rows<S: RowSource + Sync>(
    s: &mut [f64],
    p: usize,
    src: &S,
    ys: &[f64],
    ws: Option<&[f64]>,
    threads: usize,
) -> Result<(), ModelError> {
    let n = ys.len();
    if n == 0 {
        return Ok(());
    }
    let mut t = Tally::read(s);
    t.add_rows(n, |r| src.x0(r), ws);
    let mut start = Work::<1>::empty(p);
    start.load_lane(0, s);
    let main = fold_segments(start, p, src, ys, ws, threads);
    if !main.is_finite() || !t.wsq.is_finite() || !t.wsum.is_finite() || !t.count.is_finite() {
        return Err(ModelError::Overflow);
    }
    main.store_lane(0, s);
    t.write(s);
    Ok(())
}

/// Folds rows `0..n` in [`SEGMENT_ROWS`] segments: the first continues
/// `start`, each later one starts empty and is merged into the running
/// factor in order. Without `std` (no lanes, no threads, small stacks) the
/// block is one segment.
fn fold_segments<S: RowSource + Sync>(
    start: Work<1>,
    p: usize,
    src: &S,
    ys: &[f64],
    ws: Option<&[f64]>,
    threads: usize,
) -> Work<1> {
    let n = ys.len();
    if !cfg!(feature = "std") || n <= SEGMENT_ROWS {
        return fold_dispatch(&start, src, ys, ws, 0, n);
    }
    let segs = n.div_ceil(SEGMENT_ROWS);
    let seg = |k: usize, from: &Work<1>| {
        let lo = k * SEGMENT_ROWS;
        fold_dispatch(from, src, ys, ws, lo, n.min(lo + SEGMENT_ROWS))
    };
    let empty = Work::<1>::empty(p);
    #[cfg(feature = "std")]
    if threads > 1 {
        let parts = par_segments(segs, threads, |k| {
            seg(k, if k == 0 { &start } else { &empty })
        });
        let mut it = parts.into_iter();
        let mut main = it.next().unwrap_or(start);
        for f in it {
            main.absorb_lane::<1, false>(&f, 0);
        }
        return main;
    }
    #[cfg(not(feature = "std"))]
    let _ = threads;
    let mut main = seg(0, &start);
    for k in 1..segs {
        main.absorb_lane::<1, false>(&seg(k, &empty), 0);
    }
    main
}

/// Runs `job(k)` for `k` in `0..count` on up to `threads` scoped threads
/// (the caller's among them), contiguous runs of `k` per thread, and
/// returns the results in `k` order. A run whose thread the system cannot
/// start runs on the caller's thread instead (same results, no panic).
#[cfg(feature = "std")]
fn par_segments<T: Send, F: Fn(usize) -> T + Sync>(count: usize, threads: usize, job: F) -> Vec<T> {
    let t = threads.min(count).max(1);
    let run = |lo: usize, hi: usize| (lo..hi).map(&job).collect::<Vec<T>>();
    let bound = |i: usize| i * count / t;
    std::thread::scope(|scope| {
        let handles: Vec<_> = (1..t)
            .map(|i| {
                let run = &run;
                let started = std::thread::Builder::new()
                    .spawn_scoped(scope, move || run(bound(i), bound(i + 1)));
                (i, started.ok())
            })
            .collect();
        let mut out = run(0, bound(1));
        for (i, h) in handles {
            out.extend(match h {
                // A panic in a worker is a bug in this module; pass it on.
                Some(h) => h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)),
                None => run(bound(i), bound(i + 1)),
            });
        }
        out
    })
}

/// Whether [`fold_dispatch`] may take the AVX2 + FMA path.
#[cfg(feature = "simd")]
static FMA_DISPATCH: core::sync::atomic::AtomicBool = core::sync::atomic::AtomicBool::new(true);

/// Allows (`true`, the default) or forbids the run-time AVX2 + FMA path of
/// the block updates, process-wide; for tests and benchmarks that compare
/// the two paths. Without the `simd` feature there is only one path.
#[doc(hidden)]
pub fn set_fma_dispatch(enabled: bool) {
    #[cfg(feature = "simd")]
    FMA_DISPATCH.store(enabled, core::sync::atomic::Ordering::Relaxed);
    #[cfg(not(feature = "simd"))]
    let _ = enabled;
}

/// Folds validated rows `lo..hi` into a copy of `start`, on the AVX2 + FMA
/// path when the CPU has it (with the `simd` feature; the kernels crate
/// does the one `unsafe` call), else on the portable path. Both paths
/// compute the same exact products, so they give the same bits; only speed
/// differs.
fn fold_dispatch<S: RowSource>(
    start: &Work<1>,
    src: &S,
    ys: &[f64],
    ws: Option<&[f64]>,
    lo: usize,
    hi: usize,
) -> Work<1> {
    #[cfg(feature = "simd")]
    if FMA_DISPATCH.load(core::sync::atomic::Ordering::Relaxed) {
        if let Some(w) = plumbfit_kernels::dispatch::with_avx2_fma(|| {
            fold_work::<S, true>(start, src, ys, ws, lo, hi)
        }) {
            return w;
        }
    }
    fold_work::<S, false>(start, src, ys, ws, lo, hi)
}

/// The body of [`fold_dispatch`]: inlined into each dispatch path so the
/// whole update is compiled for that path's instruction set.
#[inline(always)]
fn fold_work<S: RowSource, const FMA: bool>(
    start: &Work<1>,
    src: &S,
    ys: &[f64],
    ws: Option<&[f64]>,
    lo: usize,
    hi: usize,
) -> Work<1> {
    let p = start.p;
    let weight = |r: usize| ws.map_or(1.0, |w| w[r]);
    let mut main = start.clone();
    // The lane path keeps about 20 KiB of factors on the stack; without
    // `std` (small firmware stacks) blocks go row by row instead.
    if hi - lo < LANE_MIN_ROWS || !cfg!(feature = "std") {
        for r in lo..hi {
            let mut o = Obs::<1>::zero();
            src.fill::<1, FMA>(r, 0, &mut o);
            o.yh[0] = ys[r];
            o.wh[0] = weight(r);
            main.include::<FMA>(0, &mut o);
        }
    } else {
        // Lane 0 continues the existing factor, the other lanes start
        // empty and are merged in at the end.
        let mut lanes = Work::<LANES>::empty(p);
        lanes.set_lane(0, start);
        // One observation buffer for the whole block: `fill` overwrites
        // columns 0..p of every lane and `include` reads nothing beyond.
        let mut o = Obs::<LANES>::zero();
        let mut r0 = lo;
        while r0 < hi {
            for l in 0..LANES {
                let r = r0 + l;
                if r < hi {
                    src.fill::<LANES, FMA>(r, l, &mut o);
                    o.yh[l] = ys[r];
                    o.wh[l] = weight(r);
                } else {
                    // Weight 0 makes the lane a no-op; zero the rest too.
                    for j in 0..p {
                        o.xh[j][l] = 0.0;
                        o.xl[j][l] = 0.0;
                    }
                    o.yh[l] = 0.0;
                    o.wh[l] = 0.0;
                }
            }
            lanes.include::<FMA>(0, &mut o);
            r0 += LANES;
        }
        copy_lane(&lanes, 0, &mut main);
        for l in 1..LANES {
            main.absorb_lane::<LANES, FMA>(&lanes, l);
        }
    }
    main
}

fn copy_lane<const N: usize>(from: &Work<N>, lane: usize, to: &mut Work<1>) {
    let p = from.p;
    for i in 0..p {
        to.dh[i][0] = from.dh[i][lane];
        to.dl[i][0] = from.dl[i][lane];
        to.th[i][0] = from.th[i][lane];
        to.tl[i][0] = from.tl[i][lane];
    }
    for r in 0..rbar_len(p) {
        to.rh[r][0] = from.rh[r][lane];
        to.rl[r][0] = from.rl[r][lane];
    }
    to.sh[0] = from.sh[lane];
    to.sl[0] = from.sl[lane];
}

fn state_merge(s: &mut [f64], p: usize, other: &[f64]) -> Result<(), ModelError> {
    let q = header_p(other)?;
    if q != p {
        return Err(ModelError::DimensionMismatch {
            expected: p,
            found: q,
        });
    }
    let mut main = Work::<1>::empty(p);
    main.load_lane(0, s);
    let mut src = Work::<1>::empty(p);
    src.load_lane(0, other);
    main.absorb_lane::<1, false>(&src, 0);
    let mut t = Tally::read(s);
    t.merge(&Tally::read(other));
    let forgot = s[H_FORGOT] != 0.0 || other[H_FORGOT] != 0.0;
    if !main.is_finite() || !t.wsq.is_finite() || !t.wsum.is_finite() || !t.count.is_finite() {
        return Err(ModelError::Overflow);
    }
    main.store_lane(0, s);
    t.write(s);
    s[H_FORGOT] = if forgot { 1.0 } else { 0.0 };
    Ok(())
}

fn state_forget(s: &mut [f64], p: usize, lambda: f64) -> Result<(), ModelError> {
    if !(lambda > 0.0 && lambda <= 1.0) {
        return Err(ModelError::InvalidForgetting {
            bits: lambda.to_bits(),
        });
    }
    if lambda == 1.0 {
        return Ok(());
    }
    // Scaling D and the SSE by λ multiplies every past row's weight by λ;
    // R̄ and θ are unchanged (Gentleman's factor is scale-free in them).
    let scale = |h: f64, l: f64| {
        let v = Dd { hi: h, lo: l }.mul_f64(lambda);
        (v.hi, v.lo)
    };
    // Refuse, as the line accumulator does, when a weight that was there
    // would underflow to zero: the history would vanish silently.
    let vanishes = |h: f64, l: f64| h != 0.0 && scale(h, l).0 == 0.0;
    if (s[H_COUNT] > 0.0 && s[H_WSUM] * lambda == 0.0)
        || (0..p).any(|i| vanishes(s[off_dh(p) + i], s[off_dl(p) + i]))
    {
        return Err(ModelError::Overflow);
    }
    for i in 0..p {
        let (h, l) = scale(s[off_dh(p) + i], s[off_dl(p) + i]);
        s[off_dh(p) + i] = h;
        s[off_dl(p) + i] = l;
    }
    let (h, l) = scale(s[off_sse(p)], s[off_sse(p) + 1]);
    s[off_sse(p)] = h;
    s[off_sse(p) + 1] = l;
    s[H_WSUM] *= lambda;
    s[H_WSQ] *= lambda * lambda;
    s[H_FORGOT] = 1.0;
    Ok(())
}

// ---------------------------------------------------------------------------
// Public accumulator types.

/// Model accumulator over caller-provided storage: no allocation.
///
/// The storage is a `&mut [f64]` of at least [`storage_len`]`(p)` values
/// holding the flat state described in the [module docs](self); it can be
/// saved and later re-attached with [`ModelCore::attach`].
///
/// ```
/// use plumbfit::model::{storage_len, ModelCore};
/// let mut buf = [0.0; storage_len(2)];
/// let mut acc = ModelCore::new_in(&mut buf, 2).unwrap();
/// for (x, y) in [(1.0, 2.1), (2.0, 3.9), (3.0, 6.2), (4.0, 7.8)] {
///     acc.push_row(&[1.0, x], y).unwrap();
/// }
/// let fit = acc.fit(&Default::default()).unwrap();
/// assert!((fit.coefficients[1] - 1.94).abs() < 1e-12);
/// // Bad input is refused and leaves the state as it was.
/// assert!(acc.push_row(&[1.0, f64::NAN], 1.0).is_err());
/// assert_eq!(acc.count(), 4);
/// ```
#[derive(Debug, PartialEq)]
pub struct ModelCore<'a> {
    buf: &'a mut [f64],
    p: usize,
}

/// Model accumulator owning its state (a `Vec<f64>` in the flat layout).
///
/// Same operations as [`ModelCore`]; see the [module docs](self) for the
/// method and its sources.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelMoments {
    buf: Vec<f64>,
    p: usize,
}

/// Whether column 0 is treated as an intercept (constant) column.
///
/// It decides centred versus uncentred R² and the model degrees of freedom.
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum InterceptMode {
    /// Column 0 is an intercept if every row had the same nonzero value
    /// in it.
    #[default]
    Detect,
    /// Column 0 is the intercept column (the caller guarantees it is
    /// constant).
    Column0,
    /// The model has no intercept: R² is uncentred and every coefficient
    /// counts towards the model degrees of freedom.
    None,
}

/// Options for [`ModelCore::fit`] and [`ModelMoments::fit`].
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub struct ModelFitOptions {
    /// How to decide whether column 0 is an intercept.
    pub intercept: InterceptMode,
}

impl ModelFitOptions {
    /// Options with the given intercept handling.
    pub fn with_intercept(intercept: InterceptMode) -> Self {
        ModelFitOptions { intercept }
    }
}

macro_rules! accumulator_methods {
    () => {
        /// Number of coefficients `p`.
        pub fn params(&self) -> usize {
            self.p
        }

        /// Number of rows accumulated (not decayed by forgetting).
        pub fn count(&self) -> u64 {
            self.buf[H_COUNT] as u64
        }

        /// Sum of the row weights, decayed by forgetting.
        pub fn weight_sum(&self) -> f64 {
            self.buf[H_WSUM]
        }

        /// Kish effective number of rows `(Σw)² / Σw²`; equals
        /// [`count`](Self::count) for equal weights without forgetting.
        pub fn effective_rows(&self) -> f64 {
            effective_rows(&self.buf)
        }

        /// The flat state (see the module docs for the layout).
        pub fn storage(&self) -> &[f64] {
            &self.buf[..storage_len(self.p)]
        }

        /// Adds one row of `p` regressor values with response `y` (weight 1).
        ///
        /// # Errors
        /// [`ModelError::DimensionMismatch`] if `row.len() != p`,
        /// [`ModelError::NonFinite`] (row 0) for NaN or infinite values,
        /// [`ModelError::Overflow`] if the state would overflow. On error the
        /// state is unchanged.
        pub fn push_row(&mut self, row: &[f64], y: f64) -> Result<(), ModelError> {
            state_push(&mut self.buf, self.p, row, y, 1.0)
        }

        /// Adds one row with weight `w` (an inverse-variance weight: the
        /// row counts as `w` rows of weight 1 in the sums of squares).
        ///
        /// # Errors
        /// As [`push_row`](Self::push_row), plus
        /// [`ModelError::InvalidWeight`] for `w` not finite and positive.
        pub fn push_row_weighted(&mut self, row: &[f64], y: f64, w: f64) -> Result<(), ModelError> {
            state_push(&mut self.buf, self.p, row, y, w)
        }

        /// Adds the row `[1, x, x², …, x^(p−1)]` with response `y` and
        /// weight `w`, forming the powers in double-double so that they are
        /// exact to about 32 digits (powers rounded to double would limit
        /// ill-conditioned polynomial fits to about 8 digits).
        ///
        /// # Errors
        /// As [`push_row_weighted`](Self::push_row_weighted).
        pub fn push_powers(&mut self, x: f64, y: f64, w: f64) -> Result<(), ModelError> {
            check_row(&[x], y, w, 0)?;
            fold_rows(
                &mut self.buf,
                self.p,
                &PowerRows {
                    xs: &[x],
                    p: self.p,
                },
                &[y],
                Some(&[w]),
                1,
            )
        }

        /// Adds a block of polynomial rows `[1, x, …, x^(p−1)]` (powers in
        /// double-double, see [`push_powers`](Self::push_powers)) with
        /// responses `ys`.
        ///
        /// # Errors
        /// [`ModelError::DimensionMismatch`] if `xs.len() != ys.len()`;
        /// [`ModelError::EmptyInput`] for an empty block;
        /// [`ModelError::NonFinite`] naming the first bad row (column 0 for
        /// x, 1 for y); [`ModelError::Overflow`]. On error the state is
        /// unchanged.
        pub fn extend_powers(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), ModelError> {
            state_extend_powers(&mut self.buf, self.p, xs, ys, None)
        }

        /// Weighted form of [`extend_powers`](Self::extend_powers).
        ///
        /// # Errors
        /// As [`extend_powers`](Self::extend_powers), plus
        /// [`ModelError::InvalidWeight`] and a mismatch if
        /// `ws.len() != ys.len()`.
        pub fn extend_powers_weighted(
            &mut self,
            xs: &[f64],
            ys: &[f64],
            ws: &[f64],
        ) -> Result<(), ModelError> {
            state_extend_powers(&mut self.buf, self.p, xs, ys, Some(ws))
        }

        /// Adds a block of rows: `rows` is row-major `n × p`, `ys` has `n`
        /// responses. The fast path for bulk data.
        ///
        /// The whole block is validated before anything is added. With
        /// `std`, blocks of 64 rows or more use a multi-lane path that keeps
        /// up to about 25 KiB of working factors on the stack; without
        /// `std` rows are folded one by one (about 5 KiB of stack).
        ///
        /// # Errors
        /// [`ModelError::DimensionMismatch`] if `rows.len() != ys.len() · p`;
        /// [`ModelError::EmptyInput`] for an empty block (`ys` empty);
        /// [`ModelError::NonFinite`] naming the first bad row (index within
        /// the block) and column; [`ModelError::Overflow`]. On error the
        /// state is unchanged.
        pub fn extend_rows(&mut self, rows: &[f64], ys: &[f64]) -> Result<(), ModelError> {
            state_extend(&mut self.buf, self.p, rows, ys, None, 1)
        }

        /// Adds a block of weighted rows (see [`extend_rows`](Self::extend_rows)).
        ///
        /// # Errors
        /// As [`extend_rows`](Self::extend_rows), plus
        /// [`ModelError::InvalidWeight`] naming the first bad weight and a
        /// mismatch if `ws.len() != ys.len()`.
        pub fn extend_rows_weighted(
            &mut self,
            rows: &[f64],
            ys: &[f64],
            ws: &[f64],
        ) -> Result<(), ModelError> {
            state_extend(&mut self.buf, self.p, rows, ys, Some(ws), 1)
        }

        /// [`extend_rows`](Self::extend_rows) (or, with `ws`, its weighted
        /// form) with the work shared by up to `threads` threads; 0 means
        /// one per available core. Blocks are folded in segments of 16 384
        /// rows whatever the thread count, so the state is the same in
        /// every bit as after `extend_rows` on the same block, for any
        /// `threads`. Blocks of one segment or less run on this thread.
        ///
        /// # Errors
        /// As [`extend_rows_weighted`](Self::extend_rows_weighted). On
        /// error the state is unchanged.
        #[cfg(feature = "std")]
        pub fn extend_rows_threads(
            &mut self,
            rows: &[f64],
            ys: &[f64],
            ws: Option<&[f64]>,
            threads: usize,
        ) -> Result<(), ModelError> {
            let threads = match threads {
                0 => std::thread::available_parallelism().map_or(1, |n| n.get()),
                t => t,
            };
            state_extend(&mut self.buf, self.p, rows, ys, ws, threads)
        }

        /// Multiplies the weight of every row seen so far by `lambda`
        /// (exponential forgetting when called before each new row).
        ///
        /// Inference after forgetting is approximate: the degrees of freedom
        /// still count rows, not their decayed weights.
        ///
        /// # Errors
        /// [`ModelError::InvalidForgetting`] unless `0 < lambda ≤ 1`;
        /// [`ModelError::Overflow`] if the weight sum or a diagonal weight
        /// would underflow to zero (the history would vanish). The state
        /// is then unchanged.
        pub fn forget(&mut self, lambda: f64) -> Result<(), ModelError> {
            state_forget(&mut self.buf, self.p, lambda)
        }

        /// Merges a state in the flat layout (from either accumulator type
        /// or from persisted storage) into this one.
        ///
        /// # Errors
        /// [`ModelError::InvalidStorage`] or [`ModelError::StorageTooSmall`]
        /// for a bad state, [`ModelError::DimensionMismatch`] if its `p`
        /// differs, [`ModelError::Overflow`]. On error the state is
        /// unchanged.
        pub fn merge_storage(&mut self, other: &[f64]) -> Result<(), ModelError> {
            state_merge(&mut self.buf, self.p, other)
        }

        /// Solves the accumulated least-squares problem. Every number in
        /// the result is finite (except the documented `+∞` F statistic of
        /// an exact fit).
        ///
        /// # Errors
        /// [`ModelError::TooFewRows`] with fewer than `p + 1` rows;
        /// [`ModelError::RankDeficient`] naming the first column that is
        /// numerically a combination of earlier ones;
        /// [`ModelError::Overflow`] when a result would not be finite
        /// (weights forgotten into the subnormal range, sums of squares
        /// near the top of the double range).
        pub fn fit(&self, opts: &ModelFitOptions) -> Result<ModelFit, ModelError> {
            fit_state(&self.buf[..storage_len(self.p)], self.p, opts)
        }
    };
}

impl<'a> ModelCore<'a> {
    /// Values of storage needed for `p` coefficients (see [`storage_len`]).
    pub const fn storage_len(p: usize) -> usize {
        storage_len(p)
    }

    /// Initialises an empty state for `p` coefficients in `buf`.
    ///
    /// # Errors
    /// [`ModelError::InvalidParamCount`] unless `1 ≤ p ≤ MAX_PARAMS`;
    /// [`ModelError::StorageTooSmall`] if `buf` is shorter than
    /// [`storage_len`]`(p)`.
    pub fn new_in(buf: &'a mut [f64], p: usize) -> Result<Self, ModelError> {
        check_p(p)?;
        let need = storage_len(p);
        if buf.len() < need {
            return Err(ModelError::StorageTooSmall {
                needed: need,
                have: buf.len(),
            });
        }
        let buf = &mut buf[..need];
        init_state(buf, p);
        Ok(ModelCore { buf, p })
    }

    /// Attaches to storage that already holds a state (e.g. one restored
    /// from disk), after checking its header and values.
    ///
    /// # Errors
    /// [`ModelError::InvalidStorage`] or [`ModelError::StorageTooSmall`].
    pub fn attach(buf: &'a mut [f64]) -> Result<Self, ModelError> {
        let p = header_p(buf)?;
        let buf = &mut buf[..storage_len(p)];
        Ok(ModelCore { buf, p })
    }

    /// Merges `other` into this accumulator (see
    /// [`merge_storage`](Self::merge_storage)).
    ///
    /// # Errors
    /// [`ModelError::DimensionMismatch`] if the parameter counts differ;
    /// [`ModelError::Overflow`].
    pub fn merge(&mut self, other: &ModelCore<'_>) -> Result<(), ModelError> {
        state_merge(self.buf, self.p, other.buf)
    }

    accumulator_methods!();
}

impl ModelMoments {
    /// An empty accumulator for `p` coefficients.
    ///
    /// # Errors
    /// [`ModelError::InvalidParamCount`] unless `1 ≤ p ≤ MAX_PARAMS`.
    pub fn new(p: usize) -> Result<Self, ModelError> {
        check_p(p)?;
        let mut buf = vec![0.0; storage_len(p)];
        init_state(&mut buf, p);
        Ok(ModelMoments { buf, p })
    }

    /// Takes ownership of a saved state, after checking it.
    ///
    /// # Errors
    /// [`ModelError::InvalidStorage`] or [`ModelError::StorageTooSmall`].
    pub fn from_storage(mut buf: Vec<f64>) -> Result<Self, ModelError> {
        let p = header_p(&buf)?;
        buf.truncate(storage_len(p));
        Ok(ModelMoments { buf, p })
    }

    /// Gives up the flat state.
    pub fn into_storage(self) -> Vec<f64> {
        self.buf
    }

    /// Borrows the state as a [`ModelCore`].
    pub fn as_core(&mut self) -> ModelCore<'_> {
        ModelCore {
            buf: &mut self.buf,
            p: self.p,
        }
    }

    /// Merges `other` into this accumulator.
    ///
    /// # Errors
    /// [`ModelError::DimensionMismatch`] if the parameter counts differ;
    /// [`ModelError::Overflow`]. On error the state is unchanged.
    pub fn merge(&mut self, other: &ModelMoments) -> Result<(), ModelError> {
        state_merge(&mut self.buf, self.p, &other.buf)
    }

    accumulator_methods!();
}

fn effective_rows(s: &[f64]) -> f64 {
    let (w, w2) = (s[H_WSUM], s[H_WSQ]);
    if w2 > 0.0 {
        w * w / w2
    } else {
        0.0
    }
}

// ---------------------------------------------------------------------------
// Solution.

/// Relative tolerance for rank deficiency: column `j` is dependent when the
/// part of it orthogonal to the earlier columns has norm below this
/// fraction of the column's own norm (`√(d_j / ‖x_j‖²)`).
///
/// Measured: a duplicated column leaves about 1e-38 (100 000 rows with
/// values near 1e6) or exactly 0; the worst legitimate design we check,
/// NIST Filip's raw powers x⁰…x¹⁰, has a smallest ratio of 5e-8. Columns
/// that differ only in a single last-bit rounding of one row (ratio
/// ~1e-19) are still accepted and get honest, huge standard errors.
const RANK_TOL: f64 = 1e-22;

/// A residual sum of squares below this fraction of `Σ w y²` (a residual
/// norm below `2⁻⁵⁰ ‖y‖`, four units of double rounding) is reported as an
/// exact fit: rounding the inputs to double alone leaves residuals of that
/// size (e.g. NIST Wampler2, exact in decimal but not in binary), so such
/// residuals carry no information about the model.
const EXACT_FIT_TOL: f64 = 7.888_609_052_210_118e-31; // 2^-100

/// Result of a model fit: coefficients with their uncertainty and the
/// analysis of variance.
///
/// Covariances are scaled by the residual variance `s²` (weights are
/// relative precisions). The factor is kept (in double-double) for
/// leverage and intervals at new rows.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelFit {
    /// Fitted coefficients β, one per column.
    pub coefficients: Vec<f64>,
    /// Standard errors of the coefficients.
    pub std_errors: Vec<f64>,
    /// Covariance matrix of the coefficients, `p × p` row-major, computed
    /// from the inverse of the triangular factor (not by inverting `XᵀWX`).
    pub covariance: Vec<f64>,
    /// Rows accumulated.
    pub rows: u64,
    /// Sum of weights (decayed by forgetting).
    pub weight_sum: f64,
    /// Kish effective number of rows.
    pub effective_rows: f64,
    /// Whether column 0 was treated as an intercept.
    pub has_intercept: bool,
    /// The residual sum of squares is zero to working precision; `sse`,
    /// `residual_sd` and the standard errors are then exactly 0 and the F
    /// statistic is `+∞`.
    pub exact_fit: bool,
    /// Whether forgetting (`λ < 1`) was applied; inference is then
    /// approximate.
    pub forgetting_applied: bool,
    /// Residual (weighted) sum of squares.
    pub sse: f64,
    /// Sum of squares explained by the model: about the weighted mean with
    /// an intercept, about zero without.
    pub ss_model: f64,
    /// Total sum of squares, `ss_model + sse`.
    pub ss_total: f64,
    /// Residual standard deviation `√(sse / df_resid)`.
    pub residual_sd: f64,
    /// Coefficient of determination (centred with an intercept, uncentred
    /// without); `None` when the total sum of squares is zero.
    pub r_squared: Option<f64>,
    /// R² adjusted for degrees of freedom; `None` when R² is.
    pub adj_r_squared: Option<f64>,
    /// Model degrees of freedom: `p − 1` with an intercept, else `p`.
    pub df_model: u64,
    /// Residual degrees of freedom `rows − p`.
    pub df_resid: u64,
    /// Model mean square `ss_model / df_model`; `None` if `df_model = 0`.
    pub ms_model: Option<f64>,
    /// Residual mean square `sse / df_resid` (the residual variance).
    pub ms_resid: f64,
    /// F statistic `ms_model / ms_resid`; `+∞` for an exact fit; `None` if
    /// `df_model = 0` or both sums of squares are zero.
    pub f_stat: Option<f64>,
    /// Estimate of the 2-norm condition number of the design with its
    /// columns scaled to unit length (Frobenius-norm estimate, within a
    /// factor `√p` of the true value).
    pub condition_estimate: f64,
    p: usize,
    beta_dd: Vec<Dd>,
    d: Vec<Dd>,
    rbar: Vec<Dd>,
    s2: Dd,
}

/// An estimate with its standard error and a two-sided interval.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Interval {
    /// Point estimate.
    pub estimate: f64,
    /// Standard error of the estimate (or of the prediction).
    pub std_error: f64,
    /// Lower end of the interval.
    pub lower: f64,
    /// Upper end of the interval.
    pub upper: f64,
}

fn dd_at(s: &[f64], hi: usize, lo: usize) -> Dd {
    Dd {
        hi: s[hi],
        lo: s[lo],
    }
}

fn fit_state(s: &[f64], p: usize, opts: &ModelFitOptions) -> Result<ModelFit, ModelError> {
    let rows = s[H_COUNT] as u64;
    if rows < p as u64 + 1 {
        return Err(ModelError::TooFewRows {
            needed: p as u64 + 1,
            have: rows,
        });
    }
    let zero = Dd::from_f64(0.0);
    let d: Vec<Dd> = (0..p)
        .map(|i| dd_at(s, off_dh(p) + i, off_dl(p) + i))
        .collect();
    let theta: Vec<Dd> = (0..p)
        .map(|i| dd_at(s, off_th(p) + i, off_tl(p) + i))
        .collect();
    let m = rbar_len(p);
    let rbar: Vec<Dd> = (0..m)
        .map(|r| dd_at(s, off_rh(p) + r, off_rl(p) + r))
        .collect();
    let rb = |i: usize, k: usize| rbar[rbar_row(p, i) + k - i - 1];

    // Column norms ‖x_j‖²_W = Σ_{i<j} d_i R̄_ij² + d_j, all in double-double,
    // so the rank test is relative to each column's own scale.
    let mut colss = vec![zero; p];
    for j in 0..p {
        let mut acc = d[j];
        for i in 0..j {
            let r = rb(i, j);
            acc = acc.add(d[i].mul(r.mul(r)));
        }
        colss[j] = acc;
        let dj = d[j].to_f64();
        let ratio = if acc.hi > 0.0 { dj / acc.hi } else { 0.0 };
        if dj <= 0.0 || dj.is_nan() || ratio < RANK_TOL * RANK_TOL {
            return Err(ModelError::RankDeficient { column: j });
        }
    }

    // Back substitution R̄ β = θ.
    let mut beta = vec![zero; p];
    for j in (0..p).rev() {
        let mut acc = theta[j];
        for k in j + 1..p {
            acc = acc.sub(rb(j, k).mul(beta[k]));
        }
        beta[j] = acc;
    }

    // U = R̄⁻¹, unit upper triangular, column by column.
    let mut u = vec![zero; p * p];
    for j in 0..p {
        u[j * p + j] = Dd::from_f64(1.0);
        for i in (0..j).rev() {
            let mut acc = zero;
            for k in i + 1..=j {
                acc = acc.sub(rb(i, k).mul(u[k * p + j]));
            }
            u[i * p + j] = acc;
        }
    }
    // (XᵀWX)⁻¹ = U D⁻¹ Uᵀ.
    let dinv: Vec<Dd> = d.iter().map(|v| Dd::from_f64(1.0).div(*v)).collect();
    let mut ginv = vec![zero; p * p];
    for a in 0..p {
        for b in a..p {
            let mut acc = zero;
            for i in b..p {
                acc = acc.add(u[a * p + i].mul(u[b * p + i]).mul(dinv[i]));
            }
            ginv[a * p + b] = acc;
            ginv[b * p + a] = acc;
        }
    }

    // Sums of squares: Σ w y² = Σ d_j θ_j² + SSE (orthogonal decomposition).
    let mut sse = dd_at(s, off_sse(p), off_sse(p) + 1);
    let has_intercept = match opts.intercept {
        InterceptMode::Column0 => true,
        InterceptMode::None => false,
        InterceptMode::Detect => s[H_COL0_STATE] == COL0_CONST && s[H_COL0_VALUE] != 0.0,
    };
    let first = usize::from(has_intercept);
    let mut ss_model = zero;
    let mut ss_all = zero;
    for j in 0..p {
        let v = d[j].mul(theta[j].mul(theta[j]));
        ss_all = ss_all.add(v);
        if j >= first {
            ss_model = ss_model.add(v);
        }
    }
    let uncentred_total = ss_all.add(sse);
    let exact_fit = sse.hi <= EXACT_FIT_TOL * uncentred_total.hi;
    if exact_fit {
        sse = zero;
    }
    let ss_total = ss_model.add(sse);
    let df_resid = rows - p as u64;
    let df_model = (p - first) as u64;
    let s2 = sse.div(Dd::from_f64(df_resid as f64));

    let mut covariance = vec![0.0; p * p];
    for a in 0..p * p {
        covariance[a] = ginv[a].mul(s2).to_f64();
    }
    let std_errors: Vec<f64> = (0..p)
        .map(|j| ginv[j * p + j].mul(s2).sqrt().to_f64())
        .collect();

    let (r_squared, adj_r_squared) = if ss_total.hi > 0.0 {
        let r2 = ss_model.div(ss_total).to_f64();
        // 1 − (SSE/df_resid) / (SST/(n − first))
        let ratio = sse
            .mul_f64((rows - first as u64) as f64)
            .div(ss_total.mul_f64(df_resid as f64));
        (Some(r2), Some(Dd::from_f64(1.0).sub(ratio).to_f64()))
    } else {
        (None, None)
    };
    let ms_model = if df_model > 0 {
        Some(ss_model.div(Dd::from_f64(df_model as f64)))
    } else {
        None
    };
    let f_stat = match ms_model {
        Some(msm) if exact_fit => {
            if msm.hi > 0.0 {
                Some(f64::INFINITY)
            } else {
                None
            }
        }
        Some(msm) => Some(msm.div(s2).to_f64()),
        None => None,
    };

    // Condition of the column-scaled factor: ‖R_s‖_F = √p, and
    // ‖R_s⁻¹‖_F² = Σ_j ‖x_j‖² [(XᵀWX)⁻¹]_jj.
    let mut inv_f2 = 0.0;
    for j in 0..p {
        inv_f2 += colss[j].to_f64() * ginv[j * p + j].to_f64();
    }
    let condition_estimate = libm::sqrt(p as f64 * inv_f2);

    let fit = ModelFit {
        coefficients: beta.iter().map(|b| b.to_f64()).collect(),
        std_errors,
        covariance,
        rows,
        weight_sum: s[H_WSUM],
        effective_rows: effective_rows(s),
        has_intercept,
        exact_fit,
        forgetting_applied: s[H_FORGOT] != 0.0,
        sse: sse.to_f64(),
        ss_model: ss_model.to_f64(),
        ss_total: ss_total.to_f64(),
        residual_sd: s2.sqrt().to_f64(),
        r_squared,
        adj_r_squared,
        df_model,
        df_resid,
        ms_model: ms_model.map(|v| v.to_f64()),
        ms_resid: s2.to_f64(),
        f_stat,
        condition_estimate,
        p,
        beta_dd: beta,
        d,
        rbar,
        s2,
    };
    if !fit.is_finite() {
        // Extreme states (weights forgotten into the subnormal range, a
        // residual sum of squares near the top of the double range) can
        // overflow a derived quantity even though the state is finite.
        return Err(ModelError::Overflow);
    }
    Ok(fit)
}

#[cfg(feature = "std")]
fn check_level(level: f64) -> Result<(), ModelError> {
    if level > 0.0 && level < 1.0 {
        Ok(())
    } else {
        Err(ModelError::InvalidLevel {
            bits: level.to_bits(),
        })
    }
}

/// Two-sided Student t quantile for `level` with `df` degrees of freedom;
/// a level so close to 1 that the quantile is not finite in double
/// precision is refused like any other invalid level.
#[cfg(feature = "std")]
fn t_quantile(level: f64, df: u64) -> Result<f64, ModelError> {
    use statrs::distribution::{ContinuousCDF, StudentsT};
    let t = match StudentsT::new(0.0, 1.0, df as f64) {
        Ok(t) => t.inverse_cdf(0.5 + level / 2.0),
        Err(_) => f64::NAN, // unreachable: df ≥ 1 is guaranteed by fit()
    };
    if t.is_finite() {
        Ok(t)
    } else {
        Err(ModelError::InvalidLevel {
            bits: level.to_bits(),
        })
    }
}

impl ModelFit {
    /// Number of coefficients.
    pub fn params(&self) -> usize {
        self.p
    }

    /// Every reported number and the kept double-double parts are finite
    /// (the F statistic may be `+∞` for an exact fit, as documented).
    fn is_finite(&self) -> bool {
        let fin = |v: &f64| v.is_finite();
        let dd = |v: &Dd| v.hi.is_finite() && v.lo.is_finite();
        self.coefficients.iter().all(fin)
            && self.std_errors.iter().all(fin)
            && self.covariance.iter().all(fin)
            && self.beta_dd.iter().all(dd)
            && dd(&self.s2)
            && [
                self.weight_sum,
                self.effective_rows,
                self.sse,
                self.ss_model,
                self.ss_total,
                self.residual_sd,
                self.ms_resid,
                self.condition_estimate,
            ]
            .iter()
            .all(fin)
            && [self.r_squared, self.adj_r_squared, self.ms_model]
                .iter()
                .flatten()
                .all(fin)
            && self
                .f_stat
                .is_none_or(|f| f.is_finite() || (self.exact_fit && f == f64::INFINITY))
    }

    fn check_row(&self, row: &[f64]) -> Result<(), ModelError> {
        if row.len() != self.p {
            return Err(ModelError::DimensionMismatch {
                expected: self.p,
                found: row.len(),
            });
        }
        for (j, v) in row.iter().enumerate() {
            if !v.is_finite() {
                return Err(ModelError::NonFinite { row: 0, column: j });
            }
        }
        Ok(())
    }

    fn leverage_dd(&self, row: &[f64]) -> Dd {
        // Solve R̄ᵀ z = x (unit lower triangular), then h = Σ z_j² / d_j,
        // i.e. h = ‖D^(−1/2) R̄^(−T) x‖² as in AS 274's hat-diagonal routine.
        let p = self.p;
        let mut z = [Dd::from_f64(0.0); MAX_PARAMS];
        let mut h = Dd::from_f64(0.0);
        for j in 0..p {
            let mut acc = Dd::from_f64(row[j]);
            for i in 0..j {
                acc = acc.sub(self.rbar[rbar_row(p, i) + j - i - 1].mul(z[i]));
            }
            z[j] = acc;
            h = h.add(acc.mul(acc).div(self.d[j]));
        }
        h
    }

    /// Leverage `h = xᵀ (XᵀWX)⁻¹ x` of a row (for a row of weight `w` in
    /// the data, its hat-matrix diagonal is `w·h`).
    ///
    /// # Errors
    /// [`ModelError::DimensionMismatch`] or [`ModelError::NonFinite`];
    /// [`ModelError::Overflow`] for a row so far out that the leverage
    /// overflows.
    pub fn leverage(&self, row: &[f64]) -> Result<f64, ModelError> {
        self.check_row(row)?;
        finite_result(self.leverage_dd(row).to_f64())
    }

    /// Fitted value `xᵀβ` at a row (summed in double-double).
    ///
    /// # Errors
    /// [`ModelError::DimensionMismatch`] or [`ModelError::NonFinite`];
    /// [`ModelError::Overflow`] if the value overflows.
    pub fn predict(&self, row: &[f64]) -> Result<f64, ModelError> {
        self.check_row(row)?;
        finite_result(self.predict_dd(row).to_f64())
    }

    fn predict_dd(&self, row: &[f64]) -> Dd {
        let mut acc = Dd::from_f64(0.0);
        for (b, x) in self.beta_dd.iter().zip(row) {
            acc = acc.add(b.mul_f64(*x));
        }
        acc
    }

    /// t statistics `β_j / se_j`; `None` for an exact fit (zero standard
    /// errors).
    pub fn t_statistics(&self) -> Option<Vec<f64>> {
        if self.exact_fit {
            return None;
        }
        Some(
            self.coefficients
                .iter()
                .zip(&self.std_errors)
                .map(|(b, se)| b / se)
                .collect(),
        )
    }

    /// Two-sided p values of the t statistics; `None` for an exact fit.
    #[cfg(feature = "std")]
    pub fn p_values(&self) -> Option<Vec<f64>> {
        use statrs::distribution::{ContinuousCDF, StudentsT};
        let t = self.t_statistics()?;
        let dist = StudentsT::new(0.0, 1.0, self.df_resid as f64).ok()?;
        Some(t.iter().map(|v| 2.0 * dist.sf(v.abs())).collect())
    }

    /// p value of the F statistic: `Some(0.0)` for an exact fit, `None`
    /// when there is no F statistic.
    #[cfg(feature = "std")]
    pub fn f_p_value(&self) -> Option<f64> {
        use statrs::distribution::{ContinuousCDF, FisherSnedecor};
        let f = self.f_stat?;
        if f == f64::INFINITY {
            return Some(0.0);
        }
        let dist = FisherSnedecor::new(self.df_model as f64, self.df_resid as f64).ok()?;
        Some(dist.sf(f))
    }

    /// Confidence intervals for every coefficient at `level` (e.g. 0.95).
    ///
    /// # Errors
    /// [`ModelError::InvalidLevel`] unless `0 < level < 1`.
    #[cfg(feature = "std")]
    pub fn coef_intervals(&self, level: f64) -> Result<Vec<Interval>, ModelError> {
        check_level(level)?;
        let t = t_quantile(level, self.df_resid)?;
        Ok(self
            .coefficients
            .iter()
            .zip(&self.std_errors)
            .map(|(&b, &se)| Interval {
                estimate: b,
                std_error: se,
                lower: b - t * se,
                upper: b + t * se,
            })
            .collect())
    }

    /// Confidence interval for the mean response at a new row.
    ///
    /// # Errors
    /// [`ModelError::InvalidLevel`], [`ModelError::DimensionMismatch`],
    /// [`ModelError::NonFinite`]; [`ModelError::Overflow`] for a row so far
    /// out that the interval overflows.
    #[cfg(feature = "std")]
    pub fn mean_response(&self, row: &[f64], level: f64) -> Result<Interval, ModelError> {
        check_level(level)?;
        self.check_row(row)?;
        let h = self.leverage_dd(row);
        let se = h.mul(self.s2).sqrt().to_f64();
        self.interval(row, se, level)
    }

    /// Prediction interval for the mean of `m` new observations at a row
    /// (each of weight 1).
    ///
    /// # Errors
    /// [`ModelError::InvalidReplicates`] for `m = 0`, otherwise as
    /// [`mean_response`](Self::mean_response).
    #[cfg(feature = "std")]
    pub fn prediction(&self, row: &[f64], m: u32, level: f64) -> Result<Interval, ModelError> {
        check_level(level)?;
        self.check_row(row)?;
        if m == 0 {
            return Err(ModelError::InvalidReplicates);
        }
        let h = self
            .leverage_dd(row)
            .add(Dd::from_f64(1.0).div(Dd::from_f64(m as f64)));
        let se = h.mul(self.s2).sqrt().to_f64();
        self.interval(row, se, level)
    }

    #[cfg(feature = "std")]
    fn interval(&self, row: &[f64], se: f64, level: f64) -> Result<Interval, ModelError> {
        let est = self.predict_dd(row).to_f64();
        let t = t_quantile(level, self.df_resid)?;
        let iv = Interval {
            estimate: est,
            std_error: se,
            lower: est - t * se,
            upper: est + t * se,
        };
        for v in [iv.estimate, iv.std_error, iv.lower, iv.upper] {
            finite_result(v)?;
        }
        Ok(iv)
    }
}

/// A query result that overflowed is an error, never an infinite or NaN
/// value.
fn finite_result(v: f64) -> Result<f64, ModelError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(ModelError::Overflow)
    }
}

/// Fits a polynomial of degree `degree` in `x` by least squares and
/// returns the result in the raw basis `1, x, …, x^degree` (coefficient `j`
/// multiplies `x^j`).
///
/// The powers are formed in double-double and folded into the
/// double-double factor directly, so no centring or scaling (and no lossy
/// conversion back from a scaled basis) is needed: ill-conditioned designs
/// such as NIST Filip (degree 10) keep about 14 digits.
///
/// # Errors
/// [`ModelError::InvalidParamCount`] if `degree + 1 > MAX_PARAMS`;
/// [`ModelError::DimensionMismatch`] if the slices differ in length;
/// [`ModelError::EmptyInput`] for empty slices;
/// [`ModelError::NonFinite`]; the errors of [`ModelMoments::fit`].
///
/// ```
/// use plumbfit::model::{poly_fit, ModelError};
/// let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
/// let ys = [1.0, 2.1, 4.9, 10.2, 16.8];
/// let fit = poly_fit(&xs, &ys, 2).unwrap();
/// assert_eq!(fit.coefficients.len(), 3); // 1, x, x²
/// assert_eq!(
///     poly_fit(&xs, &ys[..4], 2).unwrap_err(),
///     ModelError::DimensionMismatch { expected: 5, found: 4 }
/// );
/// ```
pub fn poly_fit(xs: &[f64], ys: &[f64], degree: usize) -> Result<ModelFit, ModelError> {
    let p = degree + 1;
    check_p(p)?;
    if xs.len() != ys.len() {
        return Err(ModelError::DimensionMismatch {
            expected: xs.len(),
            found: ys.len(),
        });
    }
    let mut acc = ModelMoments::new(p)?;
    acc.extend_powers(xs, ys)?;
    acc.fit(&ModelFitOptions::with_intercept(InterceptMode::Column0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kernel_recip_is_double_double_accurate() {
        let (h, l) = kern::recip::<false>(3.0, 0.0);
        let back = Dd { hi: h, lo: l }.mul_f64(3.0).sub(Dd::from_f64(1.0));
        // 2^-100 ≈ 8e-31: a plain double reciprocal leaves ~1e-17.
        assert!(back.to_f64().abs() < 1e-30, "{back:?}");
    }

    #[test]
    fn block_check_agrees_with_row_check() {
        // Special values of IEEE 754 binary64 (common practice): both
        // zeros, the extremes of the subnormal and normal ranges, the
        // infinities and NaNs of either sign.
        let specials = [
            0.0,
            -0.0,
            f64::from_bits(1),
            -f64::from_bits(1),
            f64::MIN_POSITIVE,
            f64::MAX,
            -f64::MAX,
            1.0,
            -2.5,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
            -f64::NAN,
            f64::from_bits(0x7ff0_0000_0000_0001),
        ];
        let row_check = |xs: &[f64], ys: &[f64], ws: Option<&[f64]>| {
            (0..ys.len()).all(|r| {
                let w = ws.map_or(1.0, |w| w[r]);
                check_row(&xs[r..r + 1], ys[r], w, r).is_ok()
            })
        };
        for &a in &specials {
            for &b in &specials {
                // The special value in each position of a short block.
                let xs = [1.0, a, 3.0];
                let ys = [b, 2.0, -1.0];
                let ws = [0.5, 1.0, b];
                assert_eq!(
                    block_is_valid(&xs, &ys, None),
                    row_check(&xs, &ys, None),
                    "{a:e} {b:e}"
                );
                assert_eq!(
                    block_is_valid(&xs, &ys, Some(&ws)),
                    row_check(&xs, &ys, Some(&ws)),
                    "{a:e} {b:e}"
                );
                let ws = [a, b, 2.0];
                assert_eq!(
                    block_is_valid(&xs, &ys, Some(&ws)),
                    row_check(&xs, &ys, Some(&ws)),
                    "{a:e} {b:e}"
                );
            }
        }
    }

    #[test]
    fn storage_len_matches_layout() {
        for p in 1..=MAX_PARAMS {
            assert_eq!(off_rl(p) + rbar_len(p), storage_len(p));
        }
    }
}
