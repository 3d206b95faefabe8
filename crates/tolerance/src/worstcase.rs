//! Worst case: the extremes of each metric over the tolerance box.
//!
//! For each metric the sign of its sensitivity to each toleranced part (at nominal)
//! picks the corner of the box that should maximise it (each part at the end of its
//! band in the direction that raises the metric) and the opposite corner for the
//! minimum. This is exact for metrics monotonic in each part over the box. With at
//! most [`WorstCaseOptions::exhaustive_limit`] toleranced parts every corner is also
//! evaluated, which confirms (or corrects) the sign-chosen corners.

use crate::error::ToleranceError;
use crate::model::{MetricEntry, Model, TolerancedPart, expectation_metrics, toleranced_parts};
use crate::sampling::run_trials;
use crate::sensitivity::sensitivity_table;
use rolloff_netlist::Tolerance;

/// Options of [`worst_case`].
#[derive(Debug, Clone, PartialEq)]
pub struct WorstCaseOptions {
    /// The band of passive parts that have no `tol` (`None`: they stay at nominal).
    pub default_tolerance: Option<Tolerance>,
    /// Evaluate all `2^n` corners when there are at most this many toleranced parts
    /// (at most 20).
    pub exhaustive_limit: usize,
    /// The step in `ln x` of the sensitivity that picks the corners.
    pub log_step: f64,
}

impl Default for WorstCaseOptions {
    /// No default tolerance, exhaustive up to 12 parts, `h = 1e-3`.
    fn default() -> Self {
        Self {
            default_tolerance: None,
            exhaustive_limit: 12,
            log_step: 1e-3,
        }
    }
}

/// Which end of its band a part is at.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Corner {
    /// `nominal · (1 + lower)`.
    Low,
    /// `nominal · (1 + upper)`.
    High,
}

/// An extreme value and the corner of the box where it occurs.
#[derive(Debug, Clone, PartialEq)]
pub struct Extreme {
    /// The metric's value there.
    pub value: f64,
    /// One entry per toleranced part, in the order of [`WorstCaseReport::parts`].
    pub corner: Vec<Corner>,
}

/// The result of [`worst_case`].
#[derive(Debug, Clone, PartialEq)]
pub struct WorstCaseReport {
    /// The parts varied.
    pub parts: Vec<TolerancedPart>,
    /// Whether all corners were evaluated.
    pub exhaustive: bool,
    /// Per distinct metric of the expectations.
    pub metrics: Vec<MetricWorstCase>,
}

/// The extremes of one metric.
#[derive(Debug, Clone, PartialEq)]
pub struct MetricWorstCase {
    /// The metric.
    pub entry: MetricEntry,
    /// Its nominal value.
    pub nominal: f64,
    /// The value at the corner the sensitivity signs pick for the minimum (`None` if the
    /// metric failed there).
    pub sign_min: Option<Extreme>,
    /// The same for the maximum.
    pub sign_max: Option<Extreme>,
    /// The smallest value over all corners, when they were evaluated.
    pub corners_min: Option<Extreme>,
    /// The largest value over all corners, when they were evaluated.
    pub corners_max: Option<Extreme>,
    /// Corners where the metric failed (exhaustive run only).
    pub corner_failures: usize,
}

impl MetricWorstCase {
    /// The minimum: over all corners when evaluated, else at the sign-chosen corner.
    pub fn min(&self) -> Option<&Extreme> {
        self.corners_min.as_ref().or(self.sign_min.as_ref())
    }

    /// The maximum: over all corners when evaluated, else at the sign-chosen corner.
    pub fn max(&self) -> Option<&Extreme> {
        self.corners_max.as_ref().or(self.sign_max.as_ref())
    }

    /// Whether the sign-chosen corners gave the exhaustive extremes (to 1e-9 relative);
    /// `None` without an exhaustive run or when a value is missing.
    pub fn signs_confirmed(&self) -> Option<bool> {
        let close = |a: &Option<Extreme>, b: &Option<Extreme>| -> Option<bool> {
            let (a, b) = (a.as_ref()?, b.as_ref()?);
            Some((a.value - b.value).abs() <= 1e-9 * a.value.abs().max(b.value.abs()))
        };
        Some(close(&self.sign_min, &self.corners_min)? && close(&self.sign_max, &self.corners_max)?)
    }
}

/// Hard cap on the exhaustive corner count (2^20 evaluations).
const MAX_EXHAUSTIVE: usize = 20;

