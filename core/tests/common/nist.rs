//! Reader for the NIST StRD linear least-squares files and their certified
//! values (`CERTIFIED.json`), shared by the reference tests.
//!
//! Self-contained on purpose (no JSON crate): the files are fixed, public
//! and small. Data lines are located through the header's
//! "Data (lines a to b)" entry; CRLF and LF endings both work, as do NIST's
//! number spellings ".11019", "760." and "0.8355E+16".
#![allow(dead_code)] // each test binary uses a different subset
#![allow(clippy::panic)] // a missing data folder under CI must stop the test

use std::path::{Path, PathBuf};

/// The eleven linear least-squares datasets, in NIST's order of listing.
pub const DATASETS: [&str; 11] = [
    "Norris", "Pontius", "NoInt1", "NoInt2", "Filip", "Longley", "Wampler1", "Wampler2",
    "Wampler3", "Wampler4", "Wampler5",
];

/// Folder holding `nist-strd/`: `$PLUMBFIT_REFDATA`, else the shared folder
/// beside the repository.
pub fn refdata_root() -> PathBuf {
    match std::env::var_os("PLUMBFIT_REFDATA") {
        Some(p) => PathBuf::from(p),
        None => Path::new(env!("CARGO_MANIFEST_DIR")).join("../../shared/reference-data"),
    }
}

/// The `nist-strd` folder, or `None` after a loud skip notice. Under
/// `CI=true` missing data is a failure, so a broken path cannot pass.
pub fn nist_dir_or_skip(test: &str) -> Option<PathBuf> {
    let dir = refdata_root().join("nist-strd");
    if dir.join("CERTIFIED.json").is_file() {
        return Some(dir);
    }
    if std::env::var("CI").map(|v| v == "true").unwrap_or(false) {
        panic!("reference data not found at {} (CI=true)", dir.display());
    }
    eprintln!(
        "SKIPPED: reference data not found at {} ({test}); set PLUMBFIT_REFDATA",
        dir.display()
    );
    None
}

/// Data rows of a `.dat` file: each row is `[y, x1, x2, …]` as in the file.
pub fn read_dat(path: &Path) -> Result<Vec<Vec<f64>>, String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let lines: Vec<&str> = text.lines().map(|l| l.trim_end_matches('\r')).collect();
    let range = lines
        .iter()
        .find_map(|l| {
            let t = l.trim_start();
            let rest = t
                .strip_prefix("Data")?
                .trim_start()
                .strip_prefix("(lines")?;
            let rest = rest.trim().trim_end_matches(')');
            let mut it = rest.split("to").map(|s| s.trim().parse::<usize>());
            match (it.next(), it.next()) {
                (Some(Ok(a)), Some(Ok(b))) => Some((a, b)),
                _ => None,
            }
        })
        .ok_or_else(|| format!("{}: no 'Data (lines a to b)' header", path.display()))?;
    let (a, b) = range;
    if a == 0 || b > lines.len() || a > b {
        return Err(format!("{}: bad data range {a}..{b}", path.display()));
    }
    let mut rows = Vec::new();
    for (k, line) in lines[a - 1..b].iter().enumerate() {
        let row: Result<Vec<f64>, _> = line.split_whitespace().map(parse_number).collect();
        let row = row.map_err(|e| format!("{} line {}: {e}", path.display(), a + k))?;
        if row.len() < 2 {
            return Err(format!("{} line {}: too few fields", path.display(), a + k));
        }
        rows.push(row);
    }
    Ok(rows)
}

/// Parses NIST's spellings: ".11019", "760.", "0.8355E+16".
pub fn parse_number(s: &str) -> Result<f64, String> {
    s.parse::<f64>().map_err(|e| format!("'{s}': {e}"))
}

/// Minimal JSON value.
#[derive(Debug, Clone, PartialEq)]
pub enum Json {
    /// `null`
    Null,
    /// `true` / `false`
    Bool(bool),
    /// a number
    Num(f64),
    /// a string (escapes other than `\"` and `\\` are kept verbatim)
    Str(String),
    /// an array
    Arr(Vec<Json>),
    /// an object, keys in file order
    Obj(Vec<(String, Json)>),
}

