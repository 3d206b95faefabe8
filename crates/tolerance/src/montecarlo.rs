//! Monte Carlo: every toleranced part drawn on its own in each trial, every metric of the
//! circuit's expectations measured, and per-metric statistics, histograms and yields.

use crate::error::ToleranceError;
use crate::model::{
    MetricEntry, Model, TolerancedPart, expectation_holds, expectation_metrics, toleranced_parts,
};
use crate::sampling::{
    Distribution, Histogram, RNG_NAME, Summary, histogram, run_trials, sample_factor, summarize,
};
use rolloff_netlist::{Metric, Tolerance};

/// The largest number of runs accepted (every trial's values are kept).
pub const MAX_RUNS: usize = 10_000_000;

/// The largest number of histogram bins accepted.
pub const MAX_BINS: usize = 100_000;

/// Options of [`monte_carlo`].
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarloOptions {
    /// Number of trials (1 ..= [`MAX_RUNS`]).
    pub runs: usize,
    /// The seed; with the same seed and circuit the results are bit-identical whatever
    /// the number of threads.
    pub seed: u64,
    /// How values are drawn within a band.
    pub distribution: Distribution,
    /// The band of passive parts that have no `tol` (`None`: they stay at nominal).
    pub default_tolerance: Option<Tolerance>,
    /// Bins of each metric's histogram (1 ..= [`MAX_BINS`]).
    pub histogram_bins: usize,
}

impl Default for MonteCarloOptions {
    /// 1000 runs, seed 1, uniform, no default tolerance, 30 histogram bins.
    fn default() -> Self {
        Self {
            runs: 1000,
            seed: 1,
            distribution: Distribution::Uniform,
            default_tolerance: None,
            histogram_bins: 30,
        }
    }
}

/// The result of [`monte_carlo`].
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarloReport {
    /// Number of trials.
    pub runs: usize,
    /// The seed used.
    pub seed: u64,
    /// The random generator and how streams are assigned ([`RNG_NAME`]).
    pub rng: &'static str,
    /// The distribution used.
    pub distribution: Distribution,
    /// The parts varied, in circuit order.
    pub parts: Vec<TolerancedPart>,
    /// Per distinct metric of the expectations.
    pub metrics: Vec<MetricStats>,
    /// Per expectation, in circuit order.
    pub expectations: Vec<ExpectationYield>,
    /// Trials in which every expectation held, over `runs`.
    pub overall_yield: f64,
}

/// The spread of one metric over the trials.
#[derive(Debug, Clone, PartialEq)]
pub struct MetricStats {
    /// The metric, its label, unit and expectations.
    pub entry: MetricEntry,
    /// The value at the nominal part values (`Err` with the reason if it failed there).
    pub nominal: Result<f64, String>,
    /// Statistics over the trials where the metric was found; `None` if it never was.
    pub summary: Option<Summary>,
    /// Histogram over the trials where it was found.
    pub histogram: Option<Histogram>,
    /// Trials where it could not be measured.
    pub failures: usize,
    /// The reason of the first such trial (in trial order).
    pub first_failure: Option<String>,
    /// The value in each trial, in trial order (`None` where it failed).
    pub samples: Vec<Option<f64>>,
}

/// How often one expectation held.
#[derive(Debug, Clone, PartialEq)]
pub struct ExpectationYield {
    /// Index into `Circuit::expectations`.
    pub expectation: usize,
    /// The expectation as written.
    pub text: String,
    /// Index into [`MonteCarloReport::metrics`].
    pub metric: usize,
    /// Trials in which it held (a trial where the metric failed does not count).
    pub passed: usize,
    /// `passed / runs`.
    pub yield_fraction: f64,
}

