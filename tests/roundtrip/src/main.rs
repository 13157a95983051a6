//! Rust side of the cross-door round trip (`.ci/steps/75-roundtrip.sh`).
//!
//! `plumbfit-roundtrip <dir>` writes three invented data parts, the states of
//! a lean line, a full line, a model (p = 3) and a replicate-level store
//! after part A, and the
//! reference: the same three parts carried through exactly the sequence of
//! calls the C program (part B) and the Python script (part C) make, all in
//! this one door. The C program and the Python script check their bytes and
//! fits against these files with exact (bit-for-bit) equality.
//!
//! The sequence, per accumulator:
//! 1. here: `extend` part A (lines) / `push_powers` each row of A (model);
//!    saved as `a_<kind>.state`;
//! 2. C: restore, save (must equal step 1); weighted pushes of the first
//!    third of part B; the second third into a fresh accumulator (`extend`;
//!    model rows `[1, x, x·x]`), merged in; `forget(0.995)`; unweighted
//!    pushes of the last third (so the saved state may hold pushes not yet
//!    folded in); saved as `c_<kind>.state`;
//! 3. Python: restore, save (must equal step 2); single pushes of the first
//!    7 pairs of part C, the rest (more pairs than the Python door handles
//!    with the GIL held) into a fresh accumulator (`extend`), merged in; the
//!    final bytes and fit must equal `ref_<kind>.state` and `ref_fit.txt`.
//!
//! The level store takes the same readings at nominal levels `lx` (8
//! levels shared by all parts): step 1 `extend`; step 2 weighted pushes of
//! the first half of B, the second half merged in from a fresh store; step
//! 3 part C merged in from a fresh store, and the lack-of-fit test of a
//! fixed straight line must give the same bits.

use plumbfit::calib::LevelSet;
use plumbfit::model::{InterceptMode, ModelFitOptions};
use plumbfit::state::StateTier;
use plumbfit::{Full, Lean, ModelMoments, PairMoments};
use std::fs;
use std::io::Write;
use std::path::Path;
use std::process::ExitCode;

/// Forgetting factor applied by the C step.
const LAMBDA: f64 = 0.995;

/// One invented data part: x, y, weights and nominal levels.
struct Part {
    x: Vec<f64>,
    y: Vec<f64>,
    w: Vec<f64>,
    lx: Vec<f64>,
}

/// The straight line whose lack of fit against the levels is compared.
const LOF_LINE: [f64; 2] = [2.0, -0.5];

fn part(n: usize, offset: f64, seed: u64) -> Part {
    // A gently curved response with a deterministic wobble standing in for
    // noise; weights between 0.5 and 2.
    let mut s = seed;
    let mut next = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((s >> 11) as f64) / ((1u64 << 53) as f64)
    };
    let mut p = Part {
        x: Vec::with_capacity(n),
        y: Vec::with_capacity(n),
        w: Vec::with_capacity(n),
        lx: Vec::with_capacity(n),
    };
    for i in 0..n {
        let x = offset + 0.037 * i as f64 + 0.01 * next();
        let y = 2.5 - 1.25 * x + 0.03 * x * x + 0.05 * (next() - 0.5);
        p.x.push(x);
        p.y.push(y);
        p.w.push(0.5 + 1.5 * next());
        p.lx.push(1.0 + 0.5 * ((i * 7) % 8) as f64);
    }
    p
}

fn write_f64s(path: &Path, v: &[f64]) -> std::io::Result<()> {
    let mut b = Vec::with_capacity(8 * v.len());
    for x in v {
        b.extend_from_slice(&x.to_le_bytes());
    }
    fs::write(path, b)
}

fn powers(x: &[f64]) -> Vec<f64> {
    x.iter().flat_map(|&x| [1.0, x, x * x]).collect()
}

type Res<T> = Result<T, Box<dyn std::error::Error>>;

/// Pairs of part C the Python step pushes one at a time.
const PY_PUSHES: usize = 7;

