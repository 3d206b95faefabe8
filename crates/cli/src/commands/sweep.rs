//! `rolloff sweep`: the response of every probe across the sweep.

use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, PartKind, ProbeKind};
use rolloff_report::{Analysis, ProbeSource};
use serde::Serialize;

use super::{Outcome, Reported, Session};
use crate::args::{Format, SweepArgs};
use crate::csv::{Cell, Csv};
use crate::eng::{eng, fixed};
use crate::json::to_json;
use crate::table::{Align, Table};

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or solved at a sweep frequency.
pub fn run(args: &SweepArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let mut analyzer = session.analyzer(&loaded)?;
    let freqs = session.frequencies(&loaded, &args.sweep)?;
    let view = SweepView::solve(&mut analyzer, &freqs, &loaded.source.name)
        .map_err(|m| session.error(&format!("{}: {m}", loaded.source.name)))?;
    if view.dc_skipped {
        session.warning("the 0 Hz point is left out: a log-frequency response has no DC point (`rolloff bias` gives the DC solution)");
    }
    let text = match args.format {
        Format::Table => view.table(),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    Ok(Outcome::Pass)
}

/// The JSON document of `rolloff sweep --format json`.
#[derive(Debug, Serialize)]
pub struct SweepView {
    /// The file as given.
    pub file: String,
    /// The circuit's title, if any.
    pub title: Option<String>,
    /// The frequencies in Hz, ascending.
    pub frequency_hz: Vec<f64>,
    /// One entry per probe, in file order.
    pub probes: Vec<ProbeColumn>,
    /// Whether a 0 Hz point of the sweep was left out.
    #[serde(skip)]
    pub dc_skipped: bool,
}

/// One probe's response at every frequency of [`SweepView::frequency_hz`].
#[derive(Debug, Serialize)]
pub struct ProbeColumn {
    /// The probe's name.
    pub name: String,
    /// `gain` (a transfer, in dB) or `impedance` (in Ω).
    pub quantity: &'static str,
    /// What the dB are relative to: `dB` (V/V or A/A), `dBS` (A/V), `dBΩ` (V/A).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gain_unit: Option<&'static str>,
    /// Gain in dB (transfer probes).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gain_db: Option<Vec<f64>>,
    /// Impedance magnitude in Ω (impedance probes).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub impedance_ohm: Option<Vec<f64>>,
    /// Phase in degrees, unwrapped from the lowest frequency.
    pub phase_deg: Vec<f64>,
}

impl ProbeColumn {
    fn is_impedance(&self) -> bool {
        self.impedance_ohm.is_some()
    }

    /// The magnitude column: dB for transfers, Ω for impedances.
    fn magnitudes(&self) -> &[f64] {
        self.gain_db
            .as_deref()
            .or(self.impedance_ohm.as_deref())
            .unwrap_or(&[])
    }
}

impl SweepView {
    /// Solves every probe of the analyzer's circuit at `freqs` through the report
    /// library's response analysis (gain in dB, phase unwrapped).
    ///
    /// # Errors
    /// The library's message when a probe cannot be solved.
    pub fn solve(analyzer: &mut Analyzer, freqs: &[f64], file: &str) -> Result<Self, String> {
        let circuit = analyzer.circuit().clone();
        let mut probes = Vec::new();
        let mut frequency_hz = Vec::new();
        let mut dc_skipped = false;
        for probe in &circuit.probes {
            let mut source = ProbeSource::new(analyzer, probe.kind.clone());
            let analysis = Analysis::new(&mut source, freqs)
                .map_err(|e| format!("probe `{}`: {e}", probe.name))?;
            frequency_hz = analysis.frequencies().to_vec();
            dc_skipped = analysis.dc_skipped();
            let impedance = is_impedance(&probe.kind);
            probes.push(ProbeColumn {
                name: probe.name.clone(),
                quantity: if impedance { "impedance" } else { "gain" },
                gain_unit: (!impedance).then(|| gain_unit(&circuit, &probe.kind)),
                gain_db: (!impedance).then(|| analysis.gains_db().to_vec()),
                impedance_ohm: impedance
                    .then(|| analysis.values().iter().map(|z| z.norm()).collect()),
                phase_deg: analysis.phases_deg().to_vec(),
            });
        }
        if probes.is_empty() {
            return Err("the file has no `probe` line, so there is nothing to sweep".to_string());
        }
        Ok(Self {
            file: file.to_string(),
            title: circuit.title.clone(),
            frequency_hz,
            probes,
            dc_skipped,
        })
    }

    fn table(&self) -> String {
        let mut headers = vec!["f [Hz]".to_string()];
        for probe in &self.probes {
            let unit = if probe.is_impedance() {
                "Ω"
            } else {
                probe.gain_unit.unwrap_or("dB")
            };
            headers.push(format!("{} [{unit}]", probe.name));
            headers.push(format!("{} [°]", probe.name));
        }
        let aligns = vec![Align::Right; headers.len()];
        let mut table = Table::with_headers(headers, aligns);
        for (i, &f) in self.frequency_hz.iter().enumerate() {
            let mut row = vec![eng(f, "Hz")];
            for probe in &self.probes {
                let magnitude = probe.magnitudes()[i];
                row.push(if probe.is_impedance() {
                    eng(magnitude, "Ω")
                } else {
                    fixed(magnitude, 2)
                });
                row.push(fixed(probe.phase_deg[i], 1));
            }
            table.push(row);
        }
        table.render()
    }

    fn csv(&self) -> String {
        let mut header = vec!["frequency_hz".to_string()];
        for probe in &self.probes {
            let suffix = if probe.is_impedance() { "ohm" } else { "db" };
            header.push(format!("{}_{suffix}", probe.name));
            header.push(format!("{}_deg", probe.name));
        }
        let mut csv = Csv::new(&header);
        for (i, &f) in self.frequency_hz.iter().enumerate() {
            let mut row = vec![Cell::Number(Some(f))];
            for probe in &self.probes {
                row.push(Cell::Number(Some(probe.magnitudes()[i])));
                row.push(Cell::Number(Some(probe.phase_deg[i])));
            }
            csv.push(&row);
        }
        csv.into_text()
    }
}

/// Whether a probe gives an impedance in Ω rather than a transfer.
pub fn is_impedance(kind: &ProbeKind) -> bool {
    matches!(
        kind,
        ProbeKind::InputImpedance | ProbeKind::OutputImpedance(_)
    )
}

/// What a transfer probe's dB are relative to, from the kinds of probe and drive (the
/// language's rule): V/V and A/A are `dB`, A/V is `dBS`, V/A is `dBΩ`.
pub fn gain_unit(circuit: &Circuit, kind: &ProbeKind) -> &'static str {
    let current_drive = circuit
        .drive_source()
        .ok()
        .and_then(|id| circuit.parts.get(id.index()))
        .is_some_and(|p| matches!(p.kind, PartKind::CurrentSource { .. }));
    let current_probe = matches!(kind, ProbeKind::Current(_));
    match (kind, current_probe, current_drive) {
        (ProbeKind::Ratio { .. }, _, _) => "dB",
        (_, true, false) => "dBS",
        (_, false, true) => "dBΩ",
        _ => "dB",
    }
}
