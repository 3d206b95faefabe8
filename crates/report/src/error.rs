//! The crate's error values: why a response could not be evaluated ([`ReportError`])
//! and why a metric could not be found ([`MetricError`]).
//!
//! Both are plain data (`Clone`, `PartialEq`) so a [`crate::Verdict`] can carry the
//! reason a metric failed, and their `Display` is the reason a user reads.

use crate::Shape;
use crate::format::{fmt_hz, fmt_level};
use rolloff_netlist::Unit;

/// Why a response source could not give a value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ReportError {
    /// The solver failed at a frequency (its own message, kept as text; it names the
    /// frequency where that matters).
    #[error("{message}")]
    Solver {
        /// Frequency of the failed solve in Hz (0 for the DC solve).
        freq_hz: f64,
        /// The solver's message.
        message: String,
    },
    /// A sampled response was asked for a value outside its data.
    #[error(
        "{} lies outside the measured data ({} .. {})",
        fmt_hz(*freq_hz),
        fmt_hz(*low_hz),
        fmt_hz(*high_hz)
    )]
    OutsideData {
        /// Requested frequency in Hz.
        freq_hz: f64,
        /// Lowest sampled frequency in Hz.
        low_hz: f64,
        /// Highest sampled frequency in Hz.
        high_hz: f64,
    },
    /// The source cannot give d(value)/dω.
    #[error("this response source gives no derivative (needed for group delay)")]
    NoDerivative,
    /// Measured data that cannot be used.
    #[error("bad response samples: {0}")]
    BadSamples(String),
    /// A frequency that is not finite and positive where one must be.
    #[error("frequency {0} Hz is not finite and positive")]
    BadFrequency(f64),
    /// The source returned a value that is not finite.
    #[error("the response is not finite at {}", fmt_hz(*freq_hz))]
    NotFinite {
        /// Frequency in Hz.
        freq_hz: f64,
    },
    /// No usable (positive) frequency to analyse.
    #[error("the sweep has no positive frequency to analyse")]
    EmptySweep,
    /// An argument that cannot be used (a `ref` that is not a positive frequency, …), or
    /// a sweep too short to analyse.
    #[error("{0}")]
    BadArgument(String),
    /// A snapshot that cannot be read.
    #[error("bad snapshot: {0}")]
    Snapshot(String),
}