impl Json {
    /// Member of an object.
    pub fn get(&self, key: &str) -> Option<&Json> {
        match self {
            Json::Obj(m) => m.iter().find(|(k, _)| k == key).map(|(_, v)| v),
            _ => None,
        }
    }
    /// Number value (`None` for `null` or other kinds).
    pub fn num(&self) -> Option<f64> {
        match self {
            Json::Num(v) => Some(*v),
            _ => None,
        }
    }
}

/// Parses a JSON document.
pub fn parse_json(text: &str) -> Result<Json, String> {
    let b = text.as_bytes();
    let mut i = 0;
    let v = value(b, &mut i)?;
    ws(b, &mut i);
    if i != b.len() {
        return Err(format!("trailing characters at byte {i}"));
    }
    Ok(v)
}

fn ws(b: &[u8], i: &mut usize) {
    while *i < b.len() && b[*i].is_ascii_whitespace() {
        *i += 1;
    }
}

fn value(b: &[u8], i: &mut usize) -> Result<Json, String> {
    ws(b, i);
    let c = *b.get(*i).ok_or("unexpected end")?;
    match c {
        b'{' => {
            *i += 1;
            let mut m = Vec::new();
            ws(b, i);
            if b.get(*i) == Some(&b'}') {
                *i += 1;
                return Ok(Json::Obj(m));
            }
            loop {
                ws(b, i);
                let k = match value(b, i)? {
                    Json::Str(s) => s,
                    _ => return Err(format!("object key expected at byte {i}")),
                };
                ws(b, i);
                if b.get(*i) != Some(&b':') {
                    return Err(format!("':' expected at byte {i}"));
                }
                *i += 1;
                m.push((k, value(b, i)?));
                ws(b, i);
                match b.get(*i) {
                    Some(b',') => *i += 1,
                    Some(b'}') => {
                        *i += 1;
                        return Ok(Json::Obj(m));
                    }
                    _ => return Err(format!("',' or '}}' expected at byte {i}")),
                }
            }
        }
        b'[' => {
            *i += 1;
            let mut a = Vec::new();
            ws(b, i);
            if b.get(*i) == Some(&b']') {
                *i += 1;
                return Ok(Json::Arr(a));
            }
            loop {
                a.push(value(b, i)?);
                ws(b, i);
                match b.get(*i) {
                    Some(b',') => *i += 1,
                    Some(b']') => {
                        *i += 1;
                        return Ok(Json::Arr(a));
                    }
                    _ => return Err(format!("',' or ']' expected at byte {i}")),
                }
            }
        }
        b'"' => {
            *i += 1;
            let mut s = String::new();
            while *i < b.len() && b[*i] != b'"' {
                if b[*i] == b'\\' && *i + 1 < b.len() {
                    *i += 1;
                }
                s.push(b[*i] as char);
                *i += 1;
            }
            if *i >= b.len() {
                return Err("unterminated string".into());
            }
            *i += 1;
            Ok(Json::Str(s))
        }
        b'n' if b[*i..].starts_with(b"null") => {
            *i += 4;
            Ok(Json::Null)
        }
        b't' if b[*i..].starts_with(b"true") => {
            *i += 4;
            Ok(Json::Bool(true))
        }
        b'f' if b[*i..].starts_with(b"false") => {
            *i += 5;
            Ok(Json::Bool(false))
        }
        _ => {
            let start = *i;
            while *i < b.len() && matches!(b[*i], b'0'..=b'9' | b'-' | b'+' | b'.' | b'e' | b'E') {
                *i += 1;
            }
            let t = std::str::from_utf8(&b[start..*i]).map_err(|e| e.to_string())?;
            t.parse::<f64>()
                .map(Json::Num)
                .map_err(|e| format!("bad number '{t}' at byte {start}: {e}"))
        }
    }
}

