//! The solver-backed [`Model`]: an `rolloff_mna::Analyzer` stamped once, whose part
//! values are changed in place, with metrics measured by `rolloff_report::measure` over
//! the circuit's sweep.

use crate::model::Model;
use rolloff_mna::{Analyzer, MnaError};
use rolloff_netlist::{Circuit, Metric, PartId};
use std::sync::Arc;

/// A circuit model backed by the MNA solver.
///
/// Cloning copies the stamped system and the solver's buffers (one clone per worker
/// thread in the parallel analyses); the structure is never re-stamped.
///
/// ```
/// use rolloff_netlist::{compile, CompileOptions};
/// use rolloff_tolerance::{circuit_model::CircuitModel, Model};
/// let text = "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 10k\ncapacitor C1 (out, gnd) 10 nF\n\
///             expect cutoff(out) within 1 .. 2 kHz\n";
/// let circuit = compile(text, &CompileOptions::default()).circuit.unwrap();
/// let mut model = CircuitModel::new(&circuit).unwrap();
/// let metric = circuit.expectations[0].metric;
/// let fc = model.measure(&metric).unwrap();
/// assert!((fc * 2.0 * std::f64::consts::PI * 10e3 * 10e-9 - 1.0).abs() < 1e-6);
/// ```
#[derive(Debug, Clone)]
pub struct CircuitModel {
    nominal: Arc<Circuit>,
    analyzer: Analyzer,
    freqs: Arc<[f64]>,
}

impl CircuitModel {
    /// Stamps `circuit`; metrics are measured over its sweep (or the default sweep).
    ///
    /// # Errors
    /// The solver's structural errors ([`MnaError`]), which name the node or parts.
    pub fn new(circuit: &Circuit) -> Result<Self, MnaError> {
        Self::with_frequencies(circuit, circuit.sweep_or_default().frequencies())
    }

    /// As [`CircuitModel::new`], measuring over `freqs` instead of the circuit's sweep.
    ///
    /// # Errors
    /// As [`CircuitModel::new`].
    pub fn with_frequencies(circuit: &Circuit, freqs: Vec<f64>) -> Result<Self, MnaError> {
        Ok(Self {
            nominal: Arc::new(circuit.clone()),
            analyzer: Analyzer::new(circuit)?,
            freqs: freqs.into(),
        })
    }

    /// The frequencies metrics are measured over.
    pub fn frequencies(&self) -> &[f64] {
        &self.freqs
    }

    /// The analyzer, with whatever values were last set.
    pub fn analyzer(&self) -> &Analyzer {
        &self.analyzer
    }
}

impl Model for CircuitModel {
    /// The circuit as given (nominal values), whatever values were set since.
    fn circuit(&self) -> &Circuit {
        &self.nominal
    }

    fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), String> {
        self.analyzer
            .set_part_value(part, value)
            .map_err(|e| e.to_string())
    }

    fn measure(&mut self, metric: &Metric) -> Result<f64, String> {
        rolloff_report::measure(&mut self.analyzer, metric, &self.freqs).map_err(|e| e.to_string())
    }
}
