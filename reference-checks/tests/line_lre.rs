//! The line accumulator scores LRE ≥ 13.0 on every certified value of NIST
//! StRD Norris, NoInt1 and NoInt2 (source: NIST StRD certified values,
//! CERTIFIED.json), in file order, reversed, and split-in-three-and-merged.
#![allow(clippy::unwrap_used)]

use reference_checks::{refdata_dir, run_line_checks, under_ci, Report, LINE_DATASETS, ORDERS};

/// Certified values carry 15 digits; 13 leaves two for rounding in a
/// one-pass, mergeable computation.
const MIN_LINE_LRE: f64 = 13.0;

#[test]
fn line_accumulator_reaches_thirteen_digits() {
    let mut report = Report::new();
    if let Err(e) = run_line_checks(&mut report) {
        assert!(!under_ci(), "reference data missing under CI: {e}");
        eprintln!(
            "SKIPPED: reference data not found at {}: {e}",
            refdata_dir().display()
        );
        return;
    }
    for name in LINE_DATASETS {
        let orders = &report[&format!("{name}/line")];
        for order in ORDERS {
            let scores = &orders[order];
            // Every certified value of the file is scored (≥ 10 per dataset).
            assert!(
                scores.len() >= 10,
                "{name}/{order}: only {} values scored",
                scores.len()
            );
            for (value, lre) in scores {
                assert!(
                    *lre >= MIN_LINE_LRE,
                    "{name}/{order}/{value}: LRE {lre:.2} < {MIN_LINE_LRE}"
                );
            }
        }
    }
}

#[test]
fn lre_definition() {
    use reference_checks::lre;
    // McCullough (1998): digits of agreement, capped, −log10|x| for a zero target.
    assert_eq!(lre(1.0, 1.0), 15.0);
    assert!((lre(1.0 + 1e-10, 1.0) - 10.0).abs() < 1e-3);
    assert!((lre(1e-14, 0.0) - 14.0).abs() < 1e-9);
    assert_eq!(lre(f64::NAN, 1.0), 0.0);
}

/// One `extend` call over the whole file (the chunk kernel path, which the
/// three orders above exercise only briefly) keeps the same 13 digits
/// (source: NIST StRD Norris certified values).
#[test]
fn one_extend_call_keeps_thirteen_digits() {
    use reference_checks::{score_line, strd};
    let dir = refdata_dir().join("nist-strd");
    let (cert, data) = match (
        strd::load_certified(&dir),
        strd::load_dataset(&dir, "Norris"),
    ) {
        (Ok(c), Ok(d)) => (c, d),
        (Err(e), _) | (_, Err(e)) => {
            assert!(!under_ci(), "reference data missing under CI: {e}");
            eprintln!(
                "SKIPPED: reference data not found at {}: {e}",
                dir.display()
            );
            return;
        }
    };
    let xs: Vec<f64> = data.rows.iter().map(|r| r[1]).collect();
    let ys: Vec<f64> = data.rows.iter().map(|r| r[0]).collect();
    let mut acc = plumbfit::LeanMoments::new();
    acc.extend(&xs, &ys).unwrap();
    let mut full = plumbfit::FullMoments::new();
    full.extend(&xs, &ys).unwrap();
    for fit in [acc.fit().unwrap(), full.fit().unwrap()] {
        for (value, lre) in score_line(&cert["Norris"], &fit) {
            assert!(lre >= MIN_LINE_LRE, "Norris/extend/{value}: LRE {lre:.2}");
        }
    }
}