/// Certified results of one dataset (NIST StRD, certified values).
#[derive(Debug, Clone)]
pub struct Certified {
    /// Dataset name.
    pub name: String,
    /// `.dat` file name.
    pub file: String,
    /// Polynomial degree, for "polynomial" models.
    pub degree: Option<usize>,
    /// Predictor count, for "multilinear" models.
    pub predictors: Option<usize>,
    /// Whether the model has an intercept.
    pub intercept: bool,
    /// Coefficient estimates.
    pub beta: Vec<f64>,
    /// Their standard deviations.
    pub sd_beta: Vec<f64>,
    /// Residual standard deviation.
    pub residual_sd: f64,
    /// R².
    pub r_squared: f64,
    /// ANOVA: regression degrees of freedom.
    pub df_reg: f64,
    /// ANOVA: regression sum of squares.
    pub ss_reg: f64,
    /// ANOVA: regression mean square.
    pub ms_reg: f64,
    /// ANOVA: F statistic; `None` where NIST prints "Infinity".
    pub f: Option<f64>,
    /// ANOVA: residual degrees of freedom.
    pub df_res: f64,
    /// ANOVA: residual sum of squares.
    pub ss_res: f64,
    /// ANOVA: residual mean square.
    pub ms_res: f64,
}

/// Reads `CERTIFIED.json` for `name`.
pub fn certified(dir: &Path, name: &str) -> Result<Certified, String> {
    let text = std::fs::read_to_string(dir.join("CERTIFIED.json")).map_err(|e| e.to_string())?;
    let doc = parse_json(&text)?;
    let ds = doc
        .get(name)
        .ok_or_else(|| format!("{name}: not in CERTIFIED.json"))?;
    let c = ds.get("certified").ok_or("no 'certified'")?;
    let an = c.get("anova").ok_or("no 'anova'")?;
    let nums = |v: Option<&Json>| -> Result<Vec<f64>, String> {
        match v {
            Some(Json::Arr(a)) => a
                .iter()
                .map(|x| x.num().ok_or("non-number".into()))
                .collect(),
            _ => Err(format!("{name}: array expected")),
        }
    };
    let num = |v: Option<&Json>, what: &str| -> Result<f64, String> {
        v.and_then(Json::num)
            .ok_or_else(|| format!("{name}: number expected for {what}"))
    };
    Ok(Certified {
        name: name.to_string(),
        file: match ds.get("file") {
            Some(Json::Str(s)) => s.clone(),
            _ => format!("{name}.dat"),
        },
        degree: ds.get("degree").and_then(Json::num).map(|v| v as usize),
        predictors: ds.get("predictors").and_then(Json::num).map(|v| v as usize),
        intercept: matches!(ds.get("intercept"), Some(Json::Bool(true))),
        beta: nums(c.get("beta"))?,
        sd_beta: nums(c.get("sd_beta"))?,
        residual_sd: num(c.get("residual_sd"), "residual_sd")?,
        r_squared: num(c.get("r_squared"), "r_squared")?,
        df_reg: num(an.get("df_reg"), "df_reg")?,
        ss_reg: num(an.get("ss_reg"), "ss_reg")?,
        ms_reg: num(an.get("ms_reg"), "ms_reg")?,
        f: an.get("f").and_then(Json::num),
        df_res: num(an.get("df_res"), "df_res")?,
        ss_res: num(an.get("ss_res"), "ss_res")?,
        ms_res: num(an.get("ms_res"), "ms_res")?,
    })
}

/// Log relative error (McCullough 1998), capped at 15 digits; for a
/// certified zero, −log10|computed| with the same cap.
pub fn lre(computed: f64, certified: f64) -> f64 {
    const CAP: f64 = 15.0;
    if !computed.is_finite() {
        return 0.0;
    }
    let err = if certified == 0.0 {
        computed.abs()
    } else {
        (computed - certified).abs() / certified.abs()
    };
    if err == 0.0 {
        CAP
    } else {
        (-err.log10()).clamp(0.0, CAP)
    }
}
