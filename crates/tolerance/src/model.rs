//! What the analyses vary and what they measure: the [`Model`] trait (set a part value,
//! measure a metric), the toleranced parts of a circuit and the metrics of its
//! expectations.
//!
//! The analyses are written against [`Model`] so they can run on the solver-backed
//! circuit model and, in tests, on closed-form models with known answers.

use rolloff_netlist::{Circuit, Expectation, Metric, PartId, PartKind, Tolerance, Unit};

/// A circuit whose part values can be changed and whose metrics can be measured.
///
/// Implementations must be deterministic: the same values give the same metrics, bit for
/// bit, whatever was measured before (the parallel runners reuse one clone per worker).
pub trait Model: Clone + Send + Sync {
    /// The circuit (parts, nominal values, tolerances, expectations).
    fn circuit(&self) -> &Circuit;

    /// Sets the value of a passive part (Ω, F or H).
    ///
    /// # Errors
    /// The reason, as text, when the value cannot be set (not a passive part, or a
    /// value that is not finite and positive).
    fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), String>;

    /// Measures one metric with the current values.
    ///
    /// # Errors
    /// The reason, as text, when the metric cannot be found ("no −3 dB crossing …").
    fn measure(&mut self, metric: &Metric) -> Result<f64, String>;

    /// Measures several metrics with the current values, in order. The default calls
    /// [`Model::measure`] for each; a model may share work between metrics on the same
    /// response (one sweep per probe) but must give the same values.
    fn measure_many(&mut self, metrics: &[Metric]) -> Vec<Result<f64, String>> {
        metrics.iter().map(|m| self.measure(m)).collect()
    }
}

/// A part that a tolerance analysis varies.
#[derive(Debug, Clone, PartialEq)]
pub struct TolerancedPart {
    /// The part.
    pub part: PartId,
    /// Its qualified name (`R1`, `S2.C`).
    pub name: String,
    /// Its nominal value (Ω, F or H).
    pub nominal: f64,
    /// The band it is varied over.
    pub band: Tolerance,
    /// Whether the band is the analysis' default tolerance rather than the part's `tol`.
    pub default_band: bool,
}

impl TolerancedPart {
    /// The smallest value of the band.
    pub fn low(&self) -> f64 {
        self.nominal * (1.0 + self.band.lower)
    }

    /// The largest value of the band.
    pub fn high(&self) -> f64 {
        self.nominal * (1.0 + self.band.upper)
    }
}

/// The passive parts with a `tol`, and with `default_tolerance` those without one, in
/// circuit order. Each part of each block instance is its own entry (`S1.R`, `S2.R`).
/// Parts whose band is empty (`lower == upper == 0`) are left out.
pub fn toleranced_parts(
    circuit: &Circuit,
    default_tolerance: Option<Tolerance>,
) -> Vec<TolerancedPart> {
    circuit
        .parts
        .iter()
        .enumerate()
        .filter_map(|(i, part)| {
            let (nominal, tol) = part.kind.passive_value()?;
            let (band, default_band) = match (tol, default_tolerance) {
                (Some(band), _) => (band, false),
                (None, Some(band)) => (band, true),
                (None, None) => return None,
            };
            (band.lower != 0.0 || band.upper != 0.0).then(|| TolerancedPart {
                part: PartId(i as u32),
                name: part.name.clone(),
                nominal,
                band,
                default_band,
            })
        })
        .collect()
}

/// Every passive part (resistor, capacitor, inductor) with its value, in circuit order.
pub fn passive_parts(circuit: &Circuit) -> Vec<(PartId, String, f64)> {
    circuit
        .parts
        .iter()
        .enumerate()
        .filter_map(|(i, part)| {
            let (value, _) = part.kind.passive_value()?;
            Some((PartId(i as u32), part.name.clone(), value))
        })
        .collect()
}

/// The names of the parts whose value is `?` (a [`rolloff_netlist::FitRange`] is set).
pub fn unfitted_parts(circuit: &Circuit) -> Vec<String> {
    circuit
        .parts
        .iter()
        .filter(|p| {
            matches!(
                p.kind,
                PartKind::Resistor { fit: Some(_), .. }
                    | PartKind::Capacitor { fit: Some(_), .. }
                    | PartKind::Inductor { fit: Some(_), .. }
            )
        })
        .map(|p| p.name.clone())
        .collect()
}

/// Refuses a circuit with `?` parts (their value is only a start guess).
pub(crate) fn require_fitted(circuit: &Circuit) -> Result<(), crate::ToleranceError> {
    let open = unfitted_parts(circuit);
    if open.is_empty() {
        Ok(())
    } else {
        Err(crate::ToleranceError::UnfittedParts(open))
    }
}

