//! Expectation verdicts: a measured value (or the reason there is none) judged against
//! the comparison an `expect` line writes.

use crate::format::fmt_value;
use crate::numeric::circular_difference;
use crate::{MetricError, ReportWarning};
use rolloff_netlist::{Comparison, Deviation, Expectation, MetricKind, Span, Unit};

/// The outcome of one `expect` line.
#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    /// The expectation as written (without `expect`).
    pub text: String,
    /// Where it is in the source.
    pub span: Span,
    /// The measured value in `unit`, or why it could not be measured.
    pub measured: Result<f64, MetricError>,
    /// The unit of `measured`, the bound and the margin.
    pub unit: Unit,
    /// Whether the expectation holds. A metric that cannot be measured never passes.
    pub pass: bool,
    /// The bound as text (`≥ 20 dB`, `= 2.5 kHz ± 2 %`, `within 14 Hz .. 18 Hz`).
    pub bound: String,
    /// Distance from the measured value to the nearest bound, in `unit`: positive
    /// inside, negative outside; `None` when nothing was measured.
    pub margin: Option<f64>,
    /// What the reader should know about the measurement (filled by [`crate::check`]
    /// for the cutoff family: the gain still changing at a sweep end, the reference
    /// taken beyond the sweep, peaking above the flat region).
    pub warnings: Vec<ReportWarning>,
}

impl std::fmt::Display for Verdict {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let status = if self.pass { "pass" } else { "FAIL" };
        match &self.measured {
            Ok(v) => write!(
                f,
                "{status}: {} (measured {}, bound {})",
                self.text,
                fmt_value(*v, self.unit),
                self.bound
            ),
            Err(e) => write!(f, "{status}: {} ({e})", self.text),
        }
    }
}

/// The unit a metric's value comes in (`bias` in V, or A for a current target).
pub fn metric_unit(kind: MetricKind) -> Unit {
    match kind {
        MetricKind::Cutoff
        | MetricKind::CutoffLow
        | MetricKind::CutoffHigh
        | MetricKind::Bandwidth
        | MetricKind::Resonance
        | MetricKind::PeakFreq
        | MetricKind::NotchFreq => Unit::Hertz,
        MetricKind::PassbandGain
        | MetricKind::PeakGain
        | MetricKind::Peaking
        | MetricKind::NotchDepth
        | MetricKind::Gain { .. } => Unit::Decibel,
        MetricKind::Q => Unit::Dimensionless,
        MetricKind::Phase { .. } => Unit::Degree,
        MetricKind::GroupDelay { .. } => Unit::Second,
        MetricKind::Slope { .. } => Unit::DecibelPerDecade,
        MetricKind::Impedance { .. } => Unit::Ohm,
        MetricKind::Bias => Unit::Volt,
    }
}

/// The language's name of a metric kind.
pub fn metric_name(kind: MetricKind) -> &'static str {
    match kind {
        MetricKind::Cutoff => "cutoff",
        MetricKind::CutoffLow => "cutoff_low",
        MetricKind::CutoffHigh => "cutoff_high",
        MetricKind::Bandwidth => "bandwidth",
        MetricKind::PassbandGain => "passband_gain",
        MetricKind::Resonance => "resonance",
        MetricKind::Q => "q",
        MetricKind::PeakGain => "peak_gain",
        MetricKind::PeakFreq => "peak_freq",
        MetricKind::Peaking => "peaking",
        MetricKind::NotchFreq => "notch_freq",
        MetricKind::NotchDepth => "notch_depth",
        MetricKind::Gain { .. } => "gain",
        MetricKind::Phase { .. } => "phase",
        MetricKind::GroupDelay { .. } => "group_delay",
        MetricKind::Slope { .. } => "slope",
        MetricKind::Impedance { .. } => "impedance",
        MetricKind::Bias => "bias",
    }
}

/// Judges a measured value against an expectation.
///
/// `measured_unit` is the unit the value was measured in; when it differs from the
/// expectation's the verdict fails with [`MetricError::UnitMismatch`]. Phases compare on
/// the circle for `=` (the difference is taken in (−180°, 180°]) and as the unwrapped
/// value for the other comparisons.
///
/// ```
/// use rolloff_netlist::{Comparison, Expectation, Metric, MetricKind, MetricOptions, NodeId, Span, Target, Unit};
/// use rolloff_report::judge;
/// let e = Expectation {
///     metric: Metric { kind: MetricKind::PassbandGain, target: Target::Node(NodeId(1)), options: MetricOptions::default() },
///     comparison: Comparison::GreaterEqual(20.0),
///     unit: Unit::Decibel,
///     text: "passband_gain(out) >= 20 dB".into(),
///     span: Span::default(),
/// };
/// let v = judge(&e, Ok(20.5), Unit::Decibel);
/// assert!(v.pass);
/// assert!((v.margin.unwrap() - 0.5).abs() < 1e-12);
/// ```
pub fn judge(
    expectation: &Expectation,
    measured: Result<f64, MetricError>,
    measured_unit: Unit,
) -> Verdict {
    let unit = expectation.unit;
    let measured = measured.and_then(|v| {
        if measured_unit == unit {
            Ok(v)
        } else {
            Err(MetricError::UnitMismatch {
                metric: metric_name(expectation.metric.kind),
                found: measured_unit,
                expected: unit,
            })
        }
    });
    let circular = matches!(expectation.metric.kind, MetricKind::Phase { .. });
    let margin = measured
        .as_ref()
        .ok()
        .map(|&m| margin_of(expectation.comparison, m, circular));
    let pass = match (expectation.comparison, margin) {
        (_, None) => false,
        (Comparison::Less(_) | Comparison::Greater(_), Some(m)) => m > 0.0,
        (_, Some(m)) => m >= 0.0,
    };
    Verdict {
        text: expectation.text.clone(),
        span: expectation.span,
        measured,
        unit,
        pass,
        bound: bound_text(expectation.comparison, unit),
        margin,
        warnings: Vec::new(),
    }
}

fn margin_of(comparison: Comparison, m: f64, circular: bool) -> f64 {
    match comparison {
        Comparison::Less(x) | Comparison::LessEqual(x) => x - m,
        Comparison::Greater(x) | Comparison::GreaterEqual(x) => m - x,
        Comparison::Equal { value, deviation } => {
            let allowed = match deviation {
                Deviation::Absolute(d) => d.abs(),
                Deviation::Relative(r) => (r * value).abs(),
            };
            let off = if circular {
                circular_difference(m, value).abs()
            } else {
                (m - value).abs()
            };
            allowed - off
        }
        Comparison::Within { low, high } => (m - low).min(high - m),
    }
}

fn bound_text(comparison: Comparison, unit: Unit) -> String {
    let v = |x| fmt_value(x, unit);
    match comparison {
        Comparison::Less(x) => format!("< {}", v(x)),
        Comparison::LessEqual(x) => format!("≤ {}", v(x)),
        Comparison::Greater(x) => format!("> {}", v(x)),
        Comparison::GreaterEqual(x) => format!("≥ {}", v(x)),
        Comparison::Equal { value, deviation } => match deviation {
            Deviation::Absolute(d) => format!("= {} ± {}", v(value), v(d)),
            Deviation::Relative(r) => {
                format!("= {} ± {} %", v(value), crate::format::fmt_num(r * 100.0))
            }
        },
        Comparison::Within { low, high } => format!("within {} .. {}", v(low), v(high)),
    }
}
