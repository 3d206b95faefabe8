//! Regression snapshots: a circuit's response and metrics as JSON, and the comparison of
//! a response against one with tolerances in dB, degrees and relative frequency.
//!
//! A snapshot stores, per probe, the gain in dB and the phase in degrees (unwrapped from
//! the lowest frequency) at every sweep frequency, and the summary's named values
//! ([`crate::ProbeSummary::named_values`]). Values that do not exist are `null`, never
//! NaN. The tool version is filled in here; the source hash is the caller's (the CLI
//! hashes the file it read).

use crate::analysis::Analysis;
use crate::format::{fmt_hz, fmt_num, fmt_value};
use crate::numeric::circular_difference;
use crate::{ReportError, ResponseSource, SampledResponse, analyze};
use rolloff_netlist::Unit;
use serde::{Deserialize, Serialize};

/// The snapshot format version written by this crate.
pub const SNAPSHOT_FORMAT: u32 = 1;

/// A circuit's response and metrics for regression checks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Snapshot {
    /// Format version ([`SNAPSHOT_FORMAT`]).
    pub format: u32,
    /// Version of the tool that wrote it.
    pub tool_version: String,
    /// Hash of the circuit's source text, filled in by the caller.
    pub source_hash: Option<String>,
    /// The circuit's title.
    pub title: Option<String>,
    /// Sweep frequencies in Hz, ascending and positive.
    pub frequencies_hz: Vec<f64>,
    /// One entry per probe.
    pub probes: Vec<ProbeSnapshot>,
}

/// One probe in a snapshot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProbeSnapshot {
    /// Probe name.
    pub name: String,
    /// Gain in dB per frequency (`null` where it could not be had or is zero).
    pub gain_db: Vec<Option<f64>>,
    /// Phase in degrees per frequency, unwrapped from the lowest frequency.
    pub phase_deg: Vec<Option<f64>>,
    /// Named metric values.
    pub metrics: Vec<SnapshotMetric>,
    /// Why the response or its summary could not be had, if so.
    pub error: Option<String>,
}

/// One named value in a snapshot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SnapshotMetric {
    /// Metric name (`cutoff`, `passband_gain`, `stopband_slope_high`, …).
    pub name: String,
    /// Unit symbol (`Hz`, `dB`, `dB/dec`, `s`, or empty).
    pub unit: String,
    /// The value.
    pub value: f64,
}

impl Snapshot {
    /// Pretty-printed JSON.
    ///
    /// # Errors
    /// [`ReportError::Snapshot`] if serialisation fails (it does not for these types).
    pub fn to_json(&self) -> Result<String, ReportError> {
        serde_json::to_string_pretty(self).map_err(|e| ReportError::Snapshot(e.to_string()))
    }

    /// Reads a snapshot from JSON.
    ///
    /// # Errors
    /// [`ReportError::Snapshot`] with serde's message (line and column) for bad JSON or
    /// a missing field, or when the format version is not [`SNAPSHOT_FORMAT`].
    pub fn from_json(text: &str) -> Result<Self, ReportError> {
        let snapshot: Snapshot =
            serde_json::from_str(text).map_err(|e| ReportError::Snapshot(e.to_string()))?;
        if snapshot.format != SNAPSHOT_FORMAT {
            return Err(ReportError::Snapshot(format!(
                "snapshot format {} is not the supported format {SNAPSHOT_FORMAT}",
                snapshot.format
            )));
        }
        Ok(snapshot)
    }
}

impl Snapshot {
    /// A probe's stored curves as a [`SampledResponse`], so metrics can be measured on a
    /// snapshot as on any measured data (points without a value are left out).
    ///
    /// # Errors
    /// [`ReportError::BadArgument`] when no probe has that name, or
    /// [`ReportError::BadSamples`] when fewer than two points have values.
    pub fn response(&self, probe: &str) -> Result<SampledResponse, ReportError> {
        let p = self
            .probes
            .iter()
            .find(|p| p.name == probe)
            .ok_or_else(|| {
                ReportError::BadArgument(format!("the snapshot has no probe `{probe}`"))
            })?;
        let mut freqs = Vec::new();
        let mut gains = Vec::new();
        let mut phases = Vec::new();
        for ((f, g), ph) in self.frequencies_hz.iter().zip(&p.gain_db).zip(&p.phase_deg) {
            if let (Some(g), Some(ph)) = (g, ph) {
                freqs.push(*f);
                gains.push(*g);
                phases.push(*ph);
            }
        }
        SampledResponse::from_db_deg(freqs, gains, phases)
    }
}

