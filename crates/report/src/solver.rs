//! Metrics on a circuit: the solver-backed response source, `measure`, `check` (every
//! expectation of the circuit), bias metrics, per-probe summaries and snapshots of real
//! circuits.

use crate::analysis::{Analysis, ReportWarning, uses_passband};
use crate::expect::{judge, metric_unit};
use crate::{
    CompareReport, MetricError, ProbeSummary, ReportError, ResponseSource, Snapshot, Thresholds,
    Verdict, analyze, compare_snapshots, measure_response, snapshot_probe,
};
use num_complex::Complex64;
use rolloff_mna::{Analyzer, DenseLu, LinearSolver, MnaError};
use rolloff_netlist::{Circuit, Metric, MetricKind, MetricOptions, ProbeKind, Target, Unit};
use std::collections::HashMap;

/// A probe of a circuit as a [`ResponseSource`], evaluated by the solver: the transfer
/// from the drive (or the impedance, for `zin`/`zout`), with its exact ω-derivative.
pub struct ProbeSource<'a, S: LinearSolver = DenseLu> {
    analyzer: &'a mut Analyzer<S>,
    probe: ProbeKind,
}

impl<S: LinearSolver> std::fmt::Debug for ProbeSource<'_, S> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ProbeSource")
            .field("probe", &self.probe)
            .finish_non_exhaustive()
    }
}

impl<'a, S: LinearSolver> ProbeSource<'a, S> {
    /// The probe `probe` of the analyzer's circuit.
    pub fn new(analyzer: &'a mut Analyzer<S>, probe: ProbeKind) -> Self {
        Self { analyzer, probe }
    }

    /// The probe evaluated.
    pub fn probe(&self) -> &ProbeKind {
        &self.probe
    }
}

fn solver_error(freq_hz: f64, e: &MnaError) -> ReportError {
    ReportError::Solver {
        freq_hz,
        message: e.to_string(),
    }
}

impl<S: LinearSolver> ResponseSource for ProbeSource<'_, S> {
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

/// The frequencies metrics search over: the circuit's sweep, else the language default
/// (1 Hz to 100 MHz at 50 per decade).
pub fn sweep_frequencies(circuit: &Circuit) -> Vec<f64> {
    circuit.sweep_or_default().frequencies()
}

/// What an AC metric is measured on: the probe kind, its `ref` and a name for messages.
fn resolve(
    circuit: &Circuit,
    target: Target,
) -> Result<(ProbeKind, Option<f64>, String), MetricError> {
    match target {
        Target::Probe(id) => {
            let probe = circuit
                .probes
                .get(id.index())
                .ok_or_else(|| MetricError::BadTarget(format!("no probe with index {}", id.0)))?;
            Ok((probe.kind.clone(), probe.reference, probe.name.clone()))
        }
        Target::Node(n) => {
            let kind = ProbeKind::Node(n);
            let reference = circuit
                .probes
                .iter()
                .find(|p| p.kind == kind)
                .and_then(|p| p.reference);
            let name = circuit
                .nodes
                .get(n.index())
                .cloned()
                .ok_or_else(|| MetricError::BadTarget(format!("no node with index {}", n.0)))?;
            Ok((kind, reference, name))
        }
        Target::Current(p) => {
            let name = part_name(circuit, p)?;
            Ok((ProbeKind::Current(p), None, format!("current {name}")))
        }
        Target::Part(p) => Err(MetricError::BadTarget(format!(
            "`{}` is a part; AC metrics are measured on a node, a probe or `current {0}`",
            part_name(circuit, p)?
        ))),
    }
}

fn part_name(circuit: &Circuit, p: rolloff_netlist::PartId) -> Result<String, MetricError> {
    circuit
        .parts
        .get(p.index())
        .map(|part| part.name.clone())
        .ok_or_else(|| MetricError::BadTarget(format!("no part with index {}", p.0)))
}

/// The unit `measure` gives a metric in: as [`metric_unit`], except `bias` of a current
/// (`bias(current R1)`, or a current probe) which is in A.
pub fn measured_unit(circuit: &Circuit, metric: &Metric) -> Unit {
    let current = match metric.target {
        Target::Current(_) => true,
        Target::Probe(id) => matches!(
            circuit.probes.get(id.index()).map(|p| &p.kind),
            Some(ProbeKind::Current(_))
        ),
        _ => false,
    };
    if metric.kind == MetricKind::Bias && current {
        Unit::Ampere
    } else {
        metric_unit(metric.kind)
    }
}

