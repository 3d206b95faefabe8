//! `rolloff snapshot` and `rolloff compare`: regression snapshots of a circuit's
//! response and metrics, compared at the snapshot's own frequencies.

use std::fmt::Write as _;

use rolloff_report::{CompareReport, Snapshot, Thresholds, compare, take_snapshot};
use serde::Serialize;

use super::{Outcome, Reported, Session};
use crate::args::{CompareArgs, Format, SnapshotArgs};
use crate::commands::check::unit_name;
use crate::csv::{Cell, Csv};
use crate::eng::{eng, quantity};
use crate::input;
use crate::json::to_json;
use crate::table::{Align, Table};

/// Runs `rolloff snapshot`.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or the snapshot cannot be written.
pub fn run_snapshot(args: &SnapshotArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let mut analyzer = session.analyzer(&loaded)?;
    let freqs = session.frequencies(&loaded, &args.sweep)?;
    let snapshot = take_snapshot(
        &mut analyzer,
        &freqs,
        Some(source_hash(&loaded.source.text)),
    );
    for probe in &snapshot.probes {
        if let Some(error) = &probe.error {
            session.warning(&format!(
                "{}: probe `{}`: {error}",
                loaded.source.name, probe.name
            ));
        }
    }
    let mut text = snapshot
        .to_json()
        .map_err(|e| session.error(&format!("cannot write the snapshot: {e}")))?;
    text.push('\n');
    input::write_output(&args.output, &text).map_err(|m| session.error(&m))?;
    Ok(Outcome::Pass)
}

