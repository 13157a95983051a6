//! The persisted state format: versioned, checksummed, little-endian bytes
//! for every accumulator, identical from Rust, C and Python.
//!
//! A device saves its accumulator across power cycles or ships it to a host
//! that merges many devices; the bytes may arrive truncated, corrupted or
//! forged. Decoding therefore checks everything before it builds a value:
//! magic, format version, kind, parameters, exact length, the CRC-32, and
//! the semantic invariants of the accumulator (positive finite weights,
//! consistent counts and flags, finite moments, non-negative second
//! moments). Anything wrong is a typed [`StateError`]; nothing panics and
//! nothing is partially written. No length field is trusted for an
//! allocation: the size of every kind is fixed by its kind and `p`
//! (at most [`MAX_ENCODED_LEN`] bytes).
//!
//! The byte layout, field order and validation rules are specified in
//! `docs/state-format.md`; this module is its implementation.
//!
//! | accumulator | save | restore | length |
//! |---|---|---|---|
//! | [`LeanMoments`](crate::LeanMoments) | [`PairMoments::save_into`] | [`PairMoments::restore`] | [`LEAN_LEN`] |
//! | [`FullMoments`](crate::FullMoments) | [`PairMoments::save_into`] | [`PairMoments::restore`] | [`FULL_LEN`] |
//! | [`ModelMoments`] | [`ModelMoments::save_into`] | [`ModelMoments::restore`] | [`model_len`]`(p)` |
//! | [`ModelCore`] | [`ModelCore::save_into`] | [`ModelCore::restore_in`] (caller storage) | [`model_len`]`(p)` |
//! | [`LevelSet`](crate::calib::LevelSet) | [`LevelSet::save_into`](crate::calib::LevelSet::save_into) | [`LevelSet::restore`](crate::calib::LevelSet::restore) | [`levels_len`]`(c)` |
//! | [`FixedLevels`](crate::calib::FixedLevels) | [`FixedLevels::save_into`](crate::calib::FixedLevels::save_into) | [`FixedLevels::restore`](crate::calib::FixedLevels::restore) (no heap) | [`levels_len`]`(c)` |
//!
//! [`peek`] tells which kind, version and `p` a blob holds after checking
//! its header, length and checksum; [`declared_len`] reads only the
//! 16-byte header (for reading a blob from a stream).
//!
//! ```
//! use plumbfit::{state, LeanMoments};
//! let mut acc = LeanMoments::new();
//! acc.extend(&[1.0, 2.0, 3.0], &[2.0, 4.1, 5.9]).unwrap();
//! let mut buf = [0u8; state::LEAN_LEN];
//! let n = acc.save_into(&mut buf).unwrap();
//! let back = LeanMoments::restore(&buf[..n]).unwrap();
//! assert_eq!(back.save_to_vec(), buf.to_vec());
//! // One flipped bit is caught by the checksum.
//! buf[40] ^= 0x10;
//! assert_eq!(LeanMoments::restore(&buf).unwrap_err().code(), 56);
//! ```

use crate::model::{self, ModelCore, ModelMoments, LAYOUT_TAG, MAX_PARAMS};
use crate::moments::{HigherMoments, NoExtra, PairMoments, Tier, PENDING_BLOCK, STAGE};
use crate::{Full, Lean};
use alloc::vec;
use alloc::vec::Vec;
use core::fmt;

mod levels;
pub use levels::{levels_len, LEVEL_RECORD_LEN, MAX_LEVELS};

/// First four bytes of every state blob. The first byte has its high bit
/// set so that a channel that strips the eighth bit is detected.
pub const MAGIC: [u8; 4] = [0xC5, b'P', b'F', b'S'];

/// The format version this build writes. It also reads version 1, whose
/// layouts are those of version 2 without the lean pending block (a
/// version 1 line state is a version 2 state with an empty block).
pub const FORMAT_VERSION: u16 = 2;

/// The oldest format version this build reads.
pub const OLDEST_READ_VERSION: u16 = 1;

/// Bytes before the payload: magic, version, kind, reserved, `p`,
/// options, payload length.
pub const HEADER_LEN: usize = 16;

/// Bytes after the payload: the CRC-32.
pub const TRAILER_LEN: usize = 4;

/// Payload bytes of a lean line state.
const LEAN_PAYLOAD: usize = 16 + 10 * 8 + STAGE * 3 * 8;
/// Payload bytes the full tier adds: 9 higher moments, 3 lag sums, first
/// and last pair, 4 extremes.
const FULL_EXTRA: usize = (9 + 3 + 4 + 4) * 8;

/// Encoded length of a [`LeanMoments`](crate::LeanMoments) state.
pub const LEAN_LEN: usize = HEADER_LEN + LEAN_PAYLOAD + TRAILER_LEN;

/// Encoded length of a [`FullMoments`](crate::FullMoments) state.
pub const FULL_LEN: usize = HEADER_LEN + LEAN_PAYLOAD + FULL_EXTRA + TRAILER_LEN;

/// Encoded length of a model state with `p` coefficients (`1 ≤ p ≤ 16`;
/// the formula is only meaningful in that range).
pub const fn model_len(p: usize) -> usize {
    HEADER_LEN + model::storage_len(p) * 8 + TRAILER_LEN
}

/// The longest blob of any kind this version writes (a model with
/// [`MAX_PARAMS`] coefficients). A buffer of this size holds any state.
pub const MAX_ENCODED_LEN: usize = model_len(MAX_PARAMS);

/// Model layout offsets (the flat layout documented in [`crate::model`]).
const M_HEADER: usize = 8;

