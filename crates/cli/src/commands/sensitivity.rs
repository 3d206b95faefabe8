//! `rolloff sensitivity FILE`: the normalised sensitivity `(∂M/M)/(∂x/x)` of each
//! metric of the file's expectations to each passive part, largest first.

use std::fmt::Write as _;

use clap::Args;
use rolloff_tolerance::{SensitivityOptions, sensitivity};
use serde::Serialize;

use super::check::unit_name;
use super::design::{self, part_symbol_of, unit_ascii};
use super::{Outcome, Reported, Session};
use crate::args::{FileArg, Format};
use crate::csv::{Cell, Csv};
use crate::eng::{eng, fixed, quantity};
use crate::json::{finite, to_json};
use crate::table::{Align, Table};

/// `rolloff sensitivity`.
#[derive(Debug, Args)]
pub struct SensitivityArgs {
    /// The circuit file; its `expect` lines name the metrics.
    #[command(flatten)]
    pub input: FileArg,
    /// Worker threads (default: one per core).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or solved, has no expectation, still has
/// `?` parts, or a metric cannot be measured at the nominal values.
pub fn run(args: &SensitivityArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let model = design::model(session, &loaded)?;
    let pool = design::pool(session, args.jobs)?;
    let report = sensitivity(&model, &SensitivityOptions::default(), Some(&pool))
        .map_err(|e| design::failed(session, &loaded, &e))?;
    let circuit = &loaded.circuit;
    let view = SensitivityView {
        file: loaded.source.name.clone(),
        title: circuit.title.clone(),
        metrics: report
            .metrics
            .iter()
            .map(|m| {
                let unit = design::metric_unit(circuit, &m.entry.metric);
                MetricView {
                    metric: m.entry.label.clone(),
                    unit: unit_name(unit),
                    nominal: m.nominal,
                    nominal_text: quantity(m.nominal, unit),
                    parts: m
                        .parts
                        .iter()
                        .map(|p| {
                            let symbol = part_symbol_of(circuit, p.part.index());
                            PartView {
                                part: p.name.clone(),
                                value: p.value,
                                value_text: eng(p.value, symbol),
                                unit: unit_ascii(symbol),
                                normalized: p.normalized.and_then(finite),
                                derivative: p.derivative.and_then(finite),
                            }
                        })
                        .collect(),
                }
            })
            .collect(),
    };
    let text = match args.format {
        Format::Table => view.table(),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    Ok(Outcome::Pass)
}

/// The JSON document of `rolloff sensitivity --format json` (field names are stable).
#[derive(Debug, Serialize)]
struct SensitivityView {
    file: String,
    title: Option<String>,
    metrics: Vec<MetricView>,
}

#[derive(Debug, Serialize)]
struct MetricView {
    metric: String,
    unit: &'static str,
    nominal: f64,
    #[serde(skip)]
    nominal_text: String,
    /// Sorted by decreasing `|normalized|`; parts without one last.
    parts: Vec<PartView>,
}

#[derive(Debug, Serialize)]
struct PartView {
    part: String,
    /// The part's nominal value.
    value: f64,
    #[serde(skip)]
    value_text: String,
    /// `ohm`, `F` or `H`.
    unit: &'static str,
    /// `(∂M/M)/(∂x/x)`; `null` where the metric failed at a step or is 0.
    normalized: Option<f64>,
    /// `∂M/∂x` in the metric's unit per part unit.
    derivative: Option<f64>,
}

impl SensitivityView {
    fn table(&self) -> String {
        let mut text = String::new();
        if let Some(title) = &self.title {
            text.push_str(title);
            text.push('\n');
        }
        for m in &self.metrics {
            let _ = write!(text, "\n{} = {}\n", m.metric, m.nominal_text);
            let mut table = Table::new(&[
                ("part", Align::Left),
                ("value", Align::Right),
                ("sensitivity", Align::Right),
                ("", Align::Left),
            ]);
            for p in &m.parts {
                table.push(vec![
                    p.part.clone(),
                    p.value_text.clone(),
                    p.normalized.map_or_else(|| "n/a".into(), |s| fixed(s, 3)),
                    p.normalized.map_or_else(String::new, bar),
                ]);
            }
            text.push_str(&table.render());
        }
        text.push_str("\nsensitivity: the % change of the metric per % change of the part\n");
        text
    }

    fn csv(&self) -> String {
        let header = [
            "metric",
            "metric_unit",
            "nominal",
            "part",
            "value",
            "unit",
            "normalized",
            "derivative",
        ]
        .map(String::from);
        let mut csv = Csv::new(&header);
        for m in &self.metrics {
            for p in &m.parts {
                csv.push(&[
                    Cell::Text(m.metric.clone()),
                    Cell::Text(m.unit.into()),
                    Cell::Number(Some(m.nominal)),
                    Cell::Text(p.part.clone()),
                    Cell::Number(Some(p.value)),
                    Cell::Text(p.unit.into()),
                    Cell::Number(p.normalized),
                    Cell::Number(p.derivative),
                ]);
            }
        }
        csv.into_text()
    }
}

/// A bar of up to 20 cells for `|s|` up to 1 (longer values are capped), with the sign.
fn bar(s: f64) -> String {
    let cells = ((s.abs() * 20.0).round() as usize).min(20);
    let sign = if s < 0.0 { "−" } else { "+" };
    if cells == 0 {
        String::new()
    } else {
        format!("{sign}{}", "█".repeat(cells))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bars_are_capped_and_signed() {
        assert_eq!(bar(-1.0).chars().count(), 21);
        assert_eq!(bar(5.0).chars().count(), 21);
        assert!(bar(-0.5).starts_with('−'));
        assert_eq!(bar(0.01), "");
    }
}