/// Thirds of part B: weighted pushes, merged block, plain pushes.
fn thirds(n: usize) -> (usize, usize) {
    (n / 3, 2 * n / 3)
}

/// Step 2 (what the C program does) on a line accumulator of either tier.
fn line_c_step<T: plumbfit::Tier>(acc: &mut PairMoments<T>, b: &Part) -> Res<()> {
    let (h1, h2) = thirds(b.x.len());
    for i in 0..h1 {
        acc.push_weighted(b.x[i], b.y[i], b.w[i])?;
    }
    let mut other = PairMoments::<T>::new();
    other.extend(&b.x[h1..h2], &b.y[h1..h2])?;
    acc.merge(&other)?;
    acc.forget(LAMBDA)?;
    for i in h2..b.x.len() {
        acc.push(b.x[i], b.y[i])?;
    }
    Ok(())
}

/// Step 3 (what the Python script does).
fn line_py_step<T: plumbfit::Tier>(acc: &mut PairMoments<T>, c: &Part) -> Res<()> {
    for i in 0..PY_PUSHES {
        acc.push(c.x[i], c.y[i])?;
    }
    let mut part = PairMoments::<T>::new();
    part.extend(&c.x[PY_PUSHES..], &c.y[PY_PUSHES..])?;
    acc.merge(&part)?;
    Ok(())
}

fn line_reference<T: plumbfit::Tier + StateTier>(
    name: &str,
    dir: &Path,
    parts: &[Part; 3],
    out: &mut Vec<(String, f64)>,
) -> Res<()> {
    let mut acc = PairMoments::<T>::new();
    acc.extend(&parts[0].x, &parts[0].y)?;
    fs::write(dir.join(format!("a_{name}.state")), acc.save_to_vec())?;
    line_c_step(&mut acc, &parts[1])?;
    line_py_step(&mut acc, &parts[2])?;
    fs::write(dir.join(format!("ref_{name}.state")), acc.save_to_vec())?;
    let f = acc.fit()?;
    for (k, v) in [
        ("slope", f.slope),
        ("intercept", f.intercept),
        ("sse", f.sse),
        ("se_slope", f.se_slope),
        ("se_intercept", f.se_intercept),
        ("residual_sd", f.residual_sd),
        ("weight_sum", f.weight_sum),
    ] {
        out.push((format!("{name}.{k}"), v));
    }
    out.push((format!("{name}.count"), f.count as f64));
    Ok(())
}

fn model_reference(dir: &Path, parts: &[Part; 3], out: &mut Vec<(String, f64)>) -> Res<()> {
    let mut m = ModelMoments::new(3)?;
    for (&x, &y) in parts[0].x.iter().zip(&parts[0].y) {
        m.push_powers(x, y, 1.0)?;
    }
    fs::write(dir.join("a_model.state"), m.save_to_vec())?;
    // Step 2.
    let b = &parts[1];
    let (h1, h2) = thirds(b.x.len());
    for i in 0..h1 {
        m.push_powers(b.x[i], b.y[i], b.w[i])?;
    }
    let mut other = ModelMoments::new(3)?;
    other.extend_rows(&powers(&b.x[h1..h2]), &b.y[h1..h2])?;
    m.merge(&other)?;
    m.forget(LAMBDA)?;
    for i in h2..b.x.len() {
        m.push_row(&powers(&b.x[i..=i]), b.y[i])?;
    }
    // Step 3.
    let c = &parts[2];
    for i in 0..PY_PUSHES {
        m.push_row(&powers(&c.x[i..=i]), c.y[i])?;
    }
    let mut part = ModelMoments::new(3)?;
    part.extend_rows(&powers(&c.x[PY_PUSHES..]), &c.y[PY_PUSHES..])?;
    m.merge(&part)?;
    fs::write(dir.join("ref_model.state"), m.save_to_vec())?;
    let f = m.fit(&ModelFitOptions::with_intercept(InterceptMode::Detect))?;
    for (i, v) in f.coefficients.iter().enumerate() {
        out.push((format!("model.coefficients.{i}"), *v));
    }
    for (i, v) in f.std_errors.iter().enumerate() {
        out.push((format!("model.std_errors.{i}"), *v));
    }
    for (i, v) in f.covariance.iter().enumerate() {
        out.push((format!("model.covariance.{i}"), *v));
    }
    out.push(("model.sse".into(), f.sse));
    out.push(("model.residual_sd".into(), f.residual_sd));
    out.push(("model.rows".into(), f.rows as f64));
    Ok(())
}