/// Runs a Monte Carlo analysis of `model`'s expectations.
///
/// In each trial every part of [`toleranced_parts`] is set to `nominal · factor` with its
/// own factor from [`sample_factor`] (drawn in circuit order from the trial's stream),
/// then every metric is measured. Each worker thread gets its own clone of `model`.
/// With `pool` the trials run in that rayon pool, else in the current rayon context.
///
/// # Errors
/// [`ToleranceError::NoMetrics`] without expectations,
/// [`ToleranceError::InvalidOption`] for zero runs or bins, and
/// [`ToleranceError::SetValue`] when the model refuses a value.
pub fn monte_carlo<M: Model>(
    model: &M,
    options: &MonteCarloOptions,
    pool: Option<&rayon::ThreadPool>,
) -> Result<MonteCarloReport, ToleranceError> {
    validate(options)?;
    crate::model::require_fitted(model.circuit())?;
    let circuit = model.circuit();
    let entries = expectation_metrics(circuit);
    if entries.is_empty() {
        return Err(ToleranceError::NoMetrics);
    }
    let parts = toleranced_parts(circuit, options.default_tolerance);
    let metrics: Vec<Metric> = entries.iter().map(|e| e.metric).collect();
    let nominal = model.clone().measure_many(&metrics);

    let trials = run_trials(
        options.runs,
        options.seed,
        pool,
        || model.clone(),
        |m, rng, _| {
            for p in &parts {
                let value = p.nominal * sample_factor(p.band, options.distribution, rng);
                m.set_part_value(p.part, value)
                    .map_err(|reason| ToleranceError::SetValue {
                        part: p.name.clone(),
                        value,
                        reason,
                    })?;
            }
            Ok(m.measure_many(&metrics))
        },
    );
    let trials: Vec<Vec<Result<f64, String>>> = trials.into_iter().collect::<Result<_, _>>()?;

    let metrics: Vec<MetricStats> = entries
        .into_iter()
        .zip(nominal)
        .enumerate()
        .map(|(k, (entry, nominal))| metric_stats(entry, nominal, &trials, k, options))
        .collect();
    let expectations = yields(model, &metrics, &trials, options.runs);
    let all_pass = (0..options.runs)
        .filter(|&t| {
            expectations.iter().all(|y| {
                let e = &circuit.expectations[y.expectation];
                trials[t][y.metric]
                    .as_ref()
                    .is_ok_and(|&v| expectation_holds(circuit, e, v))
            })
        })
        .count();
    Ok(MonteCarloReport {
        runs: options.runs,
        seed: options.seed,
        rng: RNG_NAME,
        distribution: options.distribution,
        parts,
        metrics,
        expectations,
        overall_yield: all_pass as f64 / options.runs as f64,
    })
}

fn validate(options: &MonteCarloOptions) -> Result<(), ToleranceError> {
    if !(1..=MAX_RUNS).contains(&options.runs) {
        return Err(ToleranceError::InvalidOption {
            option: "runs",
            reason: format!("{} is not between 1 and {MAX_RUNS}", options.runs),
        });
    }
    if !(1..=MAX_BINS).contains(&options.histogram_bins) {
        return Err(ToleranceError::InvalidOption {
            option: "histogram_bins",
            reason: format!("{} is not between 1 and {MAX_BINS}", options.histogram_bins),
        });
    }
    if let Some(band) = options.default_tolerance {
        crate::check_band(band, "default_tolerance")?;
    }
    Ok(())
}

fn metric_stats(
    entry: MetricEntry,
    nominal: Result<f64, String>,
    trials: &[Vec<Result<f64, String>>],
    k: usize,
    options: &MonteCarloOptions,
) -> MetricStats {
    let samples: Vec<Option<f64>> = trials
        .iter()
        .map(|t| t[k].as_ref().ok().copied().filter(|v| v.is_finite()))
        .collect();
    let found: Vec<f64> = samples.iter().flatten().copied().collect();
    let first_failure = trials.iter().find_map(|t| match &t[k] {
        Err(reason) => Some(reason.clone()),
        Ok(v) if !v.is_finite() => Some("the metric was not a finite number".to_string()),
        Ok(_) => None,
    });
    MetricStats {
        entry,
        nominal,
        summary: summarize(&found),
        histogram: histogram(&found, options.histogram_bins),
        failures: samples.len() - found.len(),
        first_failure,
        samples,
    }
}

fn yields<M: Model>(
    model: &M,
    metrics: &[MetricStats],
    trials: &[Vec<Result<f64, String>>],
    runs: usize,
) -> Vec<ExpectationYield> {
    let circuit = model.circuit();
    let mut out = metrics
        .iter()
        .enumerate()
        .flat_map(|(k, m)| m.entry.expectations.iter().map(move |&i| (k, i)))
        .map(|(k, i)| {
            let e = &circuit.expectations[i];
            let passed = trials
                .iter()
                .filter(|t| {
                    t[k].as_ref()
                        .is_ok_and(|&v| expectation_holds(circuit, e, v))
                })
                .count();
            ExpectationYield {
                expectation: i,
                text: e.text.clone(),
                metric: k,
                passed,
                yield_fraction: passed as f64 / runs as f64,
            }
        })
        .collect::<Vec<_>>();
    out.sort_by_key(|y| y.expectation);
    out
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests;