/// Runs `rolloff compare`.
///
/// # Errors
/// [`Reported`] when the file or the snapshot cannot be read.
pub fn run_compare(args: &CompareArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let snapshot_text = std::fs::read_to_string(&args.snapshot)
        .map_err(|e| session.error(&format!("cannot read `{}`: {e}", args.snapshot.display())))?;
    let snapshot = Snapshot::from_json(&snapshot_text).map_err(|e| {
        session.error(&format!(
            "`{}` is not a snapshot: {e}",
            args.snapshot.display()
        ))
    })?;
    let mut analyzer = session.analyzer(&loaded)?;
    let thresholds = thresholds(args, session)?;
    let report = compare(&mut analyzer, &snapshot, &thresholds);
    let mut view = CompareView::new(&loaded.source.name, &loaded.source.text, &snapshot, &report);
    view.overrides = session
        .overrides
        .iter()
        .map(|(name, value)| format!("{name}={value}"))
        .collect();
    let text = match args.format {
        Format::Table => view.table(),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    Ok(if report.pass() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

fn thresholds(args: &CompareArgs, session: &Session) -> Result<Thresholds, Reported> {
    let defaults = Thresholds::default();
    for (name, value) in [
        ("--max-db", args.max_db),
        ("--max-deg", args.max_deg),
        ("--max-rel", args.max_rel),
    ] {
        if let Some(v) = value
            && !(v.is_finite() && v >= 0.0)
        {
            return Err(session.error(&format!(
                "{name} must be a finite, non-negative number, found {v}"
            )));
        }
    }
    Ok(Thresholds {
        gain_db: args.max_db.unwrap_or(defaults.gain_db),
        phase_deg: args.max_deg.unwrap_or(defaults.phase_deg),
        frequency_rel: args.max_rel.unwrap_or(defaults.frequency_rel),
        slope_db_per_decade: defaults.slope_db_per_decade,
        other_rel: args.max_rel.unwrap_or(defaults.other_rel),
    })
}

/// A 64-bit FNV-1a hash of the source text, as `fnv1a64:` and 16 hex digits.
///
/// It identifies the text a snapshot was taken from (to say "the file changed since");
/// it is not a security measure.
pub fn source_hash(text: &str) -> String {
    const OFFSET: u64 = 0xcbf2_9ce4_8422_2325;
    const PRIME: u64 = 0x0000_0100_0000_01b3;
    let hash = text
        .bytes()
        .fold(OFFSET, |h, b| (h ^ u64::from(b)).wrapping_mul(PRIME));
    format!("fnv1a64:{hash:016x}")
}

/// The JSON document of `rolloff compare --format json`.
#[derive(Debug, Serialize)]
struct CompareView {
    file: String,
    pass: bool,
    /// Whether the file's text differs from the one the snapshot was taken from.
    source_changed: Option<bool>,
    snapshot_tool_version: String,
    /// The `--set` overrides the circuit was compiled with, as `name=value`.
    overrides: Vec<String>,
    findings: Vec<FindingView>,
}

#[derive(Debug, Serialize)]
struct FindingView {
    probe: String,
    quantity: String,
    at_hz: Option<f64>,
    snapshot: Option<f64>,
    now: Option<f64>,
    unit: &'static str,
    /// In dB, degrees or dB/decade, or a fraction when `relative`.
    deviation: Option<f64>,
    limit: f64,
    relative: bool,
    exceeded: bool,
}

impl CompareView {
    fn new(file: &str, text: &str, snapshot: &Snapshot, report: &CompareReport) -> Self {
        let findings = report
            .findings
            .iter()
            .map(|f| FindingView {
                probe: f.probe.clone(),
                quantity: f.quantity.clone(),
                at_hz: f.at_hz,
                snapshot: f.expected,
                now: f.actual,
                unit: unit_name(f.unit),
                deviation: f.deviation,
                limit: f.limit,
                relative: f.relative,
                exceeded: f.exceeded,
            })
            .collect();
        Self {
            file: file.to_string(),
            pass: report.pass(),
            source_changed: snapshot
                .source_hash
                .as_ref()
                .map(|h| *h != source_hash(text)),
            snapshot_tool_version: snapshot.tool_version.clone(),
            overrides: Vec::new(),
            findings,
        }
    }

    fn table(&self) -> String {
        let mut text = String::new();
        let changed = match self.source_changed {
            Some(true) => "the file has changed since the snapshot",
            Some(false) => "the file is unchanged since the snapshot",
            None => "the snapshot has no source hash",
        };
        let overrides = if self.overrides.is_empty() {
            String::new()
        } else {
            format!(", compared with --set {}", self.overrides.join(" --set "))
        };
        let _ = writeln!(
            text,
            "{}: {changed} (snapshot by rolloff {}){overrides}",
            self.file, self.snapshot_tool_version
        );
        let mut table = Table::new(&[
            ("result", Align::Left),
            ("probe", Align::Left),
            ("quantity", Align::Left),
            ("at", Align::Right),
            ("snapshot", Align::Right),
            ("now", Align::Right),
            ("deviation", Align::Right),
            ("limit", Align::Right),
        ]);
        for f in &self.findings {
            let unit = unit_of(f.unit);
            let value =
                |v: Option<f64>| v.map_or_else(|| "none".to_string(), |v| quantity(v, unit));
            let (deviation, limit) = if f.relative {
                (
                    f.deviation
                        .map_or_else(String::new, |d| format!("{:.3} %", d * 100.0)),
                    format!("{:.3} %", f.limit * 100.0),
                )
            } else {
                (
                    f.deviation.map_or_else(String::new, |d| quantity(d, unit)),
                    quantity(f.limit, unit),
                )
            };
            table.push(vec![
                if f.exceeded { "FAIL" } else { "ok" }.to_string(),
                f.probe.clone(),
                f.quantity.clone(),
                f.at_hz.map_or_else(String::new, |a| eng(a, "Hz")),
                value(f.snapshot),
                value(f.now),
                deviation,
                limit,
            ]);
        }
        text.push_str(&table.render());
        let failed = self.findings.iter().filter(|f| f.exceeded).count();
        let _ = writeln!(
            text,
            "compare: {} passed, {failed} failed",
            self.findings.len() - failed
        );
        text
    }

    fn csv(&self) -> String {
        let header = [
            "probe",
            "quantity",
            "at_hz",
            "snapshot",
            "now",
            "unit",
            "deviation",
            "limit",
            "relative",
            "exceeded",
        ]
        .map(String::from);
        let mut csv = Csv::new(&header);
        for f in &self.findings {
            csv.push(&[
                Cell::Text(f.probe.clone()),
                Cell::Text(f.quantity.clone()),
                Cell::Number(f.at_hz),
                Cell::Number(f.snapshot),
                Cell::Number(f.now),
                Cell::Text(f.unit.to_string()),
                Cell::Number(f.deviation),
                Cell::Number(Some(f.limit)),
                Cell::Text(f.relative.to_string()),
                Cell::Text(f.exceeded.to_string()),
            ]);
        }
        csv.into_text()
    }
}

/// Back from the ASCII unit name to the unit, for formatting.
fn unit_of(name: &str) -> rolloff_netlist::Unit {
    use rolloff_netlist::Unit;
    match name {
        "Hz" => Unit::Hertz,
        "dB" => Unit::Decibel,
        "deg" => Unit::Degree,
        "dB/dec" => Unit::DecibelPerDecade,
        "ohm" => Unit::Ohm,
        "V" => Unit::Volt,
        "A" => Unit::Ampere,
        "s" => Unit::Second,
        _ => Unit::Dimensionless,
    }
}

#[cfg(test)]
mod tests {
    use super::source_hash;

    #[test]
    fn fnv1a_matches_its_published_test_vectors() {
        // FNV-1a 64-bit test vectors from the algorithm's reference description
        // (Fowler, Noll, Vo): "" and "a".
        assert_eq!(source_hash(""), "fnv1a64:cbf29ce484222325");
        assert_eq!(source_hash("a"), "fnv1a64:af63dc4c8601ec8c");
    }
}
