//! `cargo run --release -p plumbfit-demo`: prints the invented calibration
//! report and writes `out/calibration-report.svg` under the current
//! directory.

use std::path::Path;
use std::process::ExitCode;

fn main() -> ExitCode {
    match plumbfit_demo::run(Path::new("out")) {
        Ok(outcome) => {
            print!("{}", outcome.text);
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("plumbfit-demo: {e}");
            ExitCode::FAILURE
        }
    }
}