/// A probe's response to snapshot or compare: its name, source and `ref` frequency.
pub struct NamedSource<'a> {
    /// Probe name.
    pub name: String,
    /// The response.
    pub source: &'a mut dyn ResponseSource,
    /// The probe's passband reference frequency, if any.
    pub reference: Option<f64>,
}

impl std::fmt::Debug for NamedSource<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("NamedSource")
            .field("name", &self.name)
            .field("reference", &self.reference)
            .finish_non_exhaustive()
    }
}

/// Takes a snapshot of several responses over `freqs` (0 Hz and duplicates dropped).
/// The source hash is left `None` for the caller to fill.
pub fn snapshot_sources(
    title: Option<&str>,
    freqs: &[f64],
    probes: &mut [NamedSource<'_>],
) -> Snapshot {
    let mut sorted: Vec<f64> = freqs
        .iter()
        .copied()
        .filter(|f| f.is_finite() && *f > 0.0)
        .collect();
    sorted.sort_by(f64::total_cmp);
    sorted.dedup();
    let probes = probes
        .iter_mut()
        .map(|p| snapshot_probe(&p.name, p.source, p.reference, &sorted))
        .collect();
    Snapshot {
        format: SNAPSHOT_FORMAT,
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        source_hash: None,
        title: title.map(str::to_string),
        frequencies_hz: sorted,
        probes,
    }
}

type Curves = (Vec<Option<f64>>, Vec<Option<f64>>);

fn curves(source: &mut dyn ResponseSource, freqs: &[f64]) -> Result<Curves, ReportError> {
    let analysis = Analysis::new(source, freqs)?;
    let gain = analysis
        .values()
        .iter()
        .zip(analysis.gains_db())
        .map(|(h, g)| (h.norm() > 0.0).then_some(*g))
        .collect();
    let phase = analysis
        .values()
        .iter()
        .zip(analysis.phases_deg())
        .map(|(h, p)| (h.norm() > 0.0).then_some(*p))
        .collect();
    Ok((gain, phase))
}

/// One probe's entry of a snapshot: its curves at `freqs` (ascending, positive) and the
/// summary's named values; failures are recorded in `error`, never thrown.
pub fn snapshot_probe(
    name: &str,
    source: &mut dyn ResponseSource,
    reference: Option<f64>,
    freqs: &[f64],
) -> ProbeSnapshot {
    let empty = || vec![None; freqs.len()];
    let (gain_db, phase_deg, mut error) = match curves(source, freqs) {
        Ok((g, p)) => (g, p, None),
        Err(e) => (empty(), empty(), Some(e.to_string())),
    };
    let metrics = match analyze(source, freqs, reference) {
        Ok(summary) => summary
            .named_values()
            .into_iter()
            .map(|(name, unit, value)| SnapshotMetric {
                name,
                unit: unit.symbol().to_string(),
                value,
            })
            .collect(),
        Err(e) => {
            error.get_or_insert_with(|| e.to_string());
            Vec::new()
        }
    };
    ProbeSnapshot {
        name: name.to_string(),
        gain_db,
        phase_deg,
        metrics,
        error,
    }
}

/// How far a response may stray from its snapshot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Thresholds {
    /// Gains and dB metrics, in dB (default 0.01 dB).
    pub gain_db: f64,
    /// Phases, in degrees on the circle (default 0.1°).
    pub phase_deg: f64,
    /// Frequency metrics, relative (default 1e-3).
    pub frequency_rel: f64,
    /// Slopes, in dB/decade (default 0.1).
    pub slope_db_per_decade: f64,
    /// Other metrics (Q, order, group delay), relative (default 1e-3).
    pub other_rel: f64,
}

impl Default for Thresholds {
    fn default() -> Self {
        Self {
            gain_db: 0.01,
            phase_deg: 0.1,
            frequency_rel: 1e-3,
            slope_db_per_decade: 0.1,
            other_rel: 1e-3,
        }
    }
}