/// Which accumulator a blob holds.
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum StateKind {
    /// [`LeanMoments`](crate::LeanMoments).
    LineLean,
    /// [`FullMoments`](crate::FullMoments).
    LineFull,
    /// [`ModelMoments`] or [`ModelCore`] (same bytes).
    Model,
    /// A replicate-level store, [`LevelSet`](crate::calib::LevelSet) or
    /// [`FixedLevels`](crate::calib::FixedLevels) (same bytes).
    Levels,
}

impl StateKind {
    /// The kind byte in the header.
    pub const fn code(self) -> u8 {
        match self {
            StateKind::LineLean => 1,
            StateKind::LineFull => 2,
            StateKind::Model => 3,
            StateKind::Levels => 4,
        }
    }

    /// The kind for a header byte, if this version knows it.
    pub const fn from_code(code: u8) -> Option<StateKind> {
        match code {
            1 => Some(StateKind::LineLean),
            2 => Some(StateKind::LineFull),
            3 => Some(StateKind::Model),
            4 => Some(StateKind::Levels),
            _ => None,
        }
    }

    /// Short lowercase name (`"line-lean"`, `"line-full"`, `"model"`,
    /// `"levels"`).
    pub const fn name(self) -> &'static str {
        match self {
            StateKind::LineLean => "line-lean",
            StateKind::LineFull => "line-full",
            StateKind::Model => "model",
            StateKind::Levels => "levels",
        }
    }
}

impl fmt::Display for StateKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// The part of a blob that failed a validation rule (see
/// `docs/state-format.md`, "Validation").
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum StateField {
    /// Header byte 7 or the padding after the line flags: must be zero.
    Reserved,
    /// The parameter count `p` (header, and the model's copy of it).
    Params,
    /// Header options: no option is defined in version 1, must be zero.
    Options,
    /// The pair or row count.
    Count,
    /// The flag byte: unknown bits, or flags that contradict each other.
    Flags,
    /// The number of staged pairs.
    StageLen,
    /// A staged pair (non-finite value, non-positive weight, or a nonzero
    /// unused slot).
    Stage,
    /// The lean pending block: its length or sums (out of bounds, in a
    /// state that cannot hold one, or a nonzero unused slot).
    Pending,
    /// The frame `x0`, `y0`, `b0`.
    Frame,
    /// The weight sum Σw.
    WeightSum,
    /// The sum of squared weights Σw².
    WeightSqSum,
    /// The means of `dx` and `v`.
    Means,
    /// The second moment of `dx`.
    Sxx,
    /// The co-moment of `dx` and `v`.
    Sxv,
    /// The second moment of `v`.
    Svv,
    /// A centred co-moment of order 3 or 4.
    HigherMoments,
    /// The lag-1 difference sums.
    LagSums,
    /// The first or last pair.
    Ends,
    /// The extremes of `x` and `y`.
    Extremes,
    /// The model layout tag.
    ModelLayout,
    /// The model's column-0 status or value.
    ModelColumn0,
    /// The model's forgetting flag.
    ModelForgetFlag,
    /// The model's diagonal `D`.
    ModelDiagonal,
    /// The model's rotated response `θ`.
    ModelRotated,
    /// The model's residual sum of squares.
    ModelResidual,
    /// The model's unit triangle `R̄`.
    ModelTriangle,
    /// A level's nominal `x`: finite, `0.0` not `−0.0`, strictly increasing.
    LevelX,
    /// A level's reading count (≥ 1; the total fits in `u64`).
    LevelCount,
    /// A level's weight sum (finite, > 0).
    LevelWeightSum,
    /// A level's mean of `y` (finite).
    LevelMean,
    /// A level's second moment about its mean (finite, ≥ 0, zero for a
    /// single reading).
    LevelM2,
}

impl StateField {
    /// The field's name as written in `docs/state-format.md`.
    pub const fn name(self) -> &'static str {
        match self {
            StateField::Reserved => "reserved",
            StateField::Params => "p",
            StateField::Options => "options",
            StateField::Count => "count",
            StateField::Flags => "flags",
            StateField::StageLen => "stage_len",
            StateField::Stage => "stage",
            StateField::Pending => "pending",
            StateField::Frame => "frame",
            StateField::WeightSum => "weight_sum",
            StateField::WeightSqSum => "weight_sq_sum",
            StateField::Means => "means",
            StateField::Sxx => "sxx",
            StateField::Sxv => "sxv",
            StateField::Svv => "svv",
            StateField::HigherMoments => "higher_moments",
            StateField::LagSums => "lag_sums",
            StateField::Ends => "ends",
            StateField::Extremes => "extremes",
            StateField::ModelLayout => "model_layout",
            StateField::ModelColumn0 => "model_column0",
            StateField::ModelForgetFlag => "model_forget_flag",
            StateField::ModelDiagonal => "model_diagonal",
            StateField::ModelRotated => "model_rotated",
            StateField::ModelResidual => "model_residual",
            StateField::ModelTriangle => "model_triangle",
            StateField::LevelX => "level_x",
            StateField::LevelCount => "level_count",
            StateField::LevelWeightSum => "level_weight_sum",
            StateField::LevelMean => "level_mean_y",
            StateField::LevelM2 => "level_m2",
        }
    }
}

