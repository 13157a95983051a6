//! Property checks shared by the fuzz targets (`fuzz/fuzz_targets/*`) and
//! the corpus replay test (`core/tests/state_corpus.rs`): every input the
//! fuzzer found interesting is replayed through exactly these checks in a
//! normal `cargo test`.
//!
//! * [`check_decode`]: arbitrary bytes given to every restore entry point
//!   never panic; a blob that is accepted re-encodes to the same bytes; a
//!   rejected restore into caller storage leaves the storage untouched; an
//!   accepted state survives further updates and queries.
//! * [`check_ops`]: a sequence of push/extend/merge/forget/save/restore
//!   decoded from the input, applied to the lean, full and model
//!   accumulators and to both replicate-level stores. After every
//!   operation: a failed call left the state bit for bit unchanged; a
//!   state reached by successful calls restores from its own bytes bit for
//!   bit; successful queries return finite numbers.
//! * [`check_levels_decode`] (in `levels_checks.rs`): level-store blobs
//!   through both store types, which must agree on what they accept.
#![allow(dead_code, clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::model::{storage_len, ModelCore, ModelMoments, MAX_PARAMS};
use plumbfit::state::{self, StateKind, StateTier, MAX_ENCODED_LEN};
use plumbfit::{FullMoments, LeanMoments, PairMoments};

#[path = "levels_checks.rs"]
mod levels_checks;
#[allow(unused_imports)] // used by the corpus replay and one fuzz target
pub use levels_checks::check_levels_decode;

/// Reads the fuzz input byte by byte; past the end it yields zeros.
struct Src<'a> {
    d: &'a [u8],
    i: usize,
}

impl<'a> Src<'a> {
    fn new(d: &'a [u8]) -> Self {
        Src { d, i: 0 }
    }
    fn done(&self) -> bool {
        self.i >= self.d.len()
    }
    fn byte(&mut self) -> u8 {
        let b = self.d.get(self.i).copied().unwrap_or(0);
        self.i += 1;
        b
    }
    fn u64(&mut self) -> u64 {
        let mut v = 0u64;
        for _ in 0..8 {
            v = (v << 8) | self.byte() as u64;
        }
        v
    }
    /// A reading: mostly ordinary values, with the edge cases well
    /// represented (signed zeros, NaN, infinities, huge and tiny values,
    /// offset data, arbitrary bit patterns).
    fn value(&mut self) -> f64 {
        let k = self.byte();
        match k % 20 {
            0 => 0.0,
            1 => -0.0,
            2 => 1.0,
            3 => -1.0,
            4 => f64::NAN,
            5 => f64::INFINITY,
            6 => f64::NEG_INFINITY,
            7 => 1e300,
            8 => -1e300,
            9 => 1e150,
            10 => 5e-324,
            11 => f64::MAX,
            12 => 1e9 + self.byte() as f64 / 64.0,
            13 => f64::from_bits(self.u64()),
            14 => -(self.byte() as f64) * 1e-3,
            _ => (self.byte() as i8) as f64 * 0.37 + (k / 20) as f64,
        }
    }
    fn weight(&mut self) -> f64 {
        match self.byte() % 14 {
            0 => 0.0,
            1 => -1.0,
            2 => f64::NAN,
            3 => f64::INFINITY,
            4 => 2.0,
            5 => 0.5,
            6 => 1e150,
            7 => 1e-150,
            8 => 5e-324,
            9 => f64::from_bits(self.u64()),
            10 => 1.0 + self.byte() as f64,
            _ => 1.0,
        }
    }
    fn lambda(&mut self) -> f64 {
        match self.byte() % 12 {
            0 => 0.0,
            1 => -0.5,
            2 => 1.0,
            3 => f64::NAN,
            4 => 1.5,
            5 => 1e-300,
            6 => f64::from_bits(self.u64()),
            7 => 5e-324,
            _ => 0.5 + self.byte() as f64 / 512.0,
        }
    }
}

/// One operation, decoded once and applied to every accumulator kind.
#[derive(Clone, Debug)]
enum Op {
    Push(f64, f64),
    PushWeighted(f64, f64, f64),
    Extend(Vec<f64>, Vec<f64>),
    ExtendWeighted(Vec<f64>, Vec<f64>, Vec<f64>),
    MergeIntoA,
    MergeIntoB,
    MergeSelf,
    ForgetA(f64),
    ForgetB(f64),
    RoundTrip,
    Swap,
    Query,
    ResetB,
}