/// One compared quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Probe name.
    pub probe: String,
    /// `gain`, `phase` (the worst frequency) or a metric name.
    pub quantity: String,
    /// Where the worst deviation is, for `gain` and `phase`.
    pub at_hz: Option<f64>,
    /// The snapshot's value.
    pub expected: Option<f64>,
    /// The value now.
    pub actual: Option<f64>,
    /// The deviation in the limit's terms (dB, degrees, dB/decade, or relative);
    /// `None` when one side has no value.
    pub deviation: Option<f64>,
    /// The threshold it is judged against.
    pub limit: f64,
    /// Whether it is relative (`deviation` and `limit` are fractions).
    pub relative: bool,
    /// The unit of `expected` and `actual`.
    pub unit: Unit,
    /// Whether the deviation exceeds the limit (or a value appeared or vanished).
    pub exceeded: bool,
}

impl Finding {
    fn severity(&self) -> f64 {
        match self.deviation {
            _ if self.exceeded && self.deviation.is_none() => f64::MAX,
            Some(d) if self.limit > 0.0 => d / self.limit,
            Some(d) => d,
            None => 0.0,
        }
    }
}

impl std::fmt::Display for Finding {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let value =
            |v: Option<f64>| v.map_or_else(|| "none".to_string(), |v| fmt_value(v, self.unit));
        if self.probe.is_empty() {
            f.write_str(&self.quantity)?;
        } else {
            write!(f, "{} {}", self.probe, self.quantity)?;
        }
        if self.actual.is_none() && self.expected.is_none() {
            return Ok(());
        }
        if let Some(at) = self.at_hz {
            write!(f, " at {}", fmt_hz(at))?;
        }
        write!(
            f,
            ": {} now, {} in the snapshot",
            value(self.actual),
            value(self.expected)
        )?;
        match self.deviation {
            Some(d) if self.relative => write!(
                f,
                " ({} % off, limit {} %)",
                fmt_num(d * 100.0),
                fmt_num(self.limit * 100.0)
            ),
            Some(d) => write!(f, " (off by {}, limit {})", fmt_num(d), fmt_num(self.limit)),
            None => Ok(()),
        }
    }
}

/// The result of comparing responses with a snapshot.
#[derive(Debug, Clone, PartialEq)]
pub struct CompareReport {
    /// Every compared quantity, worst first (by deviation over limit).
    pub findings: Vec<Finding>,
}

impl CompareReport {
    /// Whether nothing exceeds its threshold.
    pub fn pass(&self) -> bool {
        self.findings.iter().all(|f| !f.exceeded)
    }

    /// The findings that exceed their threshold, worst first.
    pub fn failures(&self) -> impl Iterator<Item = &Finding> {
        self.findings.iter().filter(|f| f.exceeded)
    }

    /// The worst finding.
    pub fn worst(&self) -> Option<&Finding> {
        self.findings.first()
    }
}