/// Finds the extremes of every metric of `model`'s expectations over the tolerance box.
///
/// # Errors
/// [`ToleranceError::NoMetrics`] without expectations, [`ToleranceError::Nominal`] when
/// a metric fails at nominal, [`ToleranceError::InvalidOption`] for a limit above 20,
/// [`ToleranceError::SetValue`] when the model refuses a value.
pub fn worst_case<M: Model>(
    model: &M,
    options: &WorstCaseOptions,
    pool: Option<&rayon::ThreadPool>,
) -> Result<WorstCaseReport, ToleranceError> {
    if options.exhaustive_limit > MAX_EXHAUSTIVE {
        return Err(ToleranceError::InvalidOption {
            option: "exhaustive_limit",
            reason: format!("{} is above {MAX_EXHAUSTIVE}", options.exhaustive_limit),
        });
    }
    if let Some(band) = options.default_tolerance {
        crate::check_band(band, "default_tolerance")?;
    }
    crate::model::require_fitted(model.circuit())?;
    let entries = expectation_metrics(model.circuit());
    if entries.is_empty() {
        return Err(ToleranceError::NoMetrics);
    }
    let parts = toleranced_parts(model.circuit(), options.default_tolerance);
    let as_triples: Vec<_> = parts
        .iter()
        .map(|p| (p.part, p.name.clone(), p.nominal))
        .collect();
    let table = sensitivity_table(model, &entries, &as_triples, options.log_step, pool)?;

    // The sign corners of every metric, evaluated as one batch.
    let sign_corners: Vec<[Vec<Corner>; 2]> = table
        .iter()
        .map(|(_, row)| {
            let up: Vec<Corner> = row
                .iter()
                .map(|d| match d {
                    Some(d) if d.per_log < 0.0 => Corner::Low,
                    _ => Corner::High,
                })
                .collect();
            let down = up.iter().map(|&c| opposite(c)).collect();
            [down, up]
        })
        .collect();
    let batch: Vec<Vec<Corner>> = sign_corners.iter().flatten().cloned().collect();
    let values = evaluate_corners(model, &entries, &parts, &batch, pool)?;

    let exhaustive = parts.len() <= options.exhaustive_limit;
    let all_corners: Option<Vec<Vec<Option<f64>>>> = if exhaustive {
        let corners: Vec<Vec<Corner>> = (0..1usize << parts.len())
            .map(|bits| corner_of(bits, parts.len()))
            .collect();
        Some(evaluate_corners(model, &entries, &parts, &corners, pool)?)
    } else {
        None
    };

    let metrics = entries
        .into_iter()
        .enumerate()
        .map(|(k, entry)| {
            let pick = |j: usize| {
                values[2 * k + j][k].map(|value| Extreme {
                    value,
                    corner: sign_corners[k][j].clone(),
                })
            };
            let (corners_min, corners_max, corner_failures) = match &all_corners {
                Some(all) => extremes(all, k, parts.len()),
                None => (None, None, 0),
            };
            MetricWorstCase {
                entry,
                nominal: table[k].0,
                sign_min: pick(0),
                sign_max: pick(1),
                corners_min,
                corners_max,
                corner_failures,
            }
        })
        .collect();
    Ok(WorstCaseReport {
        parts,
        exhaustive,
        metrics,
    })
}

fn opposite(c: Corner) -> Corner {
    match c {
        Corner::Low => Corner::High,
        Corner::High => Corner::Low,
    }
}

/// Corner number `bits`: bit `i` set puts part `i` high.
fn corner_of(bits: usize, n: usize) -> Vec<Corner> {
    (0..n)
        .map(|i| {
            if bits >> i & 1 == 1 {
                Corner::High
            } else {
                Corner::Low
            }
        })
        .collect()
}

/// Every metric at each corner (`None` where it failed).
fn evaluate_corners<M: Model>(
    model: &M,
    entries: &[MetricEntry],
    parts: &[TolerancedPart],
    corners: &[Vec<Corner>],
    pool: Option<&rayon::ThreadPool>,
) -> Result<Vec<Vec<Option<f64>>>, ToleranceError> {
    let metrics: Vec<rolloff_netlist::Metric> = entries.iter().map(|e| e.metric).collect();
    run_trials(
        corners.len(),
        0,
        pool,
        || model.clone(),
        |m, _, i| {
            for (p, c) in parts.iter().zip(&corners[i]) {
                let value = match c {
                    Corner::Low => p.low(),
                    Corner::High => p.high(),
                };
                m.set_part_value(p.part, value)
                    .map_err(|reason| ToleranceError::SetValue {
                        part: p.name.clone(),
                        value,
                        reason,
                    })?;
            }
            Ok(m.measure_many(&metrics)
                .into_iter()
                .map(|r| r.ok().filter(|v| v.is_finite()))
                .collect())
        },
    )
    .into_iter()
    .collect()
}

/// The smallest and largest value of metric `k` over all corners (first one on ties),
/// and how many corners failed.
fn extremes(
    all: &[Vec<Option<f64>>],
    k: usize,
    n: usize,
) -> (Option<Extreme>, Option<Extreme>, usize) {
    let mut min: Option<(usize, f64)> = None;
    let mut max: Option<(usize, f64)> = None;
    let mut failures = 0;
    for (bits, row) in all.iter().enumerate() {
        let Some(v) = row[k] else {
            failures += 1;
            continue;
        };
        if min.is_none_or(|(_, m)| v < m) {
            min = Some((bits, v));
        }
        if max.is_none_or(|(_, m)| v > m) {
            max = Some((bits, v));
        }
    }
    let extreme = |e: Option<(usize, f64)>| {
        e.map(|(bits, value)| Extreme {
            value,
            corner: corner_of(bits, n),
        })
    };
    (extreme(min), extreme(max), failures)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests;
