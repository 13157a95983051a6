//! Reader for NIST StRD linear-regression files and `CERTIFIED.json`.

use serde_json::Value;
use std::path::Path;

/// One dataset's data rows: column 0 is y, then the predictors.
#[derive(Debug, Clone)]
pub struct Dataset {
    /// Rows `[y, x1, x2, …]` in file order.
    pub rows: Vec<Vec<f64>>,
}

/// Reads `CERTIFIED.json` from the StRD folder.
pub fn load_certified(dir: &Path) -> Result<Value, String> {
    let p = dir.join("CERTIFIED.json");
    let text = std::fs::read_to_string(&p).map_err(|e| format!("{}: {e}", p.display()))?;
    serde_json::from_str(&text).map_err(|e| format!("{}: {e}", p.display()))
}

/// Reads `<name>.dat`: the rows on the lines that the header's
/// `Data (lines a to b)` entry names. Accepts CRLF or LF, leading-dot and
/// trailing-dot numbers (`.11019`, `760.`).
pub fn load_dataset(dir: &Path, name: &str) -> Result<Dataset, String> {
    let p = dir.join(format!("{name}.dat"));
    let text = std::fs::read_to_string(&p).map_err(|e| format!("{}: {e}", p.display()))?;
    let (first, last) =
        data_lines(&text).ok_or_else(|| format!("{}: no data line range", p.display()))?;
    let mut rows = Vec::new();
    for line in text.lines().skip(first - 1).take(last + 1 - first) {
        let line = line.trim();
        if line.is_empty() {
            continue;
        }
        let row: Result<Vec<f64>, _> = line.split_whitespace().map(str::parse::<f64>).collect();
        rows.push(row.map_err(|e| format!("{}: bad number in {line:?}: {e}", p.display()))?);
    }
    if rows.is_empty() {
        return Err(format!("{}: no data rows", p.display()));
    }
    Ok(Dataset { rows })
}

/// The 1-based line range from the header entry `Data (lines a to b)`.
fn data_lines(text: &str) -> Option<(usize, usize)> {
    let line = text.lines().find(|l| {
        let t = l.trim_start();
        t.starts_with("Data ") && t.contains("(lines")
    })?;
    let inner = line.split("(lines").nth(1)?.split(')').next()?;
    let mut it = inner.split("to").map(|s| s.trim().parse::<usize>());
    match (it.next()?, it.next()?) {
        (Ok(a), Ok(b)) if a >= 1 && b >= a => Some((a, b)),
        _ => None,
    }
}