impl fmt::Display for StateField {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Errors from saving or restoring a state. A failed restore builds
/// nothing and writes nothing into caller storage.
///
/// Display messages are for people and may change; match on the variant or
/// use [`StateError::code`].
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
pub enum StateError {
    /// The first four bytes are not [`MAGIC`]: not a state blob.
    #[error("not a state blob (bad magic)")]
    BadMagic,
    /// A format version this build does not read.
    #[error("unsupported state format version {found} (this build reads 1 to {supported})")]
    UnsupportedVersion {
        /// Version found in the blob.
        found: u16,
        /// The newest version this build reads (and the one it writes).
        supported: u16,
    },
    /// A kind byte this version does not know.
    #[error("unknown state kind {kind}")]
    UnknownKind {
        /// The kind byte found.
        kind: u8,
    },
    /// A valid blob of another kind than the one being restored.
    #[error("state holds a {found} accumulator, expected {expected}")]
    WrongKind {
        /// The kind the caller asked for.
        expected: StateKind,
        /// The kind the blob holds.
        found: StateKind,
    },
    /// Fewer bytes than the blob needs.
    #[error("state truncated: {needed} bytes needed, {have} given")]
    Truncated {
        /// Bytes required (header, or the whole blob once the header is read).
        needed: usize,
        /// Bytes given.
        have: usize,
    },
    /// The declared payload length does not match the kind and `p`, or
    /// bytes follow the blob.
    #[error("state length mismatch: expected {expected} bytes, found {found}")]
    LengthMismatch {
        /// Length implied by the kind and `p`.
        expected: usize,
        /// Length declared or given.
        found: usize,
    },
    /// The CRC-32 over header and payload does not match the trailer.
    #[error("state checksum mismatch: stored {stored:#010x}, computed {computed:#010x}")]
    ChecksumMismatch {
        /// CRC stored in the blob.
        stored: u32,
        /// CRC of the bytes given.
        computed: u32,
    },
    /// A field holds a value no accumulator can be in.
    #[error("invalid state field {field}")]
    InvalidField {
        /// The offending field.
        field: StateField,
    },
    /// The output buffer is too short for the encoded state.
    #[error("buffer too small: {needed} bytes needed, {have} given")]
    BufferTooSmall {
        /// Bytes required (the encoded length).
        needed: usize,
        /// Bytes given.
        have: usize,
    },
    /// Caller storage for a restored state is too short: a model's
    /// `f64` values, or the capacity of a fixed level store.
    #[error("storage too small: {needed} needed, {have} given")]
    StorageTooSmall {
        /// `f64` values ([`crate::model::storage_len`]) or levels required.
        needed: usize,
        /// `f64` values or levels the storage holds.
        have: usize,
    },
}

impl StateError {
    /// Stable numeric code (50–59), shared with the C and Python bindings.
    pub const fn code(&self) -> u16 {
        match self {
            StateError::BadMagic => 50,
            StateError::UnsupportedVersion { .. } => 51,
            StateError::UnknownKind { .. } => 52,
            StateError::WrongKind { .. } => 53,
            StateError::Truncated { .. } => 54,
            StateError::LengthMismatch { .. } => 55,
            StateError::ChecksumMismatch { .. } => 56,
            StateError::InvalidField { .. } => 57,
            StateError::BufferTooSmall { .. } => 58,
            StateError::StorageTooSmall { .. } => 59,
        }
    }
}

// ---------------------------------------------------------------------------
// CRC-32/ISO-HDLC (the zlib / PNG / Ethernet CRC): reflected polynomial
// 0xEDB88320, initial value and final xor 0xFFFFFFFF. Table-driven, one
// 1 KiB table built at compile time.

const CRC_TABLE: [u32; 256] = {
    let mut t = [0u32; 256];
    let mut i = 0;
    while i < 256 {
        let mut c = i as u32;
        let mut k = 0;
        while k < 8 {
            c = if c & 1 != 0 {
                0xEDB8_8320 ^ (c >> 1)
            } else {
                c >> 1
            };
            k += 1;
        }
        t[i] = c;
        i += 1;
    }
    t
};

/// CRC-32/ISO-HDLC of `bytes` (the checksum the trailer holds).
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut c = 0xFFFF_FFFFu32;
    for &b in bytes {
        c = CRC_TABLE[((c ^ b as u32) & 0xFF) as usize] ^ (c >> 8);
    }
    c ^ 0xFFFF_FFFF
}

// ---------------------------------------------------------------------------
// Header.

/// What a blob holds, from [`peek`].
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct StateInfo {
    /// The accumulator kind.
    pub kind: StateKind,
    /// The format version of the blob, [`OLDEST_READ_VERSION`] to
    /// [`FORMAT_VERSION`].
    pub version: u16,
    /// Number of model coefficients `p`, or of levels in a level state;
    /// 0 for line states.
    pub params: u16,
    /// Pairs, rows or readings accumulated, as stored (not yet validated;
    /// saturated to the `u64` range).
    pub count: u64,
    /// Total encoded length in bytes.
    pub len: usize,
}

fn u16_at(b: &[u8], at: usize) -> u16 {
    u16::from_le_bytes([b[at], b[at + 1]])
}

fn u32_at(b: &[u8], at: usize) -> u32 {
    u32::from_le_bytes([b[at], b[at + 1], b[at + 2], b[at + 3]])
}

fn u64_at(b: &[u8], at: usize) -> u64 {
    let mut a = [0u8; 8];
    a.copy_from_slice(&b[at..at + 8]);
    u64::from_le_bytes(a)
}

fn f64_at(b: &[u8], at: usize) -> f64 {
    f64::from_bits(u64_at(b, at))
}

/// Parsed and checked header fields.
#[derive(Clone, Copy)]
struct Header {
    kind: StateKind,
    version: u16,
    p: u16,
    len: usize,
}