fn levels_reference(dir: &Path, parts: &[Part; 3], out: &mut Vec<(String, f64)>) -> Res<()> {
    let mut lv = LevelSet::new();
    lv.extend(&parts[0].lx, &parts[0].y)?;
    fs::write(dir.join("a_levels.state"), lv.save_to_vec()?)?;
    let b = &parts[1];
    let h = b.x.len() / 2;
    for i in 0..h {
        lv.push_weighted(b.lx[i], b.y[i], b.w[i])?;
    }
    let mut other = LevelSet::new();
    other.extend(&b.lx[h..], &b.y[h..])?;
    lv.merge(&other)?;
    let mut part = LevelSet::new();
    part.extend(&parts[2].lx, &parts[2].y)?;
    lv.merge(&part)?;
    fs::write(dir.join("ref_levels.state"), lv.save_to_vec()?)?;
    // A store the C door's fixed store cannot hold (40 levels): its restore
    // there must be refused with the store unchanged.
    let mut big = LevelSet::new();
    for i in 0..40 {
        big.push_weighted(0.25 * i as f64, 1.0 + i as f64, 1.0)?;
    }
    fs::write(dir.join("big_levels.state"), big.save_to_vec()?)?;
    let lof = lv.lack_of_fit_poly(&LOF_LINE)?;
    out.push(("levels.count".into(), lof.count as f64));
    out.push(("levels.levels".into(), lof.levels as f64));
    out.push(("levels.ss_lack_of_fit".into(), lof.ss_lack_of_fit));
    out.push(("levels.ss_pure_error".into(), lof.ss_pure_error));
    out.push(("levels.f_stat".into(), lof.f_stat));
    out.push(("levels.p_value".into(), lof.p_value()));
    Ok(())
}

fn run(dir: &Path) -> Res<()> {
    fs::create_dir_all(dir)?;
    // Part C is longer than the Python door's GIL-release threshold.
    let parts = [
        part(257, 0.0, 11),
        part(124, 9.5, 23),
        part(20011, 14.0, 37),
    ];
    for (p, tag) in parts.iter().zip(["a", "b", "c"]) {
        write_f64s(&dir.join(format!("part_{tag}_x.f64")), &p.x)?;
        write_f64s(&dir.join(format!("part_{tag}_y.f64")), &p.y)?;
        write_f64s(&dir.join(format!("part_{tag}_w.f64")), &p.w)?;
        write_f64s(&dir.join(format!("part_{tag}_lx.f64")), &p.lx)?;
    }
    let mut vals = Vec::new();
    line_reference::<Lean>("lean", dir, &parts, &mut vals)?;
    line_reference::<Full>("full", dir, &parts, &mut vals)?;
    model_reference(dir, &parts, &mut vals)?;
    levels_reference(dir, &parts, &mut vals)?;
    let mut f = fs::File::create(dir.join("ref_fit.txt"))?;
    writeln!(f, "lambda {:016x}", LAMBDA.to_bits())?;
    for (k, v) in &vals {
        writeln!(f, "{k} {:016x}", v.to_bits())?;
    }
    println!(
        "round trip: wrote parts, part-A states and the reference to {}",
        dir.display()
    );
    Ok(())
}

fn main() -> ExitCode {
    let Some(dir) = std::env::args().nth(1) else {
        eprintln!("usage: plumbfit-roundtrip <output dir>");
        return ExitCode::from(2);
    };
    match run(Path::new(&dir)) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("plumbfit-roundtrip: {e}");
            ExitCode::FAILURE
        }
    }
}