fn block(s: &mut Src<'_>) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let k = s.byte();
    // Mostly short blocks; sometimes one longer than a kernel chunk (512).
    let n = if k.is_multiple_of(16) {
        520 + (k as usize % 7)
    } else {
        k as usize % 40
    };
    let mut xs = Vec::with_capacity(n);
    let mut ys = Vec::with_capacity(n);
    let mut ws = Vec::with_capacity(n);
    if n > 64 {
        // Long blocks: a cheap generator seeded from the input, with one
        // decoded value planted at a chosen position.
        let mut g = s.u64() | 1;
        for _ in 0..n {
            g ^= g << 13;
            g ^= g >> 7;
            g ^= g << 17;
            let u = (g >> 11) as f64 / (1u64 << 53) as f64;
            xs.push(u * 10.0);
            ys.push(3.0 * u * 10.0 - 1.0 + (u - 0.5) * 0.01);
            ws.push(1.0 + u);
        }
        let at = s.byte() as usize % n;
        xs[at] = s.value();
        ws[at] = s.weight();
    } else {
        for _ in 0..n {
            xs.push(s.value());
            ys.push(s.value());
            ws.push(s.weight());
        }
    }
    match s.byte() % 16 {
        0 => {
            ys.pop();
        }
        1 => ws.push(1.0),
        _ => {}
    }
    (xs, ys, ws)
}

fn decode_ops(s: &mut Src<'_>) -> Vec<Op> {
    let mut ops = Vec::new();
    while !s.done() && ops.len() < 256 {
        let op = match s.byte() % 16 {
            0 | 1 => Op::Push(s.value(), s.value()),
            2 => Op::PushWeighted(s.value(), s.value(), s.weight()),
            3 => {
                let (x, y, _) = block(s);
                Op::Extend(x, y)
            }
            4 => {
                let (x, y, w) = block(s);
                Op::ExtendWeighted(x, y, w)
            }
            5 => Op::MergeIntoA,
            6 => Op::MergeIntoB,
            7 => Op::MergeSelf,
            8 => Op::ForgetA(s.lambda()),
            9 => Op::ForgetB(s.lambda()),
            10 => Op::RoundTrip,
            11 => Op::Swap,
            12 => Op::Query,
            13 => Op::ResetB,
            _ => Op::Push(s.value(), s.value()),
        };
        ops.push(op);
    }
    ops
}

// ---------------------------------------------------------------------------
// Line accumulator.

/// `restore(save(a))` is `a` bit for bit: equal bytes cover every saved
/// field bit for bit, and `==` also covers any field the format might
/// have missed (a valid state holds no NaN, so `==` is reflexive).
fn line_roundtrip<T: StateTier>(a: &PairMoments<T>) {
    let bytes = a.save_to_vec();
    assert_eq!(bytes.len(), a.encoded_len());
    let r = PairMoments::<T>::restore(&bytes)
        .unwrap_or_else(|e| panic!("a reachable state was refused: {e:?}\n{a:?}"));
    assert!(
        r == *a,
        "round trip changed the state
{a:?}
{r:?}"
    );
    assert_eq!(r.save_to_vec(), bytes);
    let info = state::peek(&bytes).unwrap();
    assert_eq!(info.kind, T::KIND);
    assert_eq!(info.count, a.count());
}

fn line_query<T: StateTier>(a: &PairMoments<T>) {
    if let Ok(s) = a.summary() {
        for v in [s.weight_sum, s.mean_x, s.mean_y, s.sxx, s.sxy] {
            assert!(v.is_finite(), "non-finite summary value {v}\n{a:?}");
        }
    }
    if let Ok(f) = a.fit() {
        for v in [
            f.slope,
            f.intercept,
            f.sse,
            f.residual_sd,
            f.se_slope,
            f.se_intercept,
            f.r_squared,
        ] {
            assert!(!v.is_nan(), "NaN in a fit result\n{a:?}");
        }
    }
}

/// Applies `f` to `a`; on error the bytes must be unchanged, on success
/// the new state must round-trip.
fn line_step<T: StateTier, E: core::fmt::Debug>(
    a: &mut PairMoments<T>,
    f: impl FnOnce(&mut PairMoments<T>) -> Result<(), E>,
) {
    let before = a.save_to_vec();
    let copy = *a;
    match f(a) {
        Ok(()) => {
            if PairMoments::<T>::restore(&a.save_to_vec()).is_err() {
                eprintln!("state before the step: {copy:?}");
            }
            line_roundtrip(a)
        }
        Err(_) => {
            assert_eq!(a.save_to_vec(), before, "a failed call changed the state");
            assert!(*a == copy, "a failed call changed an unsaved field");
        }
    }
}