/// Reads the 16-byte header and the length it implies; checks magic,
/// version, kind, reserved bytes, `p`, options and the declared payload
/// length (the expected length comes from kind and `p`, never from the
/// length field).
fn read_header(b: &[u8]) -> Result<Header, StateError> {
    if b.len() < HEADER_LEN {
        return Err(StateError::Truncated {
            needed: HEADER_LEN,
            have: b.len(),
        });
    }
    if b[..4] != MAGIC {
        return Err(StateError::BadMagic);
    }
    let version = u16_at(b, 4);
    if !(OLDEST_READ_VERSION..=FORMAT_VERSION).contains(&version) {
        return Err(StateError::UnsupportedVersion {
            found: version,
            supported: FORMAT_VERSION,
        });
    }
    let kind = StateKind::from_code(b[6]).ok_or(StateError::UnknownKind { kind: b[6] })?;
    if kind == StateKind::Levels && version < levels::LEVELS_SINCE {
        // The kind did not exist in version 1.
        return Err(StateError::UnknownKind { kind: b[6] });
    }
    if b[7] != 0 {
        return Err(field(StateField::Reserved));
    }
    let p = u16_at(b, 8);
    let payload = match kind {
        StateKind::LineLean | StateKind::LineFull => {
            if p != 0 {
                return Err(field(StateField::Params));
            }
            if kind == StateKind::LineLean {
                LEAN_PAYLOAD
            } else {
                LEAN_PAYLOAD + FULL_EXTRA
            }
        }
        StateKind::Model => {
            if p == 0 || p as usize > MAX_PARAMS {
                return Err(field(StateField::Params));
            }
            model::storage_len(p as usize) * 8
        }
        // `p` is the level count, capped so the blob stays within
        // MAX_ENCODED_LEN.
        StateKind::Levels => {
            if p as usize > MAX_LEVELS {
                return Err(field(StateField::Params));
            }
            p as usize * LEVEL_RECORD_LEN
        }
    };
    if u16_at(b, 10) != 0 {
        return Err(field(StateField::Options));
    }
    let declared = u32_at(b, 12) as usize;
    if declared != payload {
        return Err(StateError::LengthMismatch {
            expected: payload,
            found: declared,
        });
    }
    Ok(Header {
        kind,
        version,
        p,
        len: HEADER_LEN + payload + TRAILER_LEN,
    })
}

/// Header, exact length and checksum; returns the header and the payload.
fn open(b: &[u8]) -> Result<(Header, &[u8]), StateError> {
    let h = read_header(b)?;
    if b.len() < h.len {
        return Err(StateError::Truncated {
            needed: h.len,
            have: b.len(),
        });
    }
    if b.len() > h.len {
        return Err(StateError::LengthMismatch {
            expected: h.len,
            found: b.len(),
        });
    }
    let body = h.len - TRAILER_LEN;
    let stored = u32_at(b, body);
    let computed = crc32(&b[..body]);
    if stored != computed {
        return Err(StateError::ChecksumMismatch { stored, computed });
    }
    Ok((h, &b[HEADER_LEN..body]))
}

fn open_kind(b: &[u8], expected: StateKind) -> Result<(Header, &[u8]), StateError> {
    let (h, payload) = open(b)?;
    if h.kind != expected {
        return Err(StateError::WrongKind {
            expected,
            found: h.kind,
        });
    }
    Ok((h, payload))
}

/// Total length of the blob whose first [`HEADER_LEN`] bytes are `header`
/// (more bytes may follow; they are not read). Checks magic, version,
/// kind, `p` and the declared length, not the checksum.
///
/// # Errors
/// [`StateError::Truncated`] for fewer than 16 bytes, and the header errors
/// of [`peek`].
pub fn declared_len(header: &[u8]) -> Result<usize, StateError> {
    read_header(header).map(|h| h.len)
}

/// Checks a blob's header, exact length and checksum and tells what it
/// holds. The payload's semantic rules are checked only by a restore.
///
/// # Errors
/// [`StateError::BadMagic`], [`StateError::UnsupportedVersion`],
/// [`StateError::UnknownKind`], [`StateError::Truncated`],
/// [`StateError::LengthMismatch`], [`StateError::ChecksumMismatch`],
/// [`StateError::InvalidField`] for a reserved byte, `p` or options.
pub fn peek(bytes: &[u8]) -> Result<StateInfo, StateError> {
    let (h, payload) = open(bytes)?;
    let count = match h.kind {
        // The payload is not validated here: saturate rather than trust it
        // (a restore checks both counts).
        StateKind::LineLean | StateKind::LineFull => u64_at(payload, 0)
            .saturating_add(payload[9] as u64)
            .saturating_add(u16_at(payload, 10) as u64),
        StateKind::Model => f64_at(payload, 16) as u64,
        StateKind::Levels => levels::peek_count(payload),
    };
    Ok(StateInfo {
        kind: h.kind,
        version: h.version,
        params: h.p,
        count,
        len: h.len,
    })
}

fn field(f: StateField) -> StateError {
    StateError::InvalidField { field: f }
}

fn check(ok: bool, f: StateField) -> Result<(), StateError> {
    if ok {
        Ok(())
    } else {
        Err(field(f))
    }
}

/// Writes header, payload (by `fill`) and CRC into `out`.
fn write_blob(
    out: &mut [u8],
    kind: StateKind,
    p: u16,
    len: usize,
    fill: impl FnOnce(&mut [u8]),
) -> Result<usize, StateError> {
    if out.len() < len {
        return Err(StateError::BufferTooSmall {
            needed: len,
            have: out.len(),
        });
    }
    let out = &mut out[..len];
    let payload = len - HEADER_LEN - TRAILER_LEN;
    out[..4].copy_from_slice(&MAGIC);
    out[4..6].copy_from_slice(&FORMAT_VERSION.to_le_bytes());
    out[6] = kind.code();
    out[7] = 0;
    out[8..10].copy_from_slice(&p.to_le_bytes());
    out[10..12].copy_from_slice(&0u16.to_le_bytes());
    out[12..16].copy_from_slice(&(payload as u32).to_le_bytes());
    fill(&mut out[HEADER_LEN..HEADER_LEN + payload]);
    let body = len - TRAILER_LEN;
    let crc = crc32(&out[..body]);
    out[body..].copy_from_slice(&crc.to_le_bytes());
    Ok(len)
}

