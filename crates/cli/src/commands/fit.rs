//! `rolloff fit FILE`: solves the `?` parts for the file's `=` targets, then shows the
//! standard values around each exact value and the best two-part combination, each
//! with the metric it actually gives on the whole circuit.

use std::fmt::Write as _;

use clap::Args;
use rolloff_tolerance::fit::{Connection, FitReport};
use rolloff_tolerance::series::Series;
use rolloff_tolerance::{FitOptions, fit_all};
use serde::Serialize;

use super::check::unit_name;
use super::design::{self, part_symbol, unit_ascii};
use super::values::{parse_series, percent};
use super::{Outcome, Reported, Session};
use crate::args::{FileArg, Format};
use crate::csv::{Cell, Csv};
use crate::eng::{eng, quantity};
use crate::json::{finite, to_json};
use crate::table::{Align, Table};

/// `rolloff fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// The circuit file, with `?` parts and as many `expect … = value` targets.
    #[command(flatten)]
    pub input: FileArg,
    /// The standard series the exact values are rounded to.
    #[arg(long, value_name = "SERIES", default_value = "E24", value_parser = parse_series)]
    pub series: Series,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or solved, has nothing to fit, or the
/// target cannot be met in the fit range.
pub fn run(args: &FitArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let model = design::model(session, &loaded)?;
    let options = FitOptions {
        series: args.series,
        ..FitOptions::default()
    };
    let reports = fit_all(&model, &options).map_err(|e| design::failed(session, &loaded, &e))?;
    let circuit = &loaded.circuit;
    let parts: Vec<PartView> = reports
        .iter()
        .map(|r| {
            let metric = circuit.expectations[r.target.expectation].metric;
            PartView::new(r, unit_name(design::metric_unit(circuit, &metric)))
        })
        .collect();
    let view = FitView {
        file: loaded.source.name.clone(),
        title: circuit.title.clone(),
        series: args.series.name(),
        parts,
    };
    let text = match args.format {
        Format::Table => table(&view, &reports, circuit),
        Format::Csv => csv(&view),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    Ok(Outcome::Pass)
}

/// The JSON document of `rolloff fit --format json` (field names are stable).
#[derive(Debug, Serialize)]
struct FitView {
    file: String,
    title: Option<String>,
    series: &'static str,
    parts: Vec<PartView>,
}

#[derive(Debug, Serialize)]
struct PartView {
    /// The part's qualified name.
    name: String,
    /// `resistor`, `capacitor` or `inductor`.
    kind: &'static str,
    /// `ohm`, `F` or `H`.
    unit: &'static str,
    range_low: f64,
    range_high: f64,
    /// The expectation met, as written.
    target: String,
    /// The metric's label (`cutoff(out)`).
    metric: String,
    /// The unit of the metric's values (`Hz`, `dB`, …).
    metric_unit: &'static str,
    target_value: f64,
    /// The value that meets the target.
    exact: f64,
    /// The metric at `exact`.
    achieved: f64,
    evaluations: usize,
    /// The standard values just below and above `exact`.
    standard: Vec<CandidateView>,
    /// The best two-part combination, if the series has one.
    best_pair: Option<PairView>,
}

#[derive(Debug, Serialize)]
struct CandidateView {
    value: f64,
    code: Option<String>,
    /// Whether it is the nearest standard value on a log scale.
    nearest: bool,
    /// The metric with this value; `null` if it could not be measured.
    metric_value: Option<f64>,
    /// `(metric − target) / target`.
    relative_error: Option<f64>,
    /// Why the metric could not be measured.
    error: Option<String>,
}

#[derive(Debug, Serialize)]
struct PairView {
    /// `series` or `parallel`.
    connection: &'static str,
    a: f64,
    a_code: Option<String>,
    b: f64,
    b_code: Option<String>,
    /// The combined value.
    value: f64,
    metric_value: Option<f64>,
    relative_error: Option<f64>,
    error: Option<String>,
}

impl PartView {
    fn new(r: &FitReport, metric_unit: &'static str) -> Self {
        let standard = r
            .standard
            .iter()
            .map(|c| CandidateView {
                value: c.value.value,
                code: c.value.code(),
                nearest: c.nearest,
                metric_value: c.metric.as_ref().ok().copied().and_then(finite),
                relative_error: c.relative_error.and_then(finite),
                error: c.metric.as_ref().err().cloned(),
            })
            .collect();
        let best_pair = r.best_pair.as_ref().map(|p| PairView {
            connection: match p.connection {
                Connection::Series => "series",
                Connection::Parallel => "parallel",
            },
            a: p.combination.a.value,
            a_code: p.combination.a.code(),
            b: p.combination.b.value,
            b_code: p.combination.b.code(),
            value: p.combination.value,
            metric_value: p.metric.as_ref().ok().copied().and_then(finite),
            relative_error: p.relative_error.and_then(finite),
            error: p.metric.as_ref().err().cloned(),
        });
        Self {
            name: r.name.clone(),
            kind: r.kind,
            unit: unit_ascii(part_symbol(r.kind)),
            range_low: r.range.low,
            range_high: r.range.high,
            target: r.target.text.clone(),
            metric: r.target.label.clone(),
            metric_unit,
            target_value: r.target.value,
            exact: r.exact,
            achieved: r.achieved,
            evaluations: r.evaluations,
            standard,
            best_pair,
        }
    }
}

fn table(view: &FitView, reports: &[FitReport], circuit: &rolloff_netlist::Circuit) -> String {
    let mut text = String::new();
    if let Some(title) = &view.title {
        text.push_str(title);
        text.push_str("\n\n");
    }
    for (i, (part, report)) in view.parts.iter().zip(reports).enumerate() {
        if i > 0 {
            text.push('\n');
        }
        let unit = part_symbol(part.kind);
        let metric = circuit.expectations[report.target.expectation].metric;
        let metric_unit = design::metric_unit(circuit, &metric);
        let show_metric =
            |v: Option<f64>| v.map_or_else(|| "n/a".to_string(), |v| quantity(v, metric_unit));
        let _ = writeln!(
            text,
            "{} ({}) = {} for `{}`",
            part.name,
            part.kind,
            eng(part.exact, unit),
            part.target
        );
        let _ = write!(
            text,
            "  gives {} = {} ({} evaluations, searched {} .. {})\n\n",
            part.metric,
            quantity(part.achieved, metric_unit),
            part.evaluations,
            eng(part.range_low, unit),
            eng(part.range_high, unit)
        );
        let mut table = Table::new(&[
            (view.series, Align::Left),
            ("value", Align::Right),
            ("code", Align::Left),
            (part.metric.as_str(), Align::Right),
            ("error", Align::Right),
        ]);
        for c in &part.standard {
            let role = if c.value < part.exact {
                "below"
            } else {
                "above"
            };
            table.push(vec![
                if c.nearest {
                    format!("{role} (nearest)")
                } else {
                    role.to_string()
                },
                eng(c.value, unit),
                c.code.clone().unwrap_or_default(),
                show_metric(c.metric_value),
                c.relative_error.map_or_else(|| "n/a".into(), percent),
            ]);
        }
        if let Some(p) = &part.best_pair {
            // The symbol says how the two are wired: `+` in series, `‖` in parallel.
            let joined = if p.connection == "series" { "+" } else { "‖" };
            table.push(vec![
                format!("{} pair", p.connection),
                eng(p.value, unit),
                format!(
                    "{} {joined} {}",
                    p.a_code.clone().unwrap_or_default(),
                    p.b_code.clone().unwrap_or_default()
                ),
                show_metric(p.metric_value),
                p.relative_error.map_or_else(|| "n/a".into(), percent),
            ]);
        }
        text.push_str(&table.render());
    }
    text
}

fn csv(view: &FitView) -> String {
    let header = [
        "part",
        "candidate",
        "value",
        "unit",
        "code",
        "metric",
        "metric_value",
        "metric_unit",
        "relative_error",
    ]
    .map(String::from);
    let mut csv = Csv::new(&header);
    for part in &view.parts {
        let row =
            |candidate: &str, value: f64, code: String, metric: Option<f64>, error: Option<f64>| {
                vec![
                    Cell::Text(part.name.clone()),
                    Cell::Text(candidate.to_string()),
                    Cell::Number(Some(value)),
                    Cell::Text(part.unit.into()),
                    Cell::Text(code),
                    Cell::Text(part.metric.clone()),
                    Cell::Number(metric),
                    Cell::Text(part.metric_unit.into()),
                    Cell::Number(error),
                ]
            };
        csv.push(&row(
            "exact",
            part.exact,
            String::new(),
            Some(part.achieved),
            None,
        ));
        for c in &part.standard {
            let name = match (c.value < part.exact, c.nearest) {
                (true, true) => "below_nearest",
                (true, false) => "below",
                (false, true) => "above_nearest",
                (false, false) => "above",
            };
            csv.push(&row(
                name,
                c.value,
                c.code.clone().unwrap_or_default(),
                c.metric_value,
                c.relative_error,
            ));
        }
        if let Some(p) = &part.best_pair {
            let code = format!(
                "{} {}",
                p.a_code.clone().unwrap_or_default(),
                p.b_code.clone().unwrap_or_default()
            );
            let name = format!("{}_pair", p.connection);
            csv.push(&row(&name, p.value, code, p.metric_value, p.relative_error));
        }
    }
    csv.into_text()
}
