//! The solver-backed [`Model`]: an `rolloff_mna::Analyzer` stamped once, whose part
//! values are changed in place, with metrics measured by `rolloff-report` over the
//! circuit's sweep.

use crate::model::Model;
use num_complex::Complex64;
use rolloff_mna::{Analyzer, MnaError};
use rolloff_netlist::{Circuit, Metric, MetricKind, MetricOptions, PartId, ProbeKind, Target};
use rolloff_report::{Analysis, MetricError, ReportError, ResponseSource, measure_response};
use std::sync::Arc;

/// A circuit model backed by the MNA solver.
///
/// Cloning copies the stamped system and the solver's buffers (one clone per worker
/// thread in the parallel analyses); the structure is never re-stamped.
///
/// ```
/// use rolloff_netlist::{compile, CompileOptions};
/// use rolloff_tolerance::{circuit_model::CircuitModel, Model};
/// let text = "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 10k\ncapacitor C1 (out, gnd) 10 nF\n\
///             expect cutoff(out) within 1 .. 2 kHz\n";
/// let circuit = compile(text, &CompileOptions::default()).circuit.unwrap();
/// let mut model = CircuitModel::new(&circuit).unwrap();
/// let metric = circuit.expectations[0].metric;
/// let fc = model.measure(&metric).unwrap();
/// assert!((fc * 2.0 * std::f64::consts::PI * 10e3 * 10e-9 - 1.0).abs() < 1e-6);
/// ```
#[derive(Debug, Clone)]
pub struct CircuitModel {
    nominal: Arc<Circuit>,
    analyzer: Analyzer,
    freqs: Arc<[f64]>,
}

impl CircuitModel {
    /// Stamps `circuit`; metrics are measured over its sweep (or the default sweep).
    ///
    /// # Errors
    /// The solver's structural errors ([`MnaError`]), which name the node or parts.
    pub fn new(circuit: &Circuit) -> Result<Self, MnaError> {
        Self::with_frequencies(circuit, circuit.sweep_or_default().frequencies())
    }

    /// As [`CircuitModel::new`], measuring over `freqs` instead of the circuit's sweep.
    ///
    /// # Errors
    /// As [`CircuitModel::new`].
    pub fn with_frequencies(circuit: &Circuit, freqs: Vec<f64>) -> Result<Self, MnaError> {
        Ok(Self {
            nominal: Arc::new(circuit.clone()),
            analyzer: Analyzer::new(circuit)?,
            freqs: freqs.into(),
        })
    }

    /// The frequencies metrics are measured over.
    pub fn frequencies(&self) -> &[f64] {
        &self.freqs
    }

    /// The analyzer, with whatever values were last set.
    pub fn analyzer(&self) -> &Analyzer {
        &self.analyzer
    }
}

impl Model for CircuitModel {
    /// The circuit as given (nominal values), whatever values were set since.
    fn circuit(&self) -> &Circuit {
        &self.nominal
    }

    fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), String> {
        self.analyzer
            .set_part_value(part, value)
            .map_err(|e| e.to_string())
    }

    fn measure(&mut self, metric: &Metric) -> Result<f64, String> {
        measure_metric(&mut self.analyzer, &self.nominal, metric, &self.freqs)
            .map_err(|e| e.to_string())
    }

    /// Sweeps each distinct response once: metrics on the same probe share one
    /// `rolloff_report::Analysis`, and `bias` metrics one DC solve.
    fn measure_many(&mut self, metrics: &[Metric]) -> Vec<Result<f64, String>> {
        let mut out: Vec<Option<Result<f64, String>>> = vec![None; metrics.len()];
        let mut bias_report: Option<Result<rolloff_mna::BiasReport, MnaError>> = None;
        for i in 0..metrics.len() {
            if out[i].is_some() {
                continue;
            }
            if metrics[i].kind == MetricKind::Bias {
                let report = bias_report.get_or_insert_with(|| self.analyzer.bias());
                out[i] = Some(match report {
                    Ok(r) => {
                        bias_value(r, &self.nominal, metrics[i].target).map_err(|e| e.to_string())
                    }
                    Err(e) => Err(e.to_string()),
                });
                continue;
            }
            let probe = match response_of(&self.nominal, &metrics[i]) {
                Ok(p) => p,
                Err(e) => {
                    out[i] = Some(Err(e.to_string()));
                    continue;
                }
            };
            // Every later metric on the same probe is measured on this analysis.
            let group: Vec<usize> = (i..metrics.len())
                .filter(|&j| {
                    out[j].is_none()
                        && metrics[j].kind != MetricKind::Bias
                        && response_of(&self.nominal, &metrics[j]).ok().as_ref() == Some(&probe)
                })
                .collect();
            let mut source = SolverSource {
                analyzer: &mut self.analyzer,
                probe: probe.0.clone(),
            };
            match Analysis::new(&mut source, &self.freqs) {
                Ok(mut analysis) => {
                    for j in group {
                        let options = options_of(&metrics[j], probe.1);
                        out[j] = Some(
                            analysis
                                .metric(metrics[j].kind, &options)
                                .map_err(|e| e.to_string()),
                        );
                    }
                }
                Err(e) => {
                    for j in group {
                        out[j] = Some(Err(MetricError::from(e.clone()).to_string()));
                    }
                }
            }
        }
        out.into_iter()
            .map(|r| r.unwrap_or_else(|| Err("not measured".to_string())))
            .collect()
    }
}

