//! The per-probe summary the `report` command prints, and single metrics on any source.

use crate::analysis::{
    Analysis, Crossing, Extremum, Passband, Reference, ReportWarning, Shape, StopbandSlope,
};
use crate::{MetricError, ReportError, ResponseSource};
use rolloff_netlist::{MetricKind, MetricOptions};

/// Everything the report says about one probe's response.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeSummary {
    /// The shape (rule in [`Shape`]).
    pub shape: Shape,
    /// The passband reference.
    pub reference: Reference,
    /// The cutoff level relative to the reference (−3.0103 dB).
    pub level_db: f64,
    /// The −3 dB crossings, ascending.
    pub cutoffs: Vec<Crossing>,
    /// Phase at each cutoff in degrees (unwrapped from the lowest frequency).
    pub phase_at_cutoffs_deg: Vec<Option<f64>>,
    /// Bandwidth in Hz (band-pass, band-stop: between the crossings; low-pass: the cutoff).
    pub bandwidth_hz: Option<f64>,
    /// Centre of a band-pass (its peak) in Hz.
    pub resonance_hz: Option<f64>,
    /// `resonance / bandwidth` of a band-pass.
    pub q: Option<f64>,
    /// The largest gain.
    pub peak: Extremum,
    /// How far the peak rises above the flat region, in dB.
    pub peaking_db: Option<f64>,
    /// Passband ripple in dB.
    pub ripple_db: Option<f64>,
    /// The deepest notch (frequency and gain), when there is one.
    pub notch: Option<Extremum>,
    /// Depth of the notch below the passband in dB (`None` for an exact zero).
    pub notch_depth_db: Option<f64>,
    /// Stopband slopes and roll-off order on each stopband side.
    pub stopband: Vec<StopbandSlope>,
    /// Group delay at the reference frequency in s (when the source gives a derivative).
    pub group_delay_s: Option<f64>,
    /// Warnings, including where the report looked beyond the sweep.
    pub warnings: Vec<ReportWarning>,
}

impl ProbeSummary {
    /// The summary's values as named metrics (the language's names where one exists):
    /// `passband_gain`, `cutoff` or `cutoff_low`/`cutoff_high`, `bandwidth`,
    /// `resonance`, `q`, `peak_gain`, `peaking`, `ripple`, `notch_freq`, `notch_depth`,
    /// `stopband_slope_low`/`_high`, `order_low`/`_high`, `group_delay`. Units: Hz, dB,
    /// dB/dec, s, or none.
    pub fn named_values(&self) -> Vec<(String, rolloff_netlist::Unit, f64)> {
        use rolloff_netlist::Unit;
        let mut out = vec![
            (
                "passband_gain".to_string(),
                Unit::Decibel,
                self.reference.gain_db,
            ),
            ("peak_gain".to_string(), Unit::Decibel, self.peak.gain_db),
        ];
        match self.cutoffs.as_slice() {
            [one] => out.push(("cutoff".into(), Unit::Hertz, one.freq_hz)),
            [] => {}
            many => {
                out.push(("cutoff_low".into(), Unit::Hertz, many[0].freq_hz));
                out.push((
                    "cutoff_high".into(),
                    Unit::Hertz,
                    many[many.len() - 1].freq_hz,
                ));
            }
        }
        let mut push = |name: &str, unit, v: Option<f64>| {
            if let Some(v) = v {
                out.push((name.to_string(), unit, v));
            }
        };
        push("bandwidth", Unit::Hertz, self.bandwidth_hz);
        push("resonance", Unit::Hertz, self.resonance_hz);
        push("q", Unit::Dimensionless, self.q);
        push("peaking", Unit::Decibel, self.peaking_db);
        push("ripple", Unit::Decibel, self.ripple_db);
        push("notch_freq", Unit::Hertz, self.notch.map(|n| n.freq_hz));
        push("notch_depth", Unit::Decibel, self.notch_depth_db);
        for s in &self.stopband {
            let side = match s.side {
                crate::Side::Low => "low",
                crate::Side::High => "high",
            };
            push(
                &format!("stopband_slope_{side}"),
                Unit::DecibelPerDecade,
                s.near.map(|n| n.db_per_decade),
            );
            push(
                &format!("order_{side}"),
                Unit::Dimensionless,
                s.order.map(f64::from),
            );
        }
        push("group_delay", Unit::Second, self.group_delay_s);
        out
    }
}

