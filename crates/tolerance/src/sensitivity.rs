//! Sensitivity: the normalised sensitivity `S = (∂M/M)/(∂x/x)` of each metric to each
//! passive part, by a central difference in the logarithm of the part value.
//!
//! The scheme: each part is set to `x·e^{+h}` and `x·e^{−h}` (default `h = 1e-3`) on the
//! same stamped model (values change, the structure and its stamping are reused), every
//! metric is measured at both, and
//! `S = (ln|M₊| − ln|M₋|) / 2h` when `M₊`, `M₋` and the nominal `M₀` share a sign
//! (exact for any power law `M ∝ x^k`, such as `fc = 1/(2πRC)`), else
//! `S = (M₊ − M₋) / (2h·M₀)`. The error is `O(h²)` plus the metric's own resolution
//! divided by `h` (a cutoff refined to 1e-12 gives about 1e-9). An adjoint would
//! differentiate one solve, but the metrics are themselves found by root finding on
//! the response, so the difference scheme on the finished metric is used.

use crate::error::ToleranceError;
use crate::model::{MetricEntry, Model, expectation_metrics, passive_parts};
use crate::sampling::run_trials;
use rolloff_netlist::{Metric, PartId};

/// Options of [`sensitivity`].
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityOptions {
    /// The step `h` in `ln x` (`0 < h ≤ 0.1`).
    pub log_step: f64,
    /// The parts to differentiate with respect to; `None` for every passive part.
    pub parts: Option<Vec<PartId>>,
}

impl Default for SensitivityOptions {
    /// `h = 1e-3`, every passive part.
    fn default() -> Self {
        Self {
            log_step: 1e-3,
            parts: None,
        }
    }
}

/// The result of [`sensitivity`].
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityReport {
    /// Per distinct metric of the expectations.
    pub metrics: Vec<MetricSensitivity>,
}

/// The sensitivities of one metric.
#[derive(Debug, Clone, PartialEq)]
pub struct MetricSensitivity {
    /// The metric.
    pub entry: MetricEntry,
    /// Its nominal value.
    pub nominal: f64,
    /// One entry per part, sorted by decreasing `|normalized|` (parts without a
    /// normalised value last, in circuit order).
    pub parts: Vec<PartSensitivity>,
}

/// The sensitivity of one metric to one part.
#[derive(Debug, Clone, PartialEq)]
pub struct PartSensitivity {
    /// The part.
    pub part: PartId,
    /// Its name.
    pub name: String,
    /// Its nominal value.
    pub value: f64,
    /// `∂M/∂x` in the metric's unit per part unit; `None` if the metric failed at a step.
    pub derivative: Option<f64>,
    /// `(∂M/M)/(∂x/x)`; `None` if the metric failed at a step or is 0 at nominal.
    pub normalized: Option<f64>,
}

/// Computes the sensitivity of every metric of `model`'s expectations to each part.
///
/// # Errors
/// [`ToleranceError::NoMetrics`] without expectations, [`ToleranceError::Nominal`] if a
/// metric fails at the nominal values, [`ToleranceError::InvalidOption`] for a bad
/// step or a part that is not passive, [`ToleranceError::SetValue`] if the model
/// refuses a value.
pub fn sensitivity<M: Model>(
    model: &M,
    options: &SensitivityOptions,
    pool: Option<&rayon::ThreadPool>,
) -> Result<SensitivityReport, ToleranceError> {
    crate::model::require_fitted(model.circuit())?;
    let entries = expectation_metrics(model.circuit());
    if entries.is_empty() {
        return Err(ToleranceError::NoMetrics);
    }
    let parts = selected_parts(model, options.parts.as_deref())?;
    let table = sensitivity_table(model, &entries, &parts, options.log_step, pool)?;
    let metrics = entries
        .into_iter()
        .zip(table)
        .map(|(entry, (nominal, row))| {
            let mut parts: Vec<PartSensitivity> = parts
                .iter()
                .zip(row)
                .map(|((part, name, value), d)| PartSensitivity {
                    part: *part,
                    name: name.clone(),
                    value: *value,
                    derivative: d.map(|d| d.per_log / value),
                    normalized: d.and_then(|d| d.normalized),
                })
                .collect();
            parts.sort_by(|a, b| {
                let key = |s: &PartSensitivity| s.normalized.map(f64::abs);
                match (key(a), key(b)) {
                    (Some(x), Some(y)) => y.total_cmp(&x),
                    (Some(_), None) => std::cmp::Ordering::Less,
                    (None, Some(_)) => std::cmp::Ordering::Greater,
                    (None, None) => std::cmp::Ordering::Equal,
                }
            });
            MetricSensitivity {
                entry,
                nominal,
                parts,
            }
        })
        .collect();
    Ok(SensitivityReport { metrics })
}

