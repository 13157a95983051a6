//! The invented scenario: a bench carbon-monoxide analyser whose raw
//! signal (mV) is calibrated against reference gas standards (µmol/mol),
//! four readings per standard, then used on three unknown samples.
//!
//! The "true" response is `4.0 + 0.612·c` mV with noise whose variance is
//! proportional to the mean signal (SD `0.18·√μ` mV): small at the zero gas,
//! about eight times larger at the top standard. All numbers are made up.

use crate::rng::SplitMix64;

/// Seed of the invented readings.
pub const SEED: u64 = 0x00C0_FFEE_2026;

/// Reference gas concentrations of the standards, µmol/mol.
pub const STANDARDS: [f64; 6] = [0.0, 20.0, 50.0, 100.0, 200.0, 400.0];

/// Readings per standard.
pub const REPLICATES: usize = 4;

/// Stated standard uncertainty of one readout, mV (invented).
pub const READOUT_U: f64 = 1.2;

const OFFSET: f64 = 4.0;
const GAIN: f64 = 0.612;
const NOISE: f64 = 0.18;

/// One reading of a reference standard.
#[derive(Clone, Copy, Debug)]
pub struct StandardReading {
    /// Reference concentration, µmol/mol.
    pub conc: f64,
    /// Raw signal, mV.
    pub signal: f64,
}

/// An unknown sample read several times.
#[derive(Clone, Debug)]
pub struct Sample {
    /// Label.
    pub name: &'static str,
    /// The invented true concentration.
    pub truth: f64,
    /// Raw signals, mV.
    pub readings: Vec<f64>,
}

/// The whole invented data set.
#[derive(Clone, Debug)]
pub struct Scenario {
    /// Calibration readings in the order taken (each standard four times,
    /// levels interleaved as a bench run would be).
    pub standards: Vec<StandardReading>,
    /// The unknown samples.
    pub samples: Vec<Sample>,
}

fn reading(rng: &mut SplitMix64, conc: f64) -> f64 {
    let mean = OFFSET + GAIN * conc;
    mean + NOISE * mean.sqrt() * rng.normal()
}

impl Scenario {
    /// Generates the readings from `seed`.
    pub fn generate(seed: u64) -> Self {
        let mut rng = SplitMix64::new(seed);
        let mut standards = Vec::new();
        for _ in 0..REPLICATES {
            for &c in &STANDARDS {
                standards.push(StandardReading {
                    conc: c,
                    signal: reading(&mut rng, c),
                });
            }
        }
        let samples = [("S-1", 6.0), ("S-2", 75.0), ("S-3", 330.0)]
            .iter()
            .map(|&(name, truth)| Sample {
                name,
                truth,
                readings: (0..3).map(|_| reading(&mut rng, truth)).collect(),
            })
            .collect();
        Scenario { standards, samples }
    }
}