/// Sequential little-endian writer over a payload of known size.
struct Put<'a> {
    b: &'a mut [u8],
    at: usize,
}

impl Put<'_> {
    fn bytes(&mut self, v: &[u8]) {
        self.b[self.at..self.at + v.len()].copy_from_slice(v);
        self.at += v.len();
    }
    fn f64(&mut self, v: f64) {
        self.bytes(&v.to_bits().to_le_bytes());
    }
}

/// Sequential little-endian reader over a payload whose length was checked.
struct Get<'a> {
    b: &'a [u8],
    at: usize,
}

impl Get<'_> {
    fn u64(&mut self) -> u64 {
        let v = u64_at(self.b, self.at);
        self.at += 8;
        v
    }
    fn f64(&mut self) -> f64 {
        f64::from_bits(self.u64())
    }
    fn u8(&mut self) -> u8 {
        let v = self.b[self.at];
        self.at += 1;
        v
    }
}

// ---------------------------------------------------------------------------
// Line accumulator.

const FLAG_FRAMED: u8 = 1;
const FLAG_SLOPE_FREE: u8 = 2;
const FLAG_WEIGHTED: u8 = 4;
const FLAG_FORGOTTEN: u8 = 8;

/// The 9 stored higher moments `(p, q)`, in payload order: order 3 then
/// order 4, each by decreasing power of `dx`.
const HIGHER: [(usize, usize); 9] = [
    (3, 0),
    (2, 1),
    (1, 2),
    (0, 3),
    (4, 0),
    (3, 1),
    (2, 2),
    (1, 3),
    (0, 4),
];

mod sealed {
    use super::StateError;
    use crate::moments::{PairMoments, Tier};
    /// Tier-specific encoding of the extra fields (internal).
    pub trait Sealed: Tier {
        fn put_extra(acc: &PairMoments<Self>, out: &mut [u8]);
        fn get_extra(acc: &mut PairMoments<Self>, inp: &[u8]) -> Result<(), StateError>;
    }
}

/// A line-accumulator tier that has a state format ([`Lean`] and
/// [`Full`]); sealed.
pub trait StateTier: sealed::Sealed {
    /// The kind byte this tier is saved under.
    const KIND: StateKind;
    /// Encoded length of this tier's state.
    const LEN: usize;
}

impl StateTier for Lean {
    const KIND: StateKind = StateKind::LineLean;
    const LEN: usize = LEAN_LEN;
}

impl StateTier for Full {
    const KIND: StateKind = StateKind::LineFull;
    const LEN: usize = FULL_LEN;
}

impl sealed::Sealed for Lean {
    fn put_extra(_: &PairMoments<Self>, _: &mut [u8]) {}
    fn get_extra(acc: &mut PairMoments<Self>, _: &[u8]) -> Result<(), StateError> {
        acc.hi = NoExtra;
        Ok(())
    }
}

impl sealed::Sealed for Full {
    fn put_extra(acc: &PairMoments<Self>, b: &mut [u8]) {
        let mut out = Put { b, at: 0 };
        let h: &HigherMoments = &acc.hi;
        for (p, q) in HIGHER {
            out.f64(h.m[p][q]);
        }
        for v in h.lag {
            out.f64(v);
        }
        for v in [h.first.0, h.first.1, h.last.0, h.last.1] {
            out.f64(v);
        }
        for v in [h.xmin, h.xmax, h.ymin, h.ymax] {
            out.f64(v);
        }
    }
    fn get_extra(acc: &mut PairMoments<Self>, b: &[u8]) -> Result<(), StateError> {
        let mut inp = Get { b, at: 0 };
        let mut h = HigherMoments::default();
        for (p, q) in HIGHER {
            h.m[p][q] = inp.f64();
        }
        for v in h.lag.iter_mut() {
            *v = inp.f64();
        }
        h.first = (inp.f64(), inp.f64());
        h.last = (inp.f64(), inp.f64());
        h.xmin = inp.f64();
        h.xmax = inp.f64();
        h.ymin = inp.f64();
        h.ymax = inp.f64();
        check_higher(acc, &h)?;
        acc.hi = h;
        Ok(())
    }
}

/// Rules for the full tier's extra fields, given the validated base state.
fn check_higher(acc: &PairMoments<Full>, h: &HigherMoments) -> Result<(), StateError> {
    let empty = HigherMoments::default();
    if !acc.framed {
        // Staged pairs have not touched the extra fields yet.
        check(
            HIGHER.iter().all(|&(p, q)| h.m[p][q] == 0.0),
            StateField::HigherMoments,
        )?;
        check(h.lag.iter().all(|&v| v == 0.0), StateField::LagSums)?;
        check(
            h.first == empty.first && h.last == empty.last,
            StateField::Ends,
        )?;
        let ext = [h.xmin, h.xmax, h.ymin, h.ymax];
        let want = [empty.xmin, empty.xmax, empty.ymin, empty.ymax];
        return check(ext == want, StateField::Extremes);
    }
    check(
        HIGHER.iter().all(|&(p, q)| h.m[p][q].is_finite()),
        StateField::HigherMoments,
    )?;
    check(
        h.lag.iter().all(|v| v.is_finite()) && h.lag[0] >= 0.0,
        StateField::LagSums,
    )?;
    let ends = [h.first.0, h.first.1, h.last.0, h.last.1];
    check(ends.iter().all(|v| v.is_finite()), StateField::Ends)?;
    let ext = [h.xmin, h.xmax, h.ymin, h.ymax];
    check(
        ext.iter().all(|v| v.is_finite()) && h.xmin <= h.xmax && h.ymin <= h.ymax,
        StateField::Extremes,
    )?;
    let inside = |(x, y): (f64, f64)| x >= h.xmin && x <= h.xmax && y >= h.ymin && y <= h.ymax;
    check(inside(h.first) && inside(h.last), StateField::Ends)
}