fn run_line<T: StateTier>(ops: &[Op]) {
    let mut a = PairMoments::<T>::new();
    let mut b = PairMoments::<T>::new();
    for op in ops {
        if std::env::var_os("PLUMBFIT_TRACE").is_some() {
            eprintln!("{op:?}");
        }
        match op {
            Op::Push(x, y) => line_step(&mut a, |a| a.push(*x, *y)),
            Op::PushWeighted(x, y, w) => line_step(&mut b, |b| b.push_weighted(*x, *y, *w)),
            Op::Extend(xs, ys) => line_step(&mut a, |a| a.extend(xs, ys)),
            Op::ExtendWeighted(xs, ys, ws) => line_step(&mut b, |b| b.extend_weighted(xs, ys, ws)),
            Op::MergeIntoA => {
                let o = b;
                line_step(&mut a, |a| a.merge(&o))
            }
            Op::MergeIntoB => {
                let o = a;
                line_step(&mut b, |b| b.merge(&o))
            }
            Op::MergeSelf => {
                let o = a;
                line_step(&mut a, |a| a.merge(&o))
            }
            Op::ForgetA(l) => line_step(&mut a, |a| a.forget(*l)),
            Op::ForgetB(l) => line_step(&mut b, |b| b.forget(*l)),
            Op::RoundTrip => {
                line_roundtrip(&a);
                a = PairMoments::<T>::restore(&a.save_to_vec()).unwrap();
            }
            Op::Swap => core::mem::swap(&mut a, &mut b),
            Op::Query => {
                line_query(&a);
                line_query(&b);
            }
            Op::ResetB => b = PairMoments::<T>::new(),
        }
    }
    line_query(&a);
    line_roundtrip(&a);
    line_roundtrip(&b);
}

// ---------------------------------------------------------------------------
// Model accumulator.

fn model_row(p: usize, x: f64) -> Vec<f64> {
    let mut row = Vec::with_capacity(p);
    let mut v = 1.0;
    for _ in 0..p {
        row.push(v);
        v *= x;
    }
    row
}

fn model_roundtrip(a: &ModelMoments) {
    let bytes = a.save_to_vec();
    assert_eq!(bytes.len(), state::model_len(a.params()));
    let r = ModelMoments::restore(&bytes)
        .unwrap_or_else(|e| panic!("a reachable model state was refused: {e:?}\n{a:?}"));
    assert!(r == *a, "model round trip changed the state");
    assert_eq!(r.save_to_vec(), bytes);
    let mut buf = [0.0f64; storage_len(MAX_PARAMS)];
    let core = ModelCore::restore_in(&mut buf, &bytes).unwrap();
    assert_eq!(core.save_to_vec(), bytes);
    let bits = |s: &[f64]| s.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(core.storage()), bits(a.storage()));
}

fn model_step(
    a: &mut ModelMoments,
    f: impl FnOnce(&mut ModelMoments) -> Result<(), plumbfit::model::ModelError>,
) {
    let before = a.save_to_vec();
    match f(a) {
        Ok(()) => model_roundtrip(a),
        Err(_) => assert_eq!(
            a.save_to_vec(),
            before,
            "a failed model call changed the state"
        ),
    }
}

/// A successful model fit reports only finite numbers (the F statistic
/// may be `+∞` for an exact fit, as documented); extreme states must give
/// a typed error instead.
fn model_query(a: &ModelMoments) {
    if let Ok(fit) = a.fit(&Default::default()) {
        let finite = fit
            .coefficients
            .iter()
            .chain(&fit.std_errors)
            .chain(&fit.covariance)
            .chain(&[
                fit.sse,
                fit.ss_model,
                fit.ss_total,
                fit.residual_sd,
                fit.ms_resid,
                fit.weight_sum,
                fit.effective_rows,
                fit.condition_estimate,
            ])
            .chain(fit.r_squared.iter())
            .chain(fit.adj_r_squared.iter())
            .chain(fit.ms_model.iter())
            .all(|v| v.is_finite());
        let f_ok = fit
            .f_stat
            .is_none_or(|f| f.is_finite() || (fit.exact_fit && f == f64::INFINITY));
        assert!(
            finite && f_ok,
            "non-finite number in a model fit\n{fit:?}\n{a:?}"
        );
    }
}