fn selected_parts<M: Model>(
    model: &M,
    wanted: Option<&[PartId]>,
) -> Result<Vec<(PartId, String, f64)>, ToleranceError> {
    let all = passive_parts(model.circuit());
    let Some(wanted) = wanted else {
        return Ok(all);
    };
    wanted
        .iter()
        .map(|id| {
            all.iter()
                .find(|(p, _, _)| p == id)
                .cloned()
                .ok_or_else(|| ToleranceError::InvalidOption {
                    option: "parts",
                    reason: format!("part #{} is not a resistor, capacitor or inductor", id.0),
                })
        })
        .collect()
}

/// One metric's derivative with respect to one part, from the difference scheme.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct LogDerivative {
    /// `∂M/∂ln x`.
    pub per_log: f64,
    /// `(∂M/M)/(∂x/x)`, `None` when `M₀ = 0`.
    pub normalized: Option<f64>,
}

type Row = (f64, Vec<Option<LogDerivative>>);

/// For each metric, its nominal value and its derivative with respect to each part.
pub(crate) fn sensitivity_table<M: Model>(
    model: &M,
    entries: &[MetricEntry],
    parts: &[(PartId, String, f64)],
    log_step: f64,
    pool: Option<&rayon::ThreadPool>,
) -> Result<Vec<Row>, ToleranceError> {
    if !(log_step > 0.0 && log_step <= 0.1) {
        return Err(ToleranceError::InvalidOption {
            option: "log_step",
            reason: format!("{log_step} is not in (0, 0.1]"),
        });
    }
    let metrics: Vec<Metric> = entries.iter().map(|e| e.metric).collect();
    let nominal: Vec<f64> = entries
        .iter()
        .zip(model.clone().measure_many(&metrics))
        .map(|(e, measured)| {
            measured.map_err(|reason| ToleranceError::Nominal {
                metric: e.label.clone(),
                reason,
            })
        })
        .collect::<Result<_, _>>()?;
    // Work item 2i steps part i up, 2i + 1 steps it down; each restores the part after.
    let steps = run_trials(
        2 * parts.len(),
        0,
        pool,
        || model.clone(),
        |m, _, i| {
            let (part, name, value) = &parts[i / 2];
            let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
            let stepped = value * (sign * log_step).exp();
            let set = |m: &mut M, v: f64| {
                m.set_part_value(*part, v)
                    .map_err(|reason| ToleranceError::SetValue {
                        part: name.clone(),
                        value: v,
                        reason,
                    })
            };
            set(m, stepped)?;
            let measured: Vec<Option<f64>> = m
                .measure_many(&metrics)
                .into_iter()
                .map(|r| r.ok().filter(|v| v.is_finite()))
                .collect();
            set(m, *value)?;
            Ok::<_, ToleranceError>(measured)
        },
    );
    let steps: Vec<Vec<Option<f64>>> = steps.into_iter().collect::<Result<_, _>>()?;
    Ok(nominal
        .iter()
        .enumerate()
        .map(|(k, &m0)| {
            let row = (0..parts.len())
                .map(|i| {
                    let (up, down) = (steps[2 * i][k]?, steps[2 * i + 1][k]?);
                    Some(log_derivative(m0, up, down, log_step))
                })
                .collect();
            (m0, row)
        })
        .collect())
}