/// Why a metric could not be measured. The `Display` text is the reason, e.g.
/// "no −3 dB crossing between 10 Hz and 1 MHz".
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MetricError {
    /// The response could not be evaluated.
    #[error(transparent)]
    Source(#[from] ReportError),
    /// The gain never crosses the level inside the sweep.
    #[error(
        "no {} crossing between {} and {}",
        fmt_level(*level_db),
        fmt_hz(*low_hz),
        fmt_hz(*high_hz)
    )]
    NoCrossing {
        /// Level relative to the passband in dB.
        level_db: f64,
        /// Sweep start in Hz.
        low_hz: f64,
        /// Sweep end in Hz.
        high_hz: f64,
    },
    /// `cutoff` asked for the single crossing but there are two.
    #[error(
        "two {} crossings ({} and {}): use cutoff_low and cutoff_high",
        fmt_level(*level_db),
        fmt_hz(*low_hz),
        fmt_hz(*high_hz)
    )]
    TwoCrossings {
        /// Level relative to the passband in dB.
        level_db: f64,
        /// The lower crossing in Hz.
        low_hz: f64,
        /// The upper crossing in Hz.
        high_hz: f64,
    },
    /// `cutoff` asked for the single crossing but there are more than two.
    #[error(
        "{} {} crossings ({}): the response has several bands; use cutoff_low and cutoff_high for the outer ones",
        freqs_hz.len(),
        fmt_level(*level_db),
        freqs_hz.iter().map(|f| fmt_hz(*f)).collect::<Vec<_>>().join(", ")
    )]
    ManyCrossings {
        /// Level relative to the passband in dB.
        level_db: f64,
        /// Every crossing in Hz, ascending.
        freqs_hz: Vec<f64>,
    },
    /// A band edge that this shape does not have (`cutoff_low` of a low-pass, …).
    #[error(
        "a {shape} response has no {edge} {} point: the passband reaches {} {}; use cutoff",
        fmt_level(*level_db),
        if *edge == "lower" { "down to" } else { "up to" },
        fmt_hz(*end_hz)
    )]
    NoEdge {
        /// The shape found.
        shape: Shape,
        /// "lower" or "upper".
        edge: &'static str,
        /// Level relative to the passband in dB.
        level_db: f64,
        /// The sweep end the passband reaches, in Hz.
        end_hz: f64,
    },
    /// A metric defined for other shapes only.
    #[error("{metric} needs {needs}; this response is {shape}")]
    WrongShape {
        /// The metric's name.
        metric: &'static str,
        /// What it needs ("a band-pass response").
        needs: &'static str,
        /// The shape found.
        shape: Shape,
    },
    /// The largest gain lies at a sweep end, so there is no peak.
    #[error(
        "the gain has no peak inside {} .. {}: its largest value is at the sweep {end}",
        fmt_hz(*low_hz),
        fmt_hz(*high_hz)
    )]
    NoPeak {
        /// Sweep start in Hz.
        low_hz: f64,
        /// Sweep end in Hz.
        high_hz: f64,
        /// "start" or "end".
        end: &'static str,
    },
    /// Peaking needs a flat region (or `ref`) to compare with.
    #[error(
        "peaking needs a flat region to compare the peak with and this {shape} response has none; give `ref <freq>`"
    )]
    NoFlatRegion {
        /// The shape found.
        shape: Shape,
    },
    /// No minimum deep enough to be a notch.
    #[error(
        "no notch: the gain has no minimum inside {} .. {} at least {} below the passband",
        fmt_hz(*low_hz),
        fmt_hz(*high_hz),
        fmt_level(*level_db).replacen('−', "", 1)
    )]
    NoNotch {
        /// Sweep start in Hz.
        low_hz: f64,
        /// Sweep end in Hz.
        high_hz: f64,
        /// The level (negative dB) a notch must reach below the passband.
        level_db: f64,
    },
    /// The response is exactly zero, so a value in dB (or a phase) is unbounded.
    #[error("the response is exactly zero at {}, so its {what} is unbounded", fmt_hz(*freq_hz))]
    ZeroResponse {
        /// Frequency in Hz.
        freq_hz: f64,
        /// "gain in dB", "phase", "group delay", "notch depth".
        what: &'static str,
    },
    /// A bad argument of a metric (a frequency that is not positive, a level ≥ 0 dB).
    #[error("{0}")]
    BadArgument(String),
    /// Too few sweep points to search.
    #[error("the sweep has {points} positive frequency point(s); searching needs at least 2")]
    TooFewPoints {
        /// Number of usable points.
        points: usize,
    },
    /// `impedance(...)` on a probe that is not an impedance.
    #[error("impedance() needs a zin or zout probe; `{target}` is not one")]
    NotImpedance {
        /// The target's name.
        target: String,
    },
    /// The metric needs the circuit (bias), not just a response.
    #[error("{metric} needs the circuit's solver, not only a response")]
    NeedsCircuit {
        /// The metric's name.
        metric: &'static str,
    },
    /// The DC bias solve failed.
    #[error("the bias solve failed: {0}")]
    Bias(String),
    /// The expectation's unit does not fit the metric.
    #[error("{metric} is measured in {}, but the expectation is written in {}", unit_name(*found), unit_name(*expected))]
    UnitMismatch {
        /// The metric's name.
        metric: &'static str,
        /// The metric's own unit.
        found: Unit,
        /// The expectation's unit.
        expected: Unit,
    },
    /// The target does not fit the metric (bias of a named probe, a current probe for `bias(...)`).
    #[error("{0}")]
    BadTarget(String),
}

fn unit_name(unit: Unit) -> &'static str {
    match unit {
        Unit::Dimensionless => "a plain number",
        other => other.symbol(),
    }
}