fn run_model(p: usize, ops: &[Op]) {
    let mut a = ModelMoments::new(p).unwrap();
    let mut b = ModelMoments::new(p).unwrap();
    let rows = |xs: &[f64]| -> Vec<f64> { xs.iter().flat_map(|&x| model_row(p, x)).collect() };
    for op in ops {
        match op {
            Op::Push(x, y) => model_step(&mut a, |a| a.push_row(&model_row(p, *x), *y)),
            Op::PushWeighted(x, y, w) => model_step(&mut b, |b| b.push_powers(*x, *y, *w)),
            Op::Extend(xs, ys) => model_step(&mut a, |a| a.extend_rows(&rows(xs), ys)),
            Op::ExtendWeighted(xs, ys, ws) => {
                model_step(&mut b, |b| b.extend_rows_weighted(&rows(xs), ys, ws))
            }
            Op::MergeIntoA => {
                let o = b.clone();
                model_step(&mut a, |a| a.merge(&o))
            }
            Op::MergeIntoB => {
                let o = a.clone();
                model_step(&mut b, |b| b.merge(&o))
            }
            Op::MergeSelf => {
                let o = a.clone();
                model_step(&mut a, |a| a.merge(&o))
            }
            Op::ForgetA(l) => model_step(&mut a, |a| a.forget(*l)),
            Op::ForgetB(l) => model_step(&mut b, |b| b.forget(*l)),
            Op::RoundTrip => {
                model_roundtrip(&a);
                a = ModelMoments::restore(&a.save_to_vec()).unwrap();
            }
            Op::Swap => core::mem::swap(&mut a, &mut b),
            Op::Query => {
                model_query(&a);
                model_query(&b);
            }
            Op::ResetB => b = ModelMoments::new(p).unwrap(),
        }
    }
    model_query(&a);
    model_roundtrip(&a);
    model_roundtrip(&b);
}

/// Operation sequences: byte 0 picks the model's `p` (1–4), the rest are
/// operations.
pub fn check_ops(data: &[u8]) {
    let mut s = Src::new(data);
    let p = 1 + s.byte() as usize % 4;
    let ops = decode_ops(&mut s);
    run_line::<plumbfit::Lean>(&ops);
    run_line::<plumbfit::Full>(&ops);
    run_model(p, &ops);
    levels_checks::run_levels::<plumbfit::calib::LevelSet>(&ops);
    levels_checks::run_levels::<plumbfit::calib::FixedLevels<8>>(&ops);
}

// ---------------------------------------------------------------------------
// Decoding arbitrary bytes.

/// Builds a well-formed envelope around fuzz bytes so that the semantic
/// rules, not only the checksum, are exercised: byte 0 picks the kind and
/// `p`, the rest fills the payload (zero-padded), and the CRC is computed.
fn envelope(data: &[u8]) -> Vec<u8> {
    let sel = data.first().copied().unwrap_or(0);
    let (kind, p, len) = match sel % 4 {
        0 => (StateKind::LineLean, 0u16, state::LEAN_LEN),
        1 => (StateKind::LineFull, 0, state::FULL_LEN),
        2 => {
            let p = 1 + (sel as usize / 4) % MAX_PARAMS;
            (StateKind::Model, p as u16, state::model_len(p))
        }
        _ => {
            let c = (sel as usize / 4) % (state::MAX_LEVELS + 1);
            (StateKind::Levels, c as u16, state::levels_len(c))
        }
    };
    let mut b = vec![0u8; len];
    b[..4].copy_from_slice(&state::MAGIC);
    b[4..6].copy_from_slice(&state::FORMAT_VERSION.to_le_bytes());
    b[6] = kind.code();
    b[8..10].copy_from_slice(&p.to_le_bytes());
    let payload = len - state::HEADER_LEN - state::TRAILER_LEN;
    b[12..16].copy_from_slice(&(payload as u32).to_le_bytes());
    let src = data.get(1..).unwrap_or(&[]);
    let n = src.len().min(payload);
    b[state::HEADER_LEN..state::HEADER_LEN + n].copy_from_slice(&src[..n]);
    if kind == StateKind::Model && n < 16 {
        // Give the model payload its layout tag and p unless the input
        // reaches that far, so deeper rules are reached.
        b[16..24].copy_from_slice(&plumbfit::model::LAYOUT_TAG.to_le_bytes());
        b[24..32].copy_from_slice(&(p as f64).to_le_bytes());
    }
    let body = len - state::TRAILER_LEN;
    let crc = state::crc32(&b[..body]);
    b[body..].copy_from_slice(&crc.to_le_bytes());
    b
}