/// Largest count for which a sum of unit weights is exact in `f64`.
const EXACT_COUNT: u64 = 1 << 53;

impl<T: StateTier> PairMoments<T> {
    /// Encoded length of this tier's state ([`LEAN_LEN`] or [`FULL_LEN`]);
    /// the same for every value of the tier.
    pub const ENCODED_LEN: usize = T::LEN;

    /// Encoded length of the state in bytes (see [`Self::ENCODED_LEN`]).
    pub fn encoded_len(&self) -> usize {
        T::LEN
    }

    /// Writes the state into `out` (no allocation); returns the number of
    /// bytes written. The same state always gives the same bytes.
    ///
    /// # Errors
    /// [`StateError::BufferTooSmall`] with the required length if `out` is
    /// shorter than [`encoded_len`](Self::encoded_len); nothing is written.
    pub fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        write_blob(out, T::KIND, 0, T::LEN, |b| {
            let mut w = Put { b, at: 0 };
            w.bytes(&self.count.to_le_bytes());
            let mut flags = 0u8;
            for (on, bit) in [
                (self.framed, FLAG_FRAMED),
                (self.slope_free, FLAG_SLOPE_FREE),
                (self.weighted, FLAG_WEIGHTED),
                (self.forgotten, FLAG_FORGOTTEN),
            ] {
                if on {
                    flags |= bit;
                }
            }
            let pend = self.pend_len().to_le_bytes();
            w.bytes(&[flags, self.stage_len, pend[0], pend[1], 0, 0, 0, 0]);
            for v in [
                self.w, self.w2, self.x0, self.y0, self.b0, self.mx, self.mv, self.sxx, self.sxv,
                self.svv,
            ] {
                w.f64(v);
            }
            // The stage before the frame is fitted, the pending block's
            // sums after.
            for p in self.saved_stage() {
                for v in p {
                    w.f64(v);
                }
            }
            let at = w.at;
            T::put_extra(self, &mut w.b[at..]);
        })
    }

    /// The encoded state in a new vector.
    pub fn save_to_vec(&self) -> Vec<u8> {
        let mut v = vec![0u8; T::LEN];
        // The buffer has exactly the required length, so this cannot fail.
        let _ = self.save_into(&mut v);
        v
    }

    /// Rebuilds an accumulator from bytes written by
    /// [`save_into`](Self::save_into) (from any door). `restore(save(a))`
    /// equals `a` bit for bit.
    ///
    /// # Errors
    /// Every [`StateError`] format error; [`StateError::WrongKind`] for a
    /// blob of the other tier or of a model;
    /// [`StateError::InvalidField`] naming the first field that breaks a
    /// rule of `docs/state-format.md`.
    pub fn restore(bytes: &[u8]) -> Result<Self, StateError> {
        let (_, payload) = open_kind(bytes, T::KIND)?;
        let mut r = Get { b: payload, at: 0 };
        let mut a = Self::new();
        a.count = r.u64();
        let flags = r.u8();
        let stage_len = r.u8();
        let pend_len = u16::from_le_bytes([r.u8(), r.u8()]);
        let mut pad = 0u8;
        for _ in 0..4 {
            pad |= r.u8();
        }
        check(pad == 0, StateField::Reserved)?;
        check(flags & !0x0F == 0, StateField::Flags)?;
        a.framed = flags & FLAG_FRAMED != 0;
        a.slope_free = flags & FLAG_SLOPE_FREE != 0;
        a.weighted = flags & FLAG_WEIGHTED != 0;
        a.forgotten = flags & FLAG_FORGOTTEN != 0;
        check((stage_len as usize) < STAGE, StateField::StageLen)?;
        a.stage_len = stage_len;
        a.w = r.f64();
        a.w2 = r.f64();
        a.x0 = r.f64();
        a.y0 = r.f64();
        a.b0 = r.f64();
        a.mx = r.f64();
        a.mv = r.f64();
        a.sxx = r.f64();
        a.sxv = r.f64();
        a.svv = r.f64();
        let mut rows = [[0.0; 3]; STAGE];
        for p in rows.iter_mut() {
            for v in p.iter_mut() {
                *v = r.f64();
            }
        }
        let pads_zero = a.load_saved_stage(rows);
        check(
            pend_len as usize <= PENDING_BLOCK && (a.framed || pend_len == 0),
            StateField::Pending,
        )?;
        a.set_pend_len(pend_len);
        check_base(&a)?;
        // After the other base rules, as part of the pending block's.
        check(pads_zero, StateField::Pending)?;
        T::get_extra(&mut a, &r.b[r.at..])?;
        Ok(a)
    }
}

