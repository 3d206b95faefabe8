//! `rolloff report`: a summary of every probe and the bias findings.

use std::fmt::Write as _;

use rolloff_mna::{Analyzer, BiasWarning};
use rolloff_netlist::{PartId, PartKind, Unit};
use rolloff_report::{ProbeSummary, ReferenceOrigin, ReportError, Side, Slope, analyze_circuit};
use serde::Serialize;

use super::sweep::{gain_unit, is_impedance};
use super::{Outcome, Reported, Session};
use crate::args::{Format, ReportArgs};
use crate::csv::{Cell, Csv};
use crate::eng::{eng, fixed, fixed_unit};
use crate::json::{finite, to_json};
use crate::table::{Align, Table};

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded, or a probe cannot be summarised (after
/// printing the rest).
pub fn run(args: &ReportArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let mut analyzer = session.analyzer(&loaded)?;
    let freqs = session.frequencies(&loaded, &args.sweep)?;
    let summaries = analyze_circuit(&mut analyzer, &freqs);
    let bias = BiasView::solve(&mut analyzer);
    let mut view = ReportView::new(
        &loaded.source.name,
        loaded.circuit.title.clone(),
        &summaries,
        bias,
    );
    for (probe, view) in loaded.circuit.probes.iter().zip(&mut view.probes) {
        view.gain_unit = if is_impedance(&probe.kind) {
            "dBΩ"
        } else {
            gain_unit(&loaded.circuit, &probe.kind)
        };
    }
    let text = match args.format {
        Format::Table => view.table(),
        Format::Csv => ReportView::csv(&summaries),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    let mut failed = false;
    for (name, summary) in &summaries {
        if let Err(e) = summary {
            session.error(&format!("{}: probe `{name}`: {e}", loaded.source.name));
            failed = true;
        }
    }
    if failed {
        Err(Reported)
    } else {
        Ok(Outcome::Pass)
    }
}

/// The JSON document of `rolloff report --format json`.
#[derive(Debug, Serialize)]
struct ReportView {
    file: String,
    title: Option<String>,
    probes: Vec<ProbeView>,
    bias: BiasView,
}

#[derive(Debug, Serialize)]
struct ProbeView {
    name: String,
    /// What the probe's dB are relative to: `dB`, `dBS`, `dBΩ` (impedances are `dBΩ`).
    gain_unit: &'static str,
    /// `low-pass`, `high-pass`, `band-pass`, `band-stop`, `flat` or `irregular`.
    shape: Option<String>,
    passband: Option<PassbandView>,
    /// The cutoff level relative to the passband (−3.0103 dB).
    level_db: Option<f64>,
    cutoffs: Vec<CutoffView>,
    bandwidth_hz: Option<f64>,
    resonance_hz: Option<f64>,
    q: Option<f64>,
    peak_hz: Option<f64>,
    peak_gain_db: Option<f64>,
    peaking_db: Option<f64>,
    ripple_db: Option<f64>,
    notch_hz: Option<f64>,
    notch_depth_db: Option<f64>,
    stopbands: Vec<StopbandView>,
    /// Group delay at the passband reference frequency.
    group_delay_s: Option<f64>,
    warnings: Vec<String>,
    /// Why the probe could not be summarised (the other fields are then empty).
    error: Option<String>,
}

#[derive(Debug, Serialize)]
struct PassbandView {
    gain_db: f64,
    frequency_hz: f64,
    /// `given` (a `ref`), `largest_in_sweep` or `beyond_sweep`.
    origin: &'static str,
}

#[derive(Debug, Serialize)]
struct CutoffView {
    frequency_hz: f64,
    /// `true` where the gain rises through the level (the lower edge of a band-pass).
    rising: bool,
    phase_deg: Option<f64>,
}

#[derive(Debug, Serialize)]
struct StopbandView {
    /// `low` (below the passband) or `high`.
    side: &'static str,
    edge_hz: f64,
    /// Average slope just past the edge.
    near: Option<SlopeView>,
    /// Asymptotic slope, from which the order comes.
    far: Option<SlopeView>,
    order: Option<u32>,
}

#[derive(Debug, Serialize)]
struct SlopeView {
    from_hz: f64,
    to_hz: f64,
    db_per_decade: f64,
    beyond_sweep: bool,
}

/// Capacitor bias against ratings, as the report shows it.
#[derive(Debug, Serialize)]
struct BiasView {
    capacitors: Vec<RatedCapacitor>,
    warnings: Vec<String>,
    /// Why there is no DC solution, if there is none.
    error: Option<String>,
}

#[derive(Debug, Serialize)]
struct RatedCapacitor {
    name: String,
    voltage_v: f64,
    rated_v: f64,
    /// `ok`, `over_rated` or `reverse_polarity`.
    status: &'static str,
}

impl BiasView {
    fn solve(analyzer: &mut Analyzer) -> Self {
        let circuit = analyzer.circuit().clone();
        let report = match analyzer.bias() {
            Ok(report) => report,
            Err(e) => {
                return Self {
                    capacitors: Vec::new(),
                    warnings: Vec::new(),
                    error: Some(e.to_string()),
                };
            }
        };
        let capacitors = circuit
            .parts
            .iter()
            .enumerate()
            .filter_map(|(i, part)| {
                let PartKind::Capacitor {
                    rated: Some(rated), ..
                } = part.kind
                else {
                    return None;
                };
                let voltage_v = report.voltage_across(&circuit, PartId(i as u32))?;
                let status = report
                    .warnings
                    .iter()
                    .find_map(|w| match w {
                        BiasWarning::OverRated { part: p, .. } if *p == part.name => {
                            Some("over_rated")
                        }
                        BiasWarning::ReversePolarity { part: p, .. } if *p == part.name => {
                            Some("reverse_polarity")
                        }
                        _ => None,
                    })
                    .unwrap_or("ok");
                Some(RatedCapacitor {
                    name: part.name.clone(),
                    voltage_v,
                    rated_v: rated,
                    status,
                })
            })
            .collect();
        Self {
            capacitors,
            warnings: report.warnings.iter().map(ToString::to_string).collect(),
            error: None,
        }
    }
}

impl ReportView {
    fn new(
        file: &str,
        title: Option<String>,
        summaries: &[(String, Result<ProbeSummary, ReportError>)],
        bias: BiasView,
    ) -> Self {
        let probes = summaries
            .iter()
            .map(|(name, summary)| match summary {
                Ok(s) => probe_view(name, s),
                Err(e) => ProbeView::failed(name, e.to_string()),
            })
            .collect();
        Self {
            file: file.to_string(),
            title,
            probes,
            bias,
        }
    }

    fn table(&self) -> String {
        let mut text = String::new();
        if let Some(title) = &self.title {
            text.push_str(title);
            text.push_str("\n\n");
        }
        for probe in &self.probes {
            text.push_str(&probe.table());
            text.push('\n');
        }
        text.push_str(&self.bias.table());
        text
    }

    fn csv(summaries: &[(String, Result<ProbeSummary, ReportError>)]) -> String {
        let header = ["probe", "metric", "value", "unit"].map(String::from);
        let mut csv = Csv::new(&header);
        for (name, summary) in summaries {
            let Ok(summary) = summary else { continue };
            for (metric, unit, value) in summary.named_values() {
                csv.push(&[
                    Cell::Text(name.clone()),
                    Cell::Text(metric),
                    Cell::Number(finite(value)),
                    Cell::Text(unit_name(unit).to_string()),
                ]);
            }
        }
        csv.into_text()
    }
}

/// The unit column of CSV output: SI symbols in ASCII.
fn unit_name(unit: Unit) -> &'static str {
    match unit {
        Unit::Ohm => "ohm",
        Unit::Degree => "deg",
        other => other.symbol(),
    }
}

fn probe_view(name: &str, s: &ProbeSummary) -> ProbeView {
    let slope = |slope: Option<Slope>| {
        slope.map(|s| SlopeView {
            from_hz: s.from_hz,
            to_hz: s.to_hz,
            db_per_decade: s.db_per_decade,
            beyond_sweep: s.beyond_sweep,
        })
    };
    ProbeView {
        name: name.to_string(),
        gain_unit: "dB",
        shape: Some(s.shape.to_string()),
        passband: Some(PassbandView {
            gain_db: s.reference.gain_db,
            frequency_hz: s.reference.freq_hz,
            origin: match s.reference.origin {
                ReferenceOrigin::Given => "given",
                ReferenceOrigin::LargestInSweep => "largest_in_sweep",
                ReferenceOrigin::BeyondSweep => "beyond_sweep",
            },
        }),
        level_db: Some(s.level_db),
        cutoffs: s
            .cutoffs
            .iter()
            .zip(
                s.phase_at_cutoffs_deg
                    .iter()
                    .chain(std::iter::repeat(&None)),
            )
            .map(|(c, phase)| CutoffView {
                frequency_hz: c.freq_hz,
                rising: c.rising,
                phase_deg: *phase,
            })
            .collect(),
        bandwidth_hz: s.bandwidth_hz,
        resonance_hz: s.resonance_hz,
        q: s.q,
        peak_hz: Some(s.peak.freq_hz),
        peak_gain_db: Some(s.peak.gain_db),
        peaking_db: s.peaking_db,
        ripple_db: s.ripple_db,
        notch_hz: s.notch.map(|n| n.freq_hz),
        notch_depth_db: s.notch_depth_db,
        stopbands: s
            .stopband
            .iter()
            .map(|b| StopbandView {
                side: match b.side {
                    Side::Low => "low",
                    Side::High => "high",
                },
                edge_hz: b.edge_hz,
                near: slope(b.near),
                far: slope(b.far),
                order: b.order,
            })
            .collect(),
        group_delay_s: s.group_delay_s,
        warnings: s.warnings.iter().map(ToString::to_string).collect(),
        error: None,
    }
}

impl ProbeView {
    fn failed(name: &str, error: String) -> Self {
        Self {
            name: name.to_string(),
            gain_unit: "dB",
            shape: None,
            passband: None,
            level_db: None,
            cutoffs: Vec::new(),
            bandwidth_hz: None,
            resonance_hz: None,
            q: None,
            peak_hz: None,
            peak_gain_db: None,
            peaking_db: None,
            ripple_db: None,
            notch_hz: None,
            notch_depth_db: None,
            stopbands: Vec::new(),
            group_delay_s: None,
            warnings: Vec::new(),
            error: Some(error),
        }
    }

    fn table(&self) -> String {
        let Some(shape) = &self.shape else {
            return format!(
                "probe {}: cannot be summarised: {}\n",
                self.name,
                self.error.as_deref().unwrap_or("unknown reason")
            );
        };
        let mut table = Table::new(&[
            (&format!("probe {}", self.name), Align::Left),
            ("value", Align::Right),
            ("where", Align::Left),
        ]);
        table.push(vec!["shape".into(), shape.clone(), String::new()]);
        if let Some(p) = &self.passband {
            let origin = match p.origin {
                "given" => " (ref)",
                "beyond_sweep" => " (beyond the sweep)",
                _ => " (largest in sweep)",
            };
            table.push(vec![
                "passband gain".into(),
                fixed_unit(p.gain_db, 2, self.gain_unit),
                format!("at {}{origin}", eng(p.frequency_hz, "Hz")),
            ]);
        }
        self.push_cutoffs(&mut table);
        push_optional(
            &mut table,
            "bandwidth",
            self.bandwidth_hz.map(|v| eng(v, "Hz")),
        );
        push_optional(
            &mut table,
            "resonance",
            self.resonance_hz.map(|v| eng(v, "Hz")),
        );
        push_optional(&mut table, "Q", self.q.map(|v| fixed(v, 3)));
        push_optional(
            &mut table,
            "peaking",
            self.peaking_db.map(|v| fixed_unit(v, 2, "dB")),
        );
        push_optional(
            &mut table,
            "ripple",
            self.ripple_db.map(|v| fixed_unit(v, 2, "dB")),
        );
        if let (Some(f), depth) = (self.notch_hz, self.notch_depth_db) {
            let depth = depth.map_or_else(|| "exact zero".to_string(), |d| fixed_unit(d, 1, "dB"));
            table.push(vec!["notch".into(), eng(f, "Hz"), format!("depth {depth}")]);
        }
        for band in &self.stopbands {
            for row in stopband_rows(band) {
                table.push(row);
            }
        }
        if let (Some(delay), Some(p)) = (self.group_delay_s, &self.passband) {
            table.push(vec![
                "group delay".into(),
                eng(delay, "s"),
                format!("at {}", eng(p.frequency_hz, "Hz")),
            ]);
        }
        let mut text = table.render();
        for warning in &self.warnings {
            let _ = writeln!(text, "  note: {warning}");
        }
        text
    }

    fn push_cutoffs(&self, table: &mut Table) {
        let named = self.cutoffs.len() == 2;
        for (i, cutoff) in self.cutoffs.iter().enumerate() {
            let label = match (named, i) {
                (true, 0) => "cutoff low",
                (true, _) => "cutoff high",
                _ => "cutoff",
            };
            let phase = cutoff
                .phase_deg
                .map(|p| format!("phase {}", fixed_unit(p, 1, "°")))
                .unwrap_or_default();
            table.push(vec![label.into(), eng(cutoff.frequency_hz, "Hz"), phase]);
        }
        if self.cutoffs.is_empty() {
            table.push(vec![
                "cutoff".into(),
                "none".into(),
                "no −3 dB crossing in the sweep".into(),
            ]);
        }
    }
}

fn push_optional(table: &mut Table, label: &str, value: Option<String>) {
    if let Some(value) = value {
        table.push(vec![label.to_string(), value, String::new()]);
    }
}

/// Two rows per stopband side: the slope over the decade just beyond the cutoff, and
/// the asymptotic order from the decade after it (each with where it was measured).
fn stopband_rows(band: &StopbandView) -> Vec<Vec<String>> {
    let (slope_label, order_label) = if band.side == "low" {
        ("slope below", "order below")
    } else {
        ("slope above", "order above")
    };
    let place = |slope: &SlopeView| {
        let beyond = if slope.beyond_sweep {
            " (beyond the sweep)"
        } else {
            ""
        };
        format!(
            "{} .. {}{beyond}",
            eng(slope.from_hz, "Hz"),
            eng(slope.to_hz, "Hz")
        )
    };
    let slope_row = match &band.near {
        Some(near) => vec![
            slope_label.into(),
            fixed_unit(near.db_per_decade, 1, "dB/dec"),
            place(near),
        ],
        None => vec![slope_label.into(), "n/a".into(), String::new()],
    };
    let order_row = match (&band.far, band.order) {
        (Some(far), Some(order)) => vec![
            order_label.into(),
            format!("{order} ({})", fixed_unit(far.db_per_decade, 1, "dB/dec")),
            place(far),
        ],
        (Some(far), None) => vec![
            order_label.into(),
            "n/a".into(),
            format!(
                "{} is not a multiple of 20 dB/dec",
                fixed_unit(far.db_per_decade, 1, "dB/dec")
            ),
        ],
        (None, _) => vec![order_label.into(), "n/a".into(), String::new()],
    };
    vec![slope_row, order_row]
}

impl BiasView {
    fn table(&self) -> String {
        if let Some(error) = &self.error {
            return format!("bias: no DC solution: {error}\n");
        }
        let mut text = String::new();
        if self.capacitors.is_empty() {
            text.push_str("bias: no capacitor has a `rated` voltage to check\n");
        } else {
            let mut table = Table::new(&[
                ("rated capacitor", Align::Left),
                ("bias [V]", Align::Right),
                ("rated [V]", Align::Right),
                ("status", Align::Left),
            ]);
            for cap in &self.capacitors {
                table.push(vec![
                    cap.name.clone(),
                    eng(cap.voltage_v, "V"),
                    eng(cap.rated_v, "V"),
                    cap.status.replace('_', " "),
                ]);
            }
            text.push_str(&table.render());
        }
        for warning in &self.warnings {
            let _ = writeln!(text, "  warning: {warning}");
        }
        text
    }
}