/// A copy of `circuit` with a passive part set to `value` and its `?` cleared, e.g. to
/// run a tolerance analysis on a fitted (or rounded) design.
///
/// # Errors
/// [`crate::ToleranceError::InvalidOption`] when the part is not a resistor, capacitor
/// or inductor, or the value is not finite and positive.
pub fn with_part_value(
    circuit: &Circuit,
    part: PartId,
    value: f64,
) -> Result<Circuit, crate::ToleranceError> {
    let bad = |reason: String| crate::ToleranceError::InvalidOption {
        option: "part value",
        reason,
    };
    if !(value.is_finite() && value > 0.0) {
        return Err(bad(format!("{value:e} is not finite and positive")));
    }
    let mut out = circuit.clone();
    let p = out
        .parts
        .get_mut(part.index())
        .ok_or_else(|| bad(format!("part #{} does not exist", part.0)))?;
    match &mut p.kind {
        PartKind::Resistor { value: v, fit, .. }
        | PartKind::Capacitor { value: v, fit, .. }
        | PartKind::Inductor { value: v, fit, .. } => {
            *v = value;
            *fit = None;
            Ok(out)
        }
        _ => Err(bad(format!(
            "`{}` is not a resistor, capacitor or inductor",
            p.name
        ))),
    }
}

/// How a part's value combines when two parts replace it (for two-part fits).
pub(crate) fn sum_is_series(kind: &PartKind) -> bool {
    !matches!(kind, PartKind::Capacitor { .. })
}

/// One distinct metric of the circuit's expectations.
#[derive(Debug, Clone, PartialEq)]
pub struct MetricEntry {
    /// The metric.
    pub metric: Metric,
    /// A label: the text of the first expectation that measures it, up to its comparison
    /// (`cutoff(out)`).
    pub label: String,
    /// The unit the metric's values are in.
    pub unit: Unit,
    /// Indices into `Circuit::expectations` of the expectations measuring it.
    pub expectations: Vec<usize>,
}

/// The distinct metrics of `circuit`'s expectations, in order of first appearance.
pub fn expectation_metrics(circuit: &Circuit) -> Vec<MetricEntry> {
    let mut out: Vec<MetricEntry> = Vec::new();
    for (i, e) in circuit.expectations.iter().enumerate() {
        if let Some(entry) = out.iter_mut().find(|m| m.metric == e.metric) {
            entry.expectations.push(i);
        } else {
            out.push(MetricEntry {
                metric: e.metric,
                label: metric_label(&e.text),
                unit: e.unit,
                expectations: vec![i],
            });
        }
    }
    out
}

/// The metric part of an expectation's text: everything up to the closing parenthesis
/// of the metric call (`cutoff(out, level -6 dB) = 2 kHz` gives `cutoff(out, level -6 dB)`).
fn metric_label(text: &str) -> String {
    let mut depth = 0usize;
    for (i, ch) in text.char_indices() {
        match ch {
            '(' => depth += 1,
            ')' => {
                depth = depth.saturating_sub(1);
                if depth == 0 {
                    return text[..=i].trim().to_string();
                }
            }
            _ => {}
        }
    }
    text.trim().to_string()
}

/// Whether `measured` satisfies the expectation, as `rolloff_report::judge` decides
/// (with the unit `rolloff_report::measured_unit` gives the metric, as `check` does).
pub fn expectation_holds(circuit: &Circuit, expectation: &Expectation, measured: f64) -> bool {
    let unit = rolloff_report::measured_unit(circuit, &expectation.metric);
    measured.is_finite() && rolloff_report::judge(expectation, Ok(measured), unit).pass
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests {
    use super::*;
    use rolloff_netlist::{Comparison, Deviation, MetricKind, MetricOptions, Span, Target};

    #[test]
    fn labels_stop_at_the_metric_call() {
        assert_eq!(
            metric_label("cutoff(out) within 14 .. 18 Hz"),
            "cutoff(out)"
        );
        assert_eq!(
            metric_label("cutoff(out, level -6 dB) = 2.5 kHz ± 2 %"),
            "cutoff(out, level -6 dB)"
        );
        assert_eq!(metric_label("odd"), "odd");
    }

    #[test]
    fn expectations_are_judged_by_report() {
        let e = |comparison| Expectation {
            metric: Metric {
                kind: MetricKind::Phase { freq: 1.0 },
                target: Target::Node(rolloff_netlist::NodeId(1)),
                options: MetricOptions::default(),
            },
            comparison,
            unit: Unit::Degree,
            text: String::new(),
            span: Span::default(),
        };
        let near_180 = e(Comparison::Equal {
            value: 179.0,
            deviation: Deviation::Absolute(3.0),
        });
        // Phases compare on the circle (language definition).
        assert!(expectation_holds(&Circuit::default(), &near_180, -179.0));
        assert!(!expectation_holds(&Circuit::default(), &near_180, 170.0));
        assert!(!expectation_holds(
            &Circuit::default(),
            &e(Comparison::Less(1.0)),
            f64::NAN
        ));
        assert!(expectation_holds(
            &Circuit::default(),
            &e(Comparison::Within {
                low: 1.0,
                high: 2.0
            }),
            2.0
        ));
    }
}