/// Measures one metric on the analyzer's circuit over `freqs` (usually
/// [`sweep_frequencies`]). The cutoff family uses the metric's `ref`, else the probe's.
/// `bias` comes from the DC solve: a node's voltage, a part's voltage (first node minus
/// second), a difference probe's voltage, or a part's current.
///
/// # Errors
/// A [`MetricError`] whose `Display` is the reason: the metric is not found on this
/// response ("no −3 dB crossing between 10 Hz and 1 MHz"), the solver failed, the target
/// does not fit the metric (`impedance` of a node voltage), or the bias solve failed.
pub fn measure<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    metric: &Metric,
    freqs: &[f64],
) -> Result<f64, MetricError> {
    if metric.kind == MetricKind::Bias {
        return bias(analyzer, metric.target);
    }
    let (mut source, options) = ac_source(analyzer, metric)?;
    measure_response(&mut source, freqs, metric.kind, &options)
}

/// As [`measure`], with the warnings of the passband reference for the cutoff family
/// (see [`crate::Analysis::metric_with_warnings`]).
pub fn measure_with_warnings<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    metric: &Metric,
    freqs: &[f64],
) -> (Result<f64, MetricError>, Vec<ReportWarning>) {
    if metric.kind == MetricKind::Bias || !uses_passband(metric.kind) {
        return (measure(analyzer, metric, freqs), Vec::new());
    }
    let (mut source, options) = match ac_source(analyzer, metric) {
        Ok(found) => found,
        Err(e) => return (Err(e), Vec::new()),
    };
    match Analysis::new(&mut source, freqs) {
        Ok(mut analysis) => analysis.metric_with_warnings(metric.kind, &options),
        Err(e) => (Err(e.into()), Vec::new()),
    }
}

/// The solver source and effective options of an AC metric.
fn ac_source<'a, S: LinearSolver>(
    analyzer: &'a mut Analyzer<S>,
    metric: &Metric,
) -> Result<(ProbeSource<'a, S>, MetricOptions), MetricError> {
    let (probe, probe_ref, name) = resolve(analyzer.circuit(), metric.target)?;
    if matches!(metric.kind, MetricKind::Impedance { .. })
        && !matches!(
            probe,
            ProbeKind::InputImpedance | ProbeKind::OutputImpedance(_)
        )
    {
        return Err(MetricError::NotImpedance { target: name });
    }
    let options = MetricOptions {
        reference: metric.options.reference.or(probe_ref),
        level_db: metric.options.level_db,
    };
    Ok((ProbeSource::new(analyzer, probe), options))
}

/// A bias metric from the DC solve.
///
/// # Errors
/// [`MetricError::Bias`] with the solver's reason (a node reaching `gnd` only through
/// capacitors, named), or [`MetricError::BadTarget`] for a ratio or impedance probe.
pub fn bias<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    target: Target,
) -> Result<f64, MetricError> {
    let report = analyzer
        .bias()
        .map_err(|e| MetricError::Bias(e.to_string()))?;
    let circuit = analyzer.circuit();
    let current = |p: rolloff_netlist::PartId| {
        report.part_current(p).ok_or_else(|| {
            MetricError::BadTarget(format!(
                "the bias solve gives no current for `{}`",
                part_name(circuit, p).unwrap_or_default()
            ))
        })
    };
    match target {
        Target::Node(n) => Ok(report.node_voltage(n)),
        Target::Part(p) => report
            .voltage_across(circuit, p)
            .ok_or_else(|| MetricError::BadTarget(format!("no part with index {}", p.0))),
        Target::Current(p) => current(p),
        Target::Probe(id) => {
            let probe = circuit
                .probes
                .get(id.index())
                .ok_or_else(|| MetricError::BadTarget(format!("no probe with index {}", id.0)))?;
            match probe.kind {
                ProbeKind::Node(n) => Ok(report.node_voltage(n)),
                ProbeKind::Difference { pos, neg } => {
                    Ok(report.node_voltage(pos) - report.node_voltage(neg))
                }
                ProbeKind::Current(p) => current(p),
                _ => Err(MetricError::BadTarget(format!(
                    "bias() needs a node, a part, a difference or a current; `{}` is a ratio or an impedance",
                    probe.name
                ))),
            }
        }
    }
}

/// Evaluates every `expect` of the analyzer's circuit over `freqs`, in source order.
/// A metric that cannot be measured gives a failing verdict carrying the reason.
///
/// Within one call the response of each probe is solved once per frequency: expectations
/// on the same probe reuse the values (and derivatives) already solved, which are the
/// same numbers a fresh solve gives.
pub fn check<S: LinearSolver>(analyzer: &mut Analyzer<S>, freqs: &[f64]) -> Vec<Verdict> {
    let expectations = analyzer.circuit().expectations.clone();
    let mut memo = Vec::new();
    expectations
        .iter()
        .map(|e| {
            let unit = measured_unit(analyzer.circuit(), &e.metric);
            let (measured, warnings) = measure_memoised(analyzer, &e.metric, freqs, &mut memo);
            Verdict {
                warnings,
                ..judge(e, measured, unit)
            }
        })
        .collect()
}