fn log_derivative(m0: f64, up: f64, down: f64, h: f64) -> LogDerivative {
    let per_log = (up - down) / (2.0 * h);
    let same_sign = (m0 > 0.0 && up > 0.0 && down > 0.0) || (m0 < 0.0 && up < 0.0 && down < 0.0);
    let normalized = if same_sign {
        Some((up.abs().ln() - down.abs().ln()) / (2.0 * h))
    } else if m0 != 0.0 {
        Some(per_log / m0)
    } else {
        None
    };
    LogDerivative {
        per_log,
        normalized,
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests {
    use super::*;
    use crate::testing::{FormulaModel, expectation, rc_cutoff};
    use rolloff_netlist::{Circuit, Comparison, Metric, MetricKind, Unit};

    fn rc(formula: crate::testing::Formula) -> FormulaModel {
        let mut circuit = Circuit::builder()
            .vsrc("V1", "in", "gnd", 1.0)
            .resistor("R1", "in", "out", 10e3)
            .capacitor("C1", "out", "gnd", 10e-9)
            .build()
            .unwrap();
        let e = expectation(
            &circuit,
            MetricKind::Cutoff,
            "out",
            Comparison::Greater(0.0),
            Unit::Hertz,
            "cutoff(out)",
        );
        circuit.expectations.push(e);
        FormulaModel::new(circuit, formula)
    }

    #[test]
    fn rc_cutoff_has_unit_negative_sensitivities() {
        // fc = 1/(2πRC): ∂ln fc/∂ln R = ∂ln fc/∂ln C = −1 (analytic).
        let report = sensitivity(&rc(rc_cutoff), &SensitivityOptions::default(), None).unwrap();
        let m = &report.metrics[0];
        assert_eq!(m.parts.len(), 2, "only passives");
        for p in &m.parts {
            assert!((p.normalized.unwrap() + 1.0).abs() < 1e-9, "{p:?}");
            // ∂fc/∂x = −fc/x.
            assert!((p.derivative.unwrap() / (-m.nominal / p.value) - 1.0).abs() < 1e-6);
        }
    }

    #[allow(clippy::unnecessary_wraps)]
    fn power(values: &[f64], _metric: &Metric) -> Result<f64, String> {
        Ok(values[1].powi(2) / values[2].sqrt())
    }

    #[test]
    fn parts_are_sorted_by_magnitude() {
        let options = SensitivityOptions::default();
        let report = sensitivity(&rc(power), &options, None).unwrap();
        let got: Vec<(&str, f64)> = report.metrics[0]
            .parts
            .iter()
            .map(|p| (p.name.as_str(), (p.normalized.unwrap() * 1e6).round() / 1e6))
            .collect();
        assert_eq!(got, [("R1", 2.0), ("C1", -0.5)]);
        let only_c = SensitivityOptions {
            parts: Some(vec![PartId(2)]),
            ..options.clone()
        };
        assert_eq!(
            sensitivity(&rc(power), &only_c, None).unwrap().metrics[0]
                .parts
                .len(),
            1
        );
        let source = SensitivityOptions {
            parts: Some(vec![PartId(0)]),
            ..options
        };
        assert!(matches!(
            sensitivity(&rc(power), &source, None),
            Err(ToleranceError::InvalidOption { .. })
        ));
    }

    #[test]
    fn power_laws_are_exact() {
        // M = 5·x^-2 around x = 3.
        let h: f64 = 1e-3;
        let m = |x: f64| 5.0 * x.powi(-2);
        let d = log_derivative(m(3.0), m(3.0 * h.exp()), m(3.0 * (-h).exp()), h);
        assert!((d.normalized.unwrap() + 2.0).abs() < 1e-9);
        // ∂M/∂ln x = −2·M (to O(h²)).
        assert!((d.per_log + 2.0 * m(3.0)).abs() < 1e-5);
        let zero = log_derivative(0.0, 1.0, -1.0, h);
        assert_eq!(zero.normalized, None);
        let mixed = log_derivative(-1.0, 1.0, -3.0, 0.5);
        assert_eq!(mixed.normalized, Some(-4.0));
    }
}