/// Why a metric could not be measured on the solver.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
enum Failure {
    #[error(transparent)]
    Metric(#[from] MetricError),
    #[error(transparent)]
    Solver(#[from] MnaError),
    #[error("{0}")]
    Target(String),
}

// FIXME: rolloff-report is to provide `measure(analyzer, metric, freqs)` (and a
// solver-backed `ProbeSource`); this adapter does the same through its public
// `measure_response` until then, and should be replaced by that call.
fn measure_metric(
    analyzer: &mut Analyzer,
    circuit: &Circuit,
    metric: &Metric,
    freqs: &[f64],
) -> Result<f64, Failure> {
    if metric.kind == MetricKind::Bias {
        return bias(analyzer, circuit, metric.target);
    }
    let (probe, probe_reference) = response_of(circuit, metric)?;
    let options = options_of(metric, probe_reference);
    let mut source = SolverSource { analyzer, probe };
    Ok(measure_response(&mut source, freqs, metric.kind, &options)?)
}

/// The probe a (non-bias) metric reads, and the probe's own `ref` frequency.
fn response_of(circuit: &Circuit, metric: &Metric) -> Result<(ProbeKind, Option<f64>), Failure> {
    match metric.target {
        Target::Probe(id) => {
            let p = circuit
                .probes
                .get(id.index())
                .ok_or_else(|| Failure::Target(format!("probe #{} does not exist", id.0)))?;
            Ok((p.kind.clone(), p.reference))
        }
        Target::Node(n) => Ok((ProbeKind::Node(n), None)),
        Target::Current(p) => Ok((ProbeKind::Current(p), None)),
        Target::Part(p) => Err(Failure::Target(format!(
            "a part (`{}`) is a target for bias only",
            circuit
                .parts
                .get(p.index())
                .map_or("?", |p| p.name.as_str())
        ))),
    }
}

/// The metric's options, with the probe's `ref` when the metric gives none.
fn options_of(metric: &Metric, probe_reference: Option<f64>) -> MetricOptions {
    MetricOptions {
        reference: metric.options.reference.or(probe_reference),
        ..metric.options
    }
}

fn bias(analyzer: &mut Analyzer, circuit: &Circuit, target: Target) -> Result<f64, Failure> {
    let report = analyzer.bias()?;
    bias_value(&report, circuit, target)
}

fn bias_value(
    report: &rolloff_mna::BiasReport,
    circuit: &Circuit,
    target: Target,
) -> Result<f64, Failure> {
    let missing = || Failure::Target("no DC value for this target".to_string());
    match target {
        Target::Node(n) => Ok(report.node_voltage(n)),
        Target::Part(p) => report.voltage_across(circuit, p).ok_or_else(missing),
        Target::Current(p) => report.part_current(p).ok_or_else(missing),
        Target::Probe(id) => match circuit.probes.get(id.index()).map(|p| &p.kind) {
            Some(ProbeKind::Node(n)) => Ok(report.node_voltage(*n)),
            Some(ProbeKind::Current(p)) => report.part_current(*p).ok_or_else(missing),
            _ => Err(missing()),
        },
    }
}

/// One probe of the analyzer as a response source.
struct SolverSource<'a> {
    analyzer: &'a mut Analyzer,
    probe: ProbeKind,
}

impl ResponseSource for SolverSource<'_> {
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError> {
        self.analyzer
            .transfer(&self.probe, f_hz)
            .map_err(|e| solver_error(f_hz, &e))
    }

    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        self.analyzer
            .transfer_with_derivative(&self.probe, f_hz)
            .map_err(|e| solver_error(f_hz, &e))
    }
}

fn solver_error(freq_hz: f64, e: &MnaError) -> ReportError {
    ReportError::Solver {
        freq_hz,
        message: e.to_string(),
    }
}