/// Solved values of one probe, by the bits of the frequency.
#[derive(Default)]
struct ProbeMemo {
    values: HashMap<u64, Complex64>,
    derivatives: HashMap<u64, (Complex64, Complex64)>,
}

/// A probe source that answers a frequency it has solved before from the memo.
struct Memoised<'m, 'a, S: LinearSolver> {
    source: ProbeSource<'a, S>,
    memo: &'m mut ProbeMemo,
}

impl<S: LinearSolver> ResponseSource for Memoised<'_, '_, S> {
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError> {
        if let Some(h) = self.memo.values.get(&f_hz.to_bits()) {
            return Ok(*h);
        }
        let h = self.source.eval(f_hz)?;
        self.memo.values.insert(f_hz.to_bits(), h);
        Ok(h)
    }

    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        if let Some(hd) = self.memo.derivatives.get(&f_hz.to_bits()) {
            return Ok(*hd);
        }
        let hd = self.source.eval_with_derivative(f_hz)?;
        self.memo.derivatives.insert(f_hz.to_bits(), hd);
        Ok(hd)
    }

    fn range(&self) -> Option<(f64, f64)> {
        self.source.range()
    }
}

/// As [`measure_with_warnings`], solving through the memo of the metric's probe.
fn measure_memoised<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    metric: &Metric,
    freqs: &[f64],
    memo: &mut Vec<(ProbeKind, ProbeMemo)>,
) -> (Result<f64, MetricError>, Vec<ReportWarning>) {
    if metric.kind == MetricKind::Bias {
        return (bias(analyzer, metric.target), Vec::new());
    }
    let (source, options) = match ac_source(analyzer, metric) {
        Ok(found) => found,
        Err(e) => return (Err(e), Vec::new()),
    };
    let index = if let Some(i) = memo.iter().position(|(p, _)| p == source.probe()) {
        i
    } else {
        memo.push((source.probe().clone(), ProbeMemo::default()));
        memo.len() - 1
    };
    let mut source = Memoised {
        source,
        memo: &mut memo[index].1,
    };
    if !uses_passband(metric.kind) {
        return (
            measure_response(&mut source, freqs, metric.kind, &options),
            Vec::new(),
        );
    }
    match Analysis::new(&mut source, freqs) {
        Ok(mut analysis) => analysis.metric_with_warnings(metric.kind, &options),
        Err(e) => (Err(e.into()), Vec::new()),
    }
}

/// The summary of one declared probe (by index) over `freqs`, with the probe's `ref`.
///
/// # Errors
/// [`ReportError::BadArgument`] for an index out of range, or as [`analyze`].
pub fn analyze_probe<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    probe: rolloff_netlist::ProbeId,
    freqs: &[f64],
) -> Result<ProbeSummary, ReportError> {
    let p = analyzer
        .circuit()
        .probes
        .get(probe.index())
        .cloned()
        .ok_or_else(|| ReportError::BadArgument(format!("no probe with index {}", probe.0)))?;
    let mut source = ProbeSource::new(analyzer, p.kind);
    analyze(&mut source, freqs, p.reference)
}

/// Summaries of every declared probe, by name, for the `report` command.
pub fn analyze_circuit<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    freqs: &[f64],
) -> Vec<(String, Result<ProbeSummary, ReportError>)> {
    let probes = analyzer.circuit().probes.clone();
    probes
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let id = rolloff_netlist::ProbeId(i as u32);
            (p.name.clone(), analyze_probe(analyzer, id, freqs))
        })
        .collect()
}

/// A snapshot of every declared probe of the analyzer's circuit over `freqs`, with the
/// caller's source hash.
pub fn take_snapshot<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    freqs: &[f64],
    source_hash: Option<String>,
) -> Snapshot {
    let mut sorted: Vec<f64> = freqs
        .iter()
        .copied()
        .filter(|f| f.is_finite() && *f > 0.0)
        .collect();
    sorted.sort_by(f64::total_cmp);
    sorted.dedup();
    let circuit = analyzer.circuit().clone();
    let probes = circuit
        .probes
        .iter()
        .map(|p| {
            let mut source = ProbeSource::new(analyzer, p.kind.clone());
            snapshot_probe(&p.name, &mut source, p.reference, &sorted)
        })
        .collect();
    Snapshot {
        format: crate::SNAPSHOT_FORMAT,
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        source_hash,
        title: circuit.title.clone(),
        frequencies_hz: sorted,
        probes,
    }
}

/// Compares the analyzer's circuit with a snapshot, at the snapshot's frequencies.
pub fn compare<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    snapshot: &Snapshot,
    thresholds: &Thresholds,
) -> CompareReport {
    let now = take_snapshot(
        analyzer,
        &snapshot.frequencies_hz,
        snapshot.source_hash.clone(),
    );
    compare_snapshots(snapshot, &now, thresholds)
}
