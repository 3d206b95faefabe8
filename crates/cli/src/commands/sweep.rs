//! `rolloff sweep`: the response of every probe across the sweep.

use rolloff_mna::{Analyzer, MnaError};
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
    /// Whether the sweep holds a 0 Hz point; each probe's `dc` then holds its value.
    pub has_dc: bool,
}

/// A probe's value at 0 Hz (a linear sweep's first point), reported as DC.
#[derive(Debug, Serialize)]
pub struct DcPoint {
    /// Gain in dB (transfer probes); absent when the DC transfer is exactly zero
    /// (a series capacitor blocks DC) or the probe is an impedance.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gain_db: Option<f64>,
    /// Impedance magnitude in Ω (impedance probes).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub impedance_ohm: Option<f64>,
    /// The real value at DC in the probe's own unit (V/V, S, Ω, …); its sign gives the
    /// phase (0° or 180°).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value: Option<f64>,
    /// Whether the impedance is infinite at DC (an open circuit, e.g. behind a series
    /// capacitor); `impedance_ohm` is then absent.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub open: bool,
    /// Why there is no DC value (the solver's reason), when there is none.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

impl DcPoint {
    fn solve(analyzer: &mut Analyzer, kind: &ProbeKind, impedance: bool) -> Self {
        match analyzer.transfer(kind, 0.0) {
            Ok(h) => {
                let magnitude = h.norm();
                Self {
                    gain_db: (!impedance && magnitude > 0.0).then(|| 20.0 * magnitude.log10()),
                    impedance_ohm: impedance.then_some(magnitude),
                    value: Some(h.re),
                    open: false,
                    error: None,
                }
            }
            Err(e) => Self {
                gain_db: None,
                impedance_ohm: None,
                value: None,
                open: matches!(e, MnaError::InfiniteImpedance { .. }),
                error: Some(e.to_string()),
            },
        }
    }

    /// The magnitude cell: dB (or `−∞` for an exact zero), Ω, or `n/a`.
    fn magnitude_text(&self, impedance: bool) -> String {
        match (self.value, impedance) {
            (None, _) if self.open => "∞".to_string(),
            (None, _) => "n/a".to_string(),
            (Some(_), true) => self
                .impedance_ohm
                .map_or("n/a".to_string(), |z| eng(z, "Ω")),
            (Some(_), false) => self.gain_db.map_or("−∞".to_string(), |g| fixed(g, 2)),
        }
    }

    /// The phase cell: 0 or 180 from the sign of the real DC value.
    fn phase_deg(&self) -> Option<f64> {
        self.value
            .filter(|v| *v != 0.0)
            .map(|v| if v < 0.0 { 180.0 } else { 0.0 })
    }
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
    /// Phase in degrees, unwrapped from the lowest positive frequency.
    pub phase_deg: Vec<f64>,
    /// The value at 0 Hz when the sweep holds that point (it is not in the columns above,
    /// which start at the lowest positive frequency).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dc: Option<DcPoint>,
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
        let has_dc = freqs.contains(&0.0);
        for probe in &circuit.probes {
            let mut source = ProbeSource::new(analyzer, probe.kind.clone());
            let analysis = Analysis::new(&mut source, freqs)
                .map_err(|e| format!("probe `{}`: {e}", probe.name))?;
            frequency_hz = analysis.frequencies().to_vec();
            let impedance = is_impedance(&probe.kind);
            probes.push(ProbeColumn {
                name: probe.name.clone(),
                quantity: if impedance { "impedance" } else { "gain" },
                gain_unit: (!impedance).then(|| gain_unit(&circuit, &probe.kind)),
                gain_db: (!impedance).then(|| analysis.gains_db().to_vec()),
                impedance_ohm: impedance
                    .then(|| analysis.values().iter().map(|z| z.norm()).collect()),
                phase_deg: analysis.phases_deg().to_vec(),
                dc: None,
            });
            if has_dc {
                let last = probes.len() - 1;
                probes[last].dc = Some(DcPoint::solve(analyzer, &probe.kind, impedance));
            }
        }
        if probes.is_empty() {
            return Err("the file has no `probe` line, so there is nothing to sweep".to_string());
        }
        Ok(Self {
            file: file.to_string(),
            title: circuit.title.clone(),
            frequency_hz,
            probes,
            has_dc,
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
        if self.has_dc {
            let mut row = vec!["DC".to_string()];
            for probe in &self.probes {
                let dc = probe.dc.as_ref();
                row.push(dc.map_or("n/a".to_string(), |d| {
                    d.magnitude_text(probe.is_impedance())
                }));
                row.push(
                    dc.and_then(DcPoint::phase_deg)
                        .map_or("n/a".to_string(), |p| fixed(p, 1)),
                );
            }
            table.push(row);
        }
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
        if self.has_dc {
            let mut row = vec![Cell::Number(Some(0.0))];
            for probe in &self.probes {
                let dc = probe.dc.as_ref();
                let magnitude = dc.and_then(|d| d.gain_db.or(d.impedance_ohm));
                row.push(Cell::Number(magnitude));
                row.push(Cell::Number(dc.and_then(DcPoint::phase_deg)));
            }
            csv.push(&row);
        }
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