/// Compares responses with a snapshot at the snapshot's frequencies: per probe the worst
/// gain and phase deviation (and where), and every named metric. A probe or metric present
/// on one side only is a failure.
pub fn compare_sources(
    snapshot: &Snapshot,
    probes: &mut [NamedSource<'_>],
    thresholds: &Thresholds,
) -> CompareReport {
    let now = snapshot_sources(snapshot.title.as_deref(), &snapshot.frequencies_hz, probes);
    compare_snapshots(snapshot, &now, thresholds)
}

/// Compares a new snapshot (taken at the old one's frequencies) with an old one: per
/// probe the worst gain and phase deviation (and where), and every named metric. A probe
/// or metric present on one side only is a failure, and so is a change of frequencies.
pub fn compare_snapshots(
    snapshot: &Snapshot,
    now: &Snapshot,
    thresholds: &Thresholds,
) -> CompareReport {
    let mut findings = Vec::new();
    if now.frequencies_hz != snapshot.frequencies_hz {
        findings.push(Finding {
            quantity: "sweep frequencies differ".into(),
            ..missing("", "", true)
        });
    }
    for old in &snapshot.probes {
        match now.probes.iter().find(|p| p.name == old.name) {
            Some(new) => compare_probe(
                old,
                new,
                &snapshot.frequencies_hz,
                thresholds,
                &mut findings,
            ),
            None => findings.push(missing(&old.name, "probe", true)),
        }
    }
    for new in &now.probes {
        if !snapshot.probes.iter().any(|p| p.name == new.name) {
            findings.push(missing(&new.name, "probe", false));
        }
    }
    findings.sort_by(|a, b| b.severity().total_cmp(&a.severity()));
    CompareReport { findings }
}

fn missing(probe: &str, quantity: &str, was_there: bool) -> Finding {
    Finding {
        probe: probe.to_string(),
        quantity: format!(
            "{quantity} {}",
            if was_there {
                "missing now"
            } else {
                "not in the snapshot"
            }
        ),
        at_hz: None,
        expected: None,
        actual: None,
        deviation: None,
        limit: 0.0,
        relative: false,
        unit: Unit::Dimensionless,
        exceeded: true,
    }
}

fn compare_probe(
    old: &ProbeSnapshot,
    new: &ProbeSnapshot,
    freqs: &[f64],
    t: &Thresholds,
    out: &mut Vec<Finding>,
) {
    let curve =
        |quantity: &str, a: &[Option<f64>], b: &[Option<f64>], limit: f64, unit, circle: bool| {
            let mut worst: Option<(usize, f64)> = None;
            let mut appeared = None;
            for (i, (x, y)) in a.iter().zip(b).enumerate() {
                match (x, y) {
                    (Some(x), Some(y)) => {
                        let d = if circle {
                            circular_difference(*y, *x).abs()
                        } else {
                            (y - x).abs()
                        };
                        if worst.is_none_or(|(_, w)| d > w) {
                            worst = Some((i, d));
                        }
                    }
                    (None, None) => {}
                    _ => {
                        appeared.get_or_insert(i);
                    }
                }
            }
            let (i, deviation) = match (appeared, worst) {
                (Some(i), _) => (i, None),
                (None, Some((i, d))) => (i, Some(d)),
                (None, None) => return None,
            };
            Some(Finding {
                probe: old.name.clone(),
                quantity: quantity.to_string(),
                at_hz: freqs.get(i).copied(),
                expected: a[i],
                actual: b[i],
                deviation,
                limit,
                relative: false,
                unit,
                exceeded: deviation.is_none_or(|d| d > limit),
            })
        };
    out.extend(curve(
        "gain",
        &old.gain_db,
        &new.gain_db,
        t.gain_db,
        Unit::Decibel,
        false,
    ));
    out.extend(curve(
        "phase",
        &old.phase_deg,
        &new.phase_deg,
        t.phase_deg,
        Unit::Degree,
        true,
    ));
    for m in &old.metrics {
        let unit = unit_of(&m.unit);
        let (limit, relative) = match unit {
            Unit::Hertz => (t.frequency_rel, true),
            Unit::Decibel => (t.gain_db, false),
            Unit::Degree => (t.phase_deg, false),
            Unit::DecibelPerDecade => (t.slope_db_per_decade, false),
            _ => (t.other_rel, true),
        };
        let actual = new
            .metrics
            .iter()
            .find(|n| n.name == m.name)
            .map(|n| n.value);
        let deviation = actual.map(|a| {
            if relative {
                let scale = m.value.abs().max(f64::MIN_POSITIVE);
                (a - m.value).abs() / scale
            } else {
                (a - m.value).abs()
            }
        });
        out.push(Finding {
            probe: old.name.clone(),
            quantity: m.name.clone(),
            at_hz: None,
            expected: Some(m.value),
            actual,
            deviation,
            limit,
            relative,
            unit,
            exceeded: deviation.is_none_or(|d| d > limit),
        });
    }
    for m in &new.metrics {
        if !old.metrics.iter().any(|o| o.name == m.name) {
            out.push(Finding {
                actual: Some(m.value),
                unit: unit_of(&m.unit),
                ..missing(&old.name, &m.name, false)
            });
        }
    }
}

fn unit_of(symbol: &str) -> Unit {
    [
        Unit::Hertz,
        Unit::Decibel,
        Unit::Degree,
        Unit::DecibelPerDecade,
        Unit::Ohm,
        Unit::Volt,
        Unit::Ampere,
        Unit::Second,
    ]
    .into_iter()
    .find(|u| u.symbol() == symbol)
    .unwrap_or(Unit::Dimensionless)
}