/// With the trailer replaced by the right CRC (reaches the payload rules
/// for inputs with a good header).
fn fix_crc(data: &[u8]) -> Vec<u8> {
    let mut b = data.to_vec();
    if b.len() >= state::HEADER_LEN + state::TRAILER_LEN {
        let body = b.len() - state::TRAILER_LEN;
        let crc = state::crc32(&b[..body]);
        b[body..].copy_from_slice(&crc.to_le_bytes());
    }
    b
}

/// What an accepted blob re-encodes to: itself, or for a blob of an older
/// version that this build still reads, the same payload under the current
/// version (new header version, new CRC). Encoding is canonical within a
/// version.
fn reencoded(bytes: &[u8]) -> Vec<u8> {
    let mut b = bytes.to_vec();
    if b.len() >= state::HEADER_LEN + state::TRAILER_LEN
        && u16::from_le_bytes([b[4], b[5]]) < state::FORMAT_VERSION
    {
        b[4..6].copy_from_slice(&state::FORMAT_VERSION.to_le_bytes());
        let body = b.len() - state::TRAILER_LEN;
        let crc = state::crc32(&b[..body]);
        b[body..].copy_from_slice(&crc.to_le_bytes());
    }
    b
}

fn decode_one(bytes: &[u8]) {
    let want = reencoded(bytes);
    let peeked = state::peek(bytes);
    if let Ok(info) = peeked {
        assert_eq!(info.len, bytes.len());
        assert_eq!(state::declared_len(bytes), Ok(bytes.len()));
    }
    let mut accepted = 0;
    if let Ok(a) = LeanMoments::restore(bytes) {
        accepted += 1;
        assert_eq!(a.save_to_vec(), want, "lean encoding is not canonical");
        exercise_line(a);
    }
    if let Ok(a) = FullMoments::restore(bytes) {
        accepted += 1;
        assert_eq!(a.save_to_vec(), want, "full encoding is not canonical");
        exercise_line(a);
    }
    if let Ok(a) = ModelMoments::restore(bytes) {
        accepted += 1;
        assert_eq!(a.save_to_vec(), want, "model encoding is not canonical");
        exercise_model(a);
    }
    if levels_checks::levels_decode_one(bytes) {
        accepted += 1;
    }
    // Caller storage: written only on success.
    const SENTINEL: f64 = -7.25;
    let mut buf = [SENTINEL; storage_len(MAX_PARAMS) + 1];
    match ModelCore::restore_in(&mut buf, bytes) {
        Ok(core) => assert_eq!(core.save_to_vec(), want),
        Err(_) => assert!(
            buf.iter().all(|&v| v == SENTINEL),
            "failed restore wrote storage"
        ),
    }
    if accepted > 0 {
        assert!(peeked.is_ok(), "restore accepted what peek refused");
    }
    assert!(accepted <= 1, "one blob restored as two kinds");
    // Every error has a code in the state range.
    for e in [
        LeanMoments::restore(bytes).err(),
        FullMoments::restore(bytes).err(),
        ModelMoments::restore(bytes).err(),
    ]
    .into_iter()
    .flatten()
    {
        assert!((50..=59).contains(&e.code()), "code {} for {e:?}", e.code());
    }
}

/// A restored (possibly forged but valid) state must behave like any
/// other: updates keep the no-change-on-error rule, queries give finite
/// numbers or typed errors.
fn exercise_line<T: StateTier>(mut a: PairMoments<T>) {
    line_query(&a);
    let o = a;
    line_step(&mut a, |a| a.merge(&o));
    line_step(&mut a, |a| a.push(2.5, -1.0));
    line_step(&mut a, |a| a.push_weighted(1e6, 3.0, 0.25));
    line_step(&mut a, |a| a.forget(0.5));
    line_step(&mut a, |a| a.extend(&[1.0, 2.0, 3.0], &[0.5, 0.25, 0.125]));
    line_query(&a);
}

fn exercise_model(mut a: ModelMoments) {
    model_query(&a);
    let p = a.params();
    let o = a.clone();
    model_step(&mut a, |a| a.merge(&o));
    model_step(&mut a, |a| a.push_row(&model_row(p, 1.5), 2.0));
    model_step(&mut a, |a| a.forget(0.5));
    model_query(&a);
}

/// Arbitrary bytes through every decoder: as given, with a corrected
/// checksum, and inside a well-formed envelope.
pub fn check_decode(data: &[u8]) {
    decode_one(data);
    decode_one(&fix_crc(data));
    decode_one(&envelope(data));
    // A prefix of a buffer larger than any state: declared_len must never
    // claim more than the maximum.
    if let Ok(n) = state::declared_len(data) {
        assert!(n <= MAX_ENCODED_LEN);
    }
}
