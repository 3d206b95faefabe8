//! rolloff-report: response metrics, expectation verdicts and regression snapshots.
//!
//! Owns everything computed *from* a response: the passband reference, the shape
//! (low-pass, high-pass, band-pass, band-stop, flat), cutoffs refined on the response
//! to 1e-9 relative, bandwidth, resonance and Q, peaking, ripple, notches, slopes and
//! the roll-off order, unwrapped phase, group delay from the exact derivative, the
//! evaluation of `expect` lines into verdicts, and JSON snapshots with comparisons
//! for CI. Metrics read a [`ResponseSource`]: the solver ([`ProbeSource`]), a closed
//! form `H(s)` ([`ClosedForm`]) or measured data ([`SampledResponse`]).
//!
//! It does not parse text (`rolloff-netlist`), stamp or solve matrices
//! (`rolloff-mna`), read or write files, or format tables and plots (the CLI).
//! Every definition is written out in `docs/metrics.md`.
//!
//! ```
//! use rolloff_report::{ClosedForm, analyze, Shape};
//! // A first-order low-pass with fc = 1 kHz, swept 10 Hz .. 1 MHz.
//! let tau = 1.0 / (2.0 * std::f64::consts::PI * 1e3);
//! let mut lp = ClosedForm::new(move |s| 1.0 / (1.0 + s * tau));
//! let freqs: Vec<f64> = (0..=150).map(|i| 10f64.powf(1.0 + i as f64 / 30.0)).collect();
//! // The passband reference at 1 mHz, on the asymptote (the sweep's largest gain, at
//! // 10 Hz, is 4e-4 dB lower and would move the crossing by a few ppm).
//! let summary = analyze(&mut lp, &freqs, Some(1e-3)).unwrap();
//! assert_eq!(summary.shape, Shape::LowPass);
//! assert!((summary.cutoffs[0].freq_hz / 1e3 - 1.0).abs() < 1e-9);
//! ```

mod analysis;
mod error;
mod expect;
mod format;
pub mod numeric;
mod snapshot;
mod solver;
mod source;
mod summary;

pub use analysis::{
    Analysis, Crossing, Extremum, FLAT_END_DB_PER_DECADE, LOOK_BEYOND_DECADES,
    ORDER_TOLERANCE_DB_PER_DECADE, PEAKING_WARN_DB, Passband, Reference, ReferenceOrigin,
    ReportWarning, SETTLED_DB_PER_DECADE, Shape, Side, Slope, StopbandSlope, SweepEnd,
    TOUCH_TOLERANCE_DB, order_of, uses_passband,
};
pub use error::{MetricError, ReportError};
pub use expect::{Verdict, judge, metric_name, metric_unit};
pub use format::{DEFAULT_LEVEL_DB, fmt_db, fmt_hz, fmt_value};
pub use snapshot::{
    CompareReport, Finding, NamedSource, ProbeSnapshot, SNAPSHOT_FORMAT, Snapshot, SnapshotMetric,
    Thresholds, compare_snapshots, compare_sources, snapshot_probe, snapshot_sources,
};
pub use solver::{
    ProbeSource, analyze_circuit, analyze_probe, bias, check, compare, measure,
    measure_with_warnings, measured_unit, sweep_frequencies, take_snapshot,
};
pub use source::{ClosedForm, ResponseSource, SampledResponse};
pub use summary::{ProbeSummary, analyze, measure_response};

#[cfg(test)]
mod tests;