/// Rules for the fields both tiers share.
fn check_base<T: Tier>(a: &PairMoments<T>) -> Result<(), StateError> {
    let k = a.stage_len as usize;
    let unit = !a.weighted && !a.forgotten;
    // Framed: the stage area holds the pending block, checked last.
    for (i, p) in a.stage.iter().enumerate().filter(|_| !a.framed) {
        let ok = if i < k {
            p[0].is_finite()
                && p[1].is_finite()
                && p[2].is_finite()
                && p[2] > 0.0
                && (!unit || p[2] == 1.0)
        } else {
            p.iter().all(|&v| v == 0.0)
        };
        check(ok, StateField::Stage)?;
    }
    if !a.framed {
        // Pairs are staged raw; the moments are untouched.
        check(a.count == 0, StateField::Count)?;
        check(!a.slope_free, StateField::Flags)?;
        check(a.w == 0.0, StateField::WeightSum)?;
        check(a.w2 == 0.0, StateField::WeightSqSum)?;
        check(a.x0 == 0.0 && a.y0 == 0.0 && a.b0 == 0.0, StateField::Frame)?;
        check(a.mx == 0.0 && a.mv == 0.0, StateField::Means)?;
        check(a.sxx == 0.0, StateField::Sxx)?;
        check(a.sxv == 0.0, StateField::Sxv)?;
        return check(a.svv == 0.0, StateField::Svv);
    }
    check(k == 0, StateField::StageLen)?;
    // Any count: every update refuses to wrap it.
    check(a.count >= 1, StateField::Count)?;
    check(a.w.is_finite() && a.w > 0.0, StateField::WeightSum)?;
    check(a.w2.is_finite() && a.w2 >= 0.0, StateField::WeightSqSum)?;
    if unit && a.count <= EXACT_COUNT {
        // Unit weights without forgetting: Σw and Σw² count the pairs.
        check(a.w == a.count as f64, StateField::WeightSum)?;
        check(a.w2 == a.count as f64, StateField::WeightSqSum)?;
    }
    check(
        a.x0.is_finite() && a.y0.is_finite() && a.b0.is_finite(),
        StateField::Frame,
    )?;
    check(a.mx.is_finite() && a.mv.is_finite(), StateField::Means)?;
    check(a.sxx.is_finite() && a.sxx >= 0.0, StateField::Sxx)?;
    check(a.sxv.is_finite(), StateField::Sxv)?;
    check(a.svv.is_finite() && a.svv >= 0.0, StateField::Svv)?;
    if a.slope_free {
        // Every committed x equals x0: the x moments are exactly zero.
        check(
            a.mx == 0.0 && a.sxx == 0.0 && a.sxv == 0.0,
            StateField::Flags,
        )?;
    }
    // The pending block (all zero when empty, as in every version 1
    // state): only a lean state within the bounds a block opens under,
    // with sums a block's pushes can reach, so every later push and the
    // fold keep their guarantees.
    check(a.pending_in_bounds(), StateField::Pending)
}

// ---------------------------------------------------------------------------
// Model accumulator: the flat storage of `crate::model`, value by value.

/// Offsets in the model's flat layout (module docs of [`crate::model`]).
struct ModelLayout {
    p: usize,
}

impl ModelLayout {
    const TAG: usize = 0;
    const P: usize = 1;
    const COUNT: usize = 2;
    const WSUM: usize = 3;
    const WSQ: usize = 4;
    const COL0_STATE: usize = 5;
    const COL0_VALUE: usize = 6;
    const FORGOT: usize = 7;
    fn d(&self) -> (usize, usize) {
        (M_HEADER, M_HEADER + self.p)
    }
    fn theta(&self) -> (usize, usize) {
        (M_HEADER + 2 * self.p, M_HEADER + 3 * self.p)
    }
    fn sse(&self) -> usize {
        M_HEADER + 4 * self.p
    }
    fn rbar(&self) -> (usize, usize) {
        let m = self.p * (self.p - 1) / 2;
        let at = M_HEADER + 4 * self.p + 2;
        (at, at + m)
    }
    fn len(&self) -> usize {
        model::storage_len(self.p)
    }
}

/// Checks the flat model state `s` (read from a payload) against the rules
/// of `docs/state-format.md`.
fn check_model(s: &[f64], p: usize) -> Result<(), StateError> {
    let l = ModelLayout { p };
    check(s.len() == l.len(), StateField::Params)?;
    check(s[ModelLayout::TAG] == LAYOUT_TAG, StateField::ModelLayout)?;
    check(s[ModelLayout::P] == p as f64, StateField::Params)?;
    // Any finite non-negative integer: merges add counts without a cap.
    let count = s[ModelLayout::COUNT];
    check(
        count >= 0.0 && count.is_finite() && libm::floor(count) == count,
        StateField::Count,
    )?;
    let (w, w2) = (s[ModelLayout::WSUM], s[ModelLayout::WSQ]);
    check(w.is_finite() && w >= 0.0, StateField::WeightSum)?;
    check(w2.is_finite() && w2 >= 0.0, StateField::WeightSqSum)?;
    let st = s[ModelLayout::COL0_STATE];
    let c0 = s[ModelLayout::COL0_VALUE];
    check(
        (st == 0.0 || st == 1.0 || st == 2.0) && c0.is_finite() && ((st == 0.0) == (count == 0.0)),
        StateField::ModelColumn0,
    )?;
    let fg = s[ModelLayout::FORGOT];
    check(fg == 0.0 || fg == 1.0, StateField::ModelForgetFlag)?;
    // Double-double values: finite parts, and normalised (the low part is
    // below half an ulp of the high part, so hi + lo rounds to hi).
    let dd_ok = |h: f64, lo: f64| h.is_finite() && lo.is_finite() && h + lo == h;
    let (dh, dl) = l.d();
    let (th, tl) = l.theta();
    let (rh, rl) = l.rbar();
    let m = p * (p - 1) / 2;
    let empty = count == 0.0;
    for i in 0..p {
        let (h, lo) = (s[dh + i], s[dl + i]);
        check(
            dd_ok(h, lo) && h >= 0.0 && (!empty || h == 0.0),
            StateField::ModelDiagonal,
        )?;
        let (h, lo) = (s[th + i], s[tl + i]);
        check(
            dd_ok(h, lo) && (!empty || h == 0.0),
            StateField::ModelRotated,
        )?;
    }
    let (h, lo) = (s[l.sse()], s[l.sse() + 1]);
    check(
        dd_ok(h, lo) && h >= 0.0 && (!empty || h == 0.0),
        StateField::ModelResidual,
    )?;
    for i in 0..m {
        let (h, lo) = (s[rh + i], s[rl + i]);
        check(
            dd_ok(h, lo) && (!empty || h == 0.0),
            StateField::ModelTriangle,
        )?;
    }
    if empty {
        check(w == 0.0 && w2 == 0.0, StateField::WeightSum)?;
    }
    Ok(())
}

