//! `rolloff bias`: DC node voltages and capacitor voltages against their ratings.

use rolloff_mna::{BiasReport, BiasWarning};
use rolloff_netlist::{Circuit, NodeId, PartId, PartKind};
use serde::Serialize;

use super::{Outcome, Reported, Session};
use crate::args::{BiasArgs, Format};
use crate::csv::{Cell, Csv};
use crate::eng::eng;
use crate::json::to_json;
use crate::table::{Align, Table};

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or has no DC operating point.
pub fn run(args: &BiasArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let mut analyzer = session.analyzer(&loaded)?;
    let report = analyzer
        .bias()
        .map_err(|e| session.error(&format!("{}: bias: {e}", loaded.source.name)))?;
    let circuit = &loaded.circuit;
    let view = BiasView::new(circuit, &report, loaded.source.name.clone());
    let text = match args.format {
        Format::Table => view.table(),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    for warning in &report.warnings {
        session.warning(&format!("{}: {warning}", loaded.source.name));
    }
    Ok(Outcome::Pass)
}

/// The JSON document of `rolloff bias --format json` (field names are stable).
#[derive(Debug, Serialize)]
struct BiasView {
    /// The file as given.
    file: String,
    /// The circuit's title, if any.
    title: Option<String>,
    /// Every node but `gnd`, in circuit order.
    nodes: Vec<NodeBias>,
    /// Every capacitor, in circuit order.
    capacitors: Vec<CapacitorBias>,
    /// The findings of the bias check.
    warnings: Vec<WarningView>,
}

#[derive(Debug, Serialize)]
struct NodeBias {
    name: String,
    voltage_v: f64,
}

#[derive(Debug, Serialize)]
struct CapacitorBias {
    name: String,
    voltage_v: f64,
    rated_v: Option<f64>,
    polar: bool,
    /// `ok`, `over_rated` or `reverse_polarity`.
    status: &'static str,
}

#[derive(Debug, Serialize)]
struct WarningView {
    /// `over_rated`, `reverse_polarity` or `swing_exceeded`.
    kind: &'static str,
    part: String,
    message: String,
}

impl BiasView {
    fn new(circuit: &Circuit, report: &BiasReport, file: String) -> Self {
        let nodes = (1..circuit.nodes.len())
            .map(|i| {
                let id = NodeId(i as u32);
                NodeBias {
                    name: circuit.node_name(id).to_string(),
                    voltage_v: report.node_voltage(id),
                }
            })
            .collect();
        let capacitors = circuit
            .parts
            .iter()
            .enumerate()
            .filter_map(|(i, part)| {
                let PartKind::Capacitor { rated, polar, .. } = part.kind else {
                    return None;
                };
                let voltage_v = report.voltage_across(circuit, PartId(i as u32))?;
                Some(CapacitorBias {
                    name: part.name.clone(),
                    voltage_v,
                    rated_v: rated,
                    polar,
                    status: status(&report.warnings, &part.name),
                })
            })
            .collect();
        let warnings = report.warnings.iter().map(warning_view).collect();
        Self {
            file,
            title: circuit.title.clone(),
            nodes,
            capacitors,
            warnings,
        }
    }

    fn table(&self) -> String {
        let mut nodes = Table::new(&[("node", Align::Left), ("bias [V]", Align::Right)]);
        for node in &self.nodes {
            nodes.push(vec![node.name.clone(), eng(node.voltage_v, "V")]);
        }
        let mut text = nodes.render();
        if !self.capacitors.is_empty() {
            let mut caps = Table::new(&[
                ("capacitor", Align::Left),
                ("across [V]", Align::Right),
                ("rated [V]", Align::Right),
                ("polar", Align::Left),
                ("status", Align::Left),
            ]);
            for cap in &self.capacitors {
                caps.push(vec![
                    cap.name.clone(),
                    eng(cap.voltage_v, "V"),
                    cap.rated_v.map_or_else(|| "—".to_string(), |r| eng(r, "V")),
                    if cap.polar { "yes" } else { "no" }.to_string(),
                    cap.status.replace('_', " "),
                ]);
            }
            text.push('\n');
            text.push_str(&caps.render());
        }
        text
    }

    fn csv(&self) -> String {
        let header = ["kind", "name", "voltage_v", "rated_v", "status"].map(String::from);
        let mut csv = Csv::new(&header);
        for node in &self.nodes {
            csv.push(&[
                Cell::Text("node".into()),
                Cell::Text(node.name.clone()),
                Cell::Number(Some(node.voltage_v)),
                Cell::Number(None),
                Cell::Text(String::new()),
            ]);
        }
        for cap in &self.capacitors {
            csv.push(&[
                Cell::Text("capacitor".into()),
                Cell::Text(cap.name.clone()),
                Cell::Number(Some(cap.voltage_v)),
                Cell::Number(cap.rated_v),
                Cell::Text(cap.status.into()),
            ]);
        }
        csv.into_text()
    }
}

fn status(warnings: &[BiasWarning], part: &str) -> &'static str {
    for warning in warnings {
        match warning {
            BiasWarning::OverRated { part: p, .. } if p == part => return "over_rated",
            BiasWarning::ReversePolarity { part: p, .. } if p == part => {
                return "reverse_polarity";
            }
            _ => {}
        }
    }
    "ok"
}

fn warning_view(warning: &BiasWarning) -> WarningView {
    let (kind, part) = match warning {
        BiasWarning::OverRated { part, .. } => ("over_rated", part.clone()),
        BiasWarning::ReversePolarity { part, .. } => ("reverse_polarity", part.clone()),
        BiasWarning::SwingExceeded { part, .. } => ("swing_exceeded", part.clone()),
        _ => ("other", String::new()),
    };
    WarningView {
        kind,
        part,
        message: warning.to_string(),
    }
}
