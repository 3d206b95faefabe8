//! Closed-form models for the analyses' unit tests: a circuit for names, tolerances and
//! expectations, and a formula in place of the solver.

// Formulas share one signature, fallible or not.
#![allow(clippy::unnecessary_wraps)]

use crate::model::Model;
use rolloff_netlist::{
    Circuit, Comparison, Expectation, Metric, MetricKind, MetricOptions, PartId, Span, Target, Unit,
};

/// A metric computed from the part values (indexed like `Circuit::parts`).
pub type Formula = fn(&[f64], &Metric) -> Result<f64, String>;

/// A [`Model`] whose metrics come from a formula.
#[derive(Clone)]
pub struct FormulaModel {
    circuit: Circuit,
    values: Vec<f64>,
    formula: Formula,
}

impl FormulaModel {
    pub fn new(circuit: Circuit, formula: Formula) -> Self {
        let values = circuit
            .parts
            .iter()
            .map(|p| p.kind.passive_value().map_or(0.0, |v| v.0))
            .collect();
        Self {
            circuit,
            values,
            formula,
        }
    }
}

impl Model for FormulaModel {
    fn circuit(&self) -> &Circuit {
        &self.circuit
    }

    fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), String> {
        if !(value.is_finite() && value > 0.0) {
            return Err(format!("{value} is not positive"));
        }
        self.values[part.index()] = value;
        Ok(())
    }

    fn measure(&mut self, metric: &Metric) -> Result<f64, String> {
        (self.formula)(&self.values, metric)
    }
}

/// An expectation on node `node` of `circuit`.
pub fn expectation(
    circuit: &Circuit,
    kind: MetricKind,
    node: &str,
    comparison: Comparison,
    unit: Unit,
    text: &str,
) -> Expectation {
    Expectation {
        metric: Metric {
            kind,
            target: Target::Node(circuit.node(node).unwrap_or(rolloff_netlist::NodeId::GND)),
            options: MetricOptions::default(),
        },
        comparison,
        unit,
        text: text.to_string(),
        span: Span::default(),
    }
}

/// `fc = 1/(2π·R·C)` with R = part 1, C = part 2.
pub fn rc_cutoff(values: &[f64], _metric: &Metric) -> Result<f64, String> {
    Ok(1.0 / (std::f64::consts::TAU * values[1] * values[2]))
}