fn save_model(storage: &[f64], out: &mut [u8]) -> Result<usize, StateError> {
    let p = storage.get(ModelLayout::P).map_or(0, |&v| v as usize);
    let n = model::storage_len(p);
    write_blob(out, StateKind::Model, p as u16, model_len(p), |b| {
        let mut w = Put { b, at: 0 };
        for &v in &storage[..n] {
            w.f64(v);
        }
    })
}

/// Decodes and validates a model blob into `tmp` (exactly
/// `storage_len(p)` values); returns `p`.
fn load_model(
    bytes: &[u8],
    tmp: &mut [f64; model::storage_len(MAX_PARAMS)],
) -> Result<usize, StateError> {
    let (h, payload) = open_kind(bytes, StateKind::Model)?;
    let p = h.p as usize;
    let n = model::storage_len(p);
    let mut r = Get { b: payload, at: 0 };
    for v in tmp[..n].iter_mut() {
        *v = r.f64();
    }
    check_model(&tmp[..n], p)?;
    // The accumulator's own header check must agree with ours.
    if ModelCore::attach(&mut tmp[..n]).is_err() {
        return Err(field(StateField::ModelLayout));
    }
    Ok(p)
}

impl ModelCore<'_> {
    /// Encoded length of this state: [`model_len`]`(p)`.
    pub fn encoded_len(&self) -> usize {
        model_len(self.params())
    }

    /// Writes the state into `out` (no allocation); returns the number of
    /// bytes written.
    ///
    /// # Errors
    /// [`StateError::BufferTooSmall`] with the required length; nothing is
    /// written.
    pub fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        save_model(self.storage(), out)
    }

    /// The encoded state in a new vector.
    pub fn save_to_vec(&self) -> Vec<u8> {
        let mut v = vec![0u8; self.encoded_len()];
        let _ = self.save_into(&mut v);
        v
    }

    /// Restores a saved model state into caller storage (no allocation) and
    /// attaches to it. `buf` needs [`model::storage_len`]`(p)` values; use
    /// [`peek`] to learn `p` first.
    ///
    /// # Errors
    /// Every [`StateError`] format error, [`StateError::WrongKind`] for a
    /// line state, [`StateError::StorageTooSmall`]. On error `buf` is not
    /// written.
    pub fn restore_in<'b>(buf: &'b mut [f64], bytes: &[u8]) -> Result<ModelCore<'b>, StateError> {
        let mut tmp = [0.0f64; model::storage_len(MAX_PARAMS)];
        let p = load_model(bytes, &mut tmp)?;
        let n = model::storage_len(p);
        if buf.len() < n {
            return Err(StateError::StorageTooSmall {
                needed: n,
                have: buf.len(),
            });
        }
        buf[..n].copy_from_slice(&tmp[..n]);
        ModelCore::attach(&mut buf[..n]).map_err(|_| field(StateField::ModelLayout))
    }
}

impl ModelMoments {
    /// Encoded length of this state: [`model_len`]`(p)`.
    pub fn encoded_len(&self) -> usize {
        model_len(self.params())
    }

    /// Writes the state into `out`; returns the number of bytes written.
    ///
    /// # Errors
    /// [`StateError::BufferTooSmall`] with the required length; nothing is
    /// written.
    pub fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        save_model(self.storage(), out)
    }

    /// The encoded state in a new vector.
    pub fn save_to_vec(&self) -> Vec<u8> {
        let mut v = vec![0u8; self.encoded_len()];
        let _ = self.save_into(&mut v);
        v
    }

    /// Rebuilds an owned model accumulator from saved bytes. Allocates
    /// only the `storage_len(p)` values of the validated `p ≤ 16`.
    ///
    /// # Errors
    /// Every [`StateError`] format error; [`StateError::WrongKind`] for a
    /// line state.
    pub fn restore(bytes: &[u8]) -> Result<Self, StateError> {
        let mut tmp = [0.0f64; model::storage_len(MAX_PARAMS)];
        let p = load_model(bytes, &mut tmp)?;
        let n = model::storage_len(p);
        ModelMoments::from_storage(tmp[..n].to_vec()).map_err(|_| field(StateField::ModelLayout))
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    #[test]
    fn crc_check_value() {
        // CRC-32/ISO-HDLC check value of "123456789" (common practice: the
        // catalogue check string) and values from Python 3.11 zlib.crc32.
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
        assert_eq!(crc32(b"a"), 0xE8B7_BE43);
        let all: Vec<u8> = (0..=255u8).collect();
        assert_eq!(crc32(&all), 0x2905_8C73);
    }

    #[test]
    fn layout_matches_model_storage_len() {
        for p in 1..=MAX_PARAMS {
            let l = ModelLayout { p };
            let (_, rl) = l.rbar();
            assert_eq!(rl + p * (p - 1) / 2, l.len(), "p = {p}");
        }
    }

    #[test]
    fn unused_stage_slots_and_extra_are_checked() {
        let mut a = crate::FullMoments::new();
        a.push(1.0, 2.0).unwrap();
        a.stage[5][0] = 1.0;
        let b = a.save_to_vec();
        assert_eq!(
            crate::FullMoments::restore(&b),
            Err(field(StateField::Stage))
        );
    }
}