/// Summarises a response over `freqs`: shape, passband gain and its frequency, cutoffs and
/// the phase there, bandwidth, resonance and Q, peak, peaking, ripple, notch, stopband
/// slopes and order, group delay at the reference, and warnings. `reference` is the
/// probe's `ref` frequency, if any.
///
/// # Errors
/// A [`ReportError`] when the source fails at a sweep frequency, the sweep has fewer than
/// two positive frequencies, or `reference` is not a positive frequency.
pub fn analyze(
    source: &mut dyn ResponseSource,
    freqs: &[f64],
    reference: Option<f64>,
) -> Result<ProbeSummary, ReportError> {
    let mut analysis = Analysis::new(source, freqs)?;
    let options = MetricOptions {
        reference,
        level_db: None,
    };
    let passband = analysis.passband(&options).map_err(to_report_error)?;
    summarise(&mut analysis, &passband).map_err(to_report_error)
}

fn to_report_error(e: MetricError) -> ReportError {
    match e {
        MetricError::Source(e) => e,
        other => ReportError::BadArgument(other.to_string()),
    }
}

/// Keeps a metric's value, or drops it when it does not exist for this response; a
/// source failure is passed on.
fn optional(result: Result<f64, MetricError>) -> Result<Option<f64>, MetricError> {
    match result {
        Ok(v) => Ok(Some(v)),
        Err(MetricError::Source(e)) if e != ReportError::NoDerivative => {
            Err(MetricError::Source(e))
        }
        Err(_) => Ok(None),
    }
}

fn summarise(
    analysis: &mut Analysis<'_>,
    passband: &Passband,
) -> Result<ProbeSummary, MetricError> {
    let mut phase_at_cutoffs_deg = Vec::new();
    for c in &passband.crossings {
        phase_at_cutoffs_deg.push(optional(analysis.phase(c.freq_hz))?);
    }
    let band = |analysis: &mut Analysis<'_>, kind| optional(analysis.band_metric(kind, passband));
    let bandwidth_hz = band(analysis, MetricKind::Bandwidth)?;
    let resonance_hz = band(analysis, MetricKind::Resonance)?;
    let q = band(analysis, MetricKind::Q)?;
    let peaking_db = band(analysis, MetricKind::Peaking)?;
    let ripple_db = Some(analysis.ripple(passband)?);
    let notch = match analysis.notch(passband) {
        Ok(n) => Some(n),
        Err(MetricError::Source(e)) => return Err(MetricError::Source(e)),
        Err(_) => None,
    };
    let notch_depth_db = band(analysis, MetricKind::NotchDepth)?;
    let stopband = analysis.stopband_slopes(passband)?;
    let group_delay_s = optional(analysis.group_delay(passband.reference.freq_hz))?;
    let mut warnings = passband.warnings.clone();
    // The far decade lies beyond most sweeps by design (the asymptote is read far into
    // the stopband) and says so in its `Slope`; only a stopband slope proper that leaves
    // the sweep is worth a warning.
    for s in &stopband {
        if let Some(slope) = s.near
            && slope.beyond_sweep
        {
            warnings.push(ReportWarning::SlopeBeyondSweep {
                from_hz: slope.from_hz,
                to_hz: slope.to_hz,
            });
        }
    }
    Ok(ProbeSummary {
        shape: passband.shape,
        reference: passband.reference,
        level_db: passband.level_db,
        cutoffs: passband.crossings.clone(),
        phase_at_cutoffs_deg,
        bandwidth_hz,
        resonance_hz,
        q,
        peak: passband.peak,
        peaking_db,
        ripple_db,
        notch,
        notch_depth_db,
        stopband,
        group_delay_s,
        warnings,
    })
}

/// One metric of a response over `freqs` (every kind but `bias`, which needs the circuit;
/// `impedance` is the magnitude `|H(f)|`). `options.reference` is the effective `ref`
/// (the metric's own, else the probe's).
///
/// # Errors
/// A [`MetricError`] whose `Display` is the reason the metric cannot be found.
pub fn measure_response(
    source: &mut dyn ResponseSource,
    freqs: &[f64],
    kind: MetricKind,
    options: &MetricOptions,
) -> Result<f64, MetricError> {
    // Spot metrics that need no sweep are evaluated at their own frequencies only (the
    // phase needs the sweep to be unwrapped along).
    let spot = match kind {
        MetricKind::Gain { freq }
        | MetricKind::GroupDelay { freq }
        | MetricKind::Impedance { freq } => Some(vec![freq]),
        MetricKind::Slope { f1, f2 } => Some(vec![f1, f2]),
        _ => None,
    };
    let points = match spot {
        Some(points) if points.iter().all(|f| f.is_finite() && *f > 0.0) => points,
        _ => freqs.to_vec(),
    };
    let mut analysis = Analysis::new(source, &points)?;
    analysis.metric(kind, options)
}
