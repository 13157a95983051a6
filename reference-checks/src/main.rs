//! `cargo run --release -p reference-checks [-- --json]`: prints the LRE of
//! every certified value of the NIST StRD linear datasets, per dataset and
//! order, ending with `min LRE <value>`; `--json` prints
//! `{"<dataset>": {"<order>": {"<value name>": lre}}}`.

use reference_checks::{min_lre, refdata_dir, run_all, under_ci, Report};
use std::process::ExitCode;

fn main() -> ExitCode {
    let json = std::env::args().any(|a| a == "--json");
    let mut report = Report::new();
    if let Err(e) = run_all(&mut report) {
        eprintln!(
            "reference data not readable at {}: {e}",
            refdata_dir().display()
        );
        eprintln!("set PLUMBFIT_REFDATA to the folder holding nist-strd/");
        return if under_ci() {
            ExitCode::FAILURE
        } else {
            ExitCode::from(2)
        };
    }
    if json {
        match serde_json::to_string_pretty(&report) {
            Ok(s) => println!("{s}"),
            Err(e) => {
                eprintln!("{e}");
                return ExitCode::FAILURE;
            }
        }
        return ExitCode::SUCCESS;
    }
    print_table(&report);
    println!("min LRE {:.2}", min_lre(&report));
    ExitCode::SUCCESS
}

fn print_table(report: &Report) {
    println!("log relative error per certified value (cap 15; NIST StRD certified values)");
    println!(
        "{:<16} {:<9} {:>7} {:>7}  worst value",
        "dataset", "order", "min", "mean"
    );
    for (ds, orders) in report {
        for (order, scores) in orders {
            let (worst, min) = scores
                .iter()
                .fold(("-", f64::INFINITY), |(wn, wv), (n, v)| {
                    if *v < wv {
                        (n.as_str(), *v)
                    } else {
                        (wn, wv)
                    }
                });
            let mean = scores.values().sum::<f64>() / scores.len().max(1) as f64;
            println!("{ds:<16} {order:<9} {min:>7.2} {mean:>7.2}  {worst}");
        }
    }
}
