//! The result of the DC bias analysis.

use rolloff_netlist::{Circuit, NodeId, PartId, PartKind};

use crate::error::BiasWarning;

/// Node voltages and part currents at DC, with the checks against ratings.
#[derive(Debug, Clone, PartialEq)]
pub struct BiasReport {
    /// Node voltages in V, indexed by [`NodeId`] (index 0, `gnd`, is 0).
    pub node_voltages: Vec<f64>,
    /// Part currents in A, indexed by [`PartId`], positive from the part's first node
    /// to its second through the part (for an op-amp, from its output node into it;
    /// for a source, through the source including its `rs`/`rp`). Capacitors carry 0.
    pub part_currents: Vec<Option<f64>>,
    /// Capacitors beyond their rating or reverse-biased, op-amp outputs beyond their
    /// swing.
    pub warnings: Vec<BiasWarning>,
}

impl BiasReport {
    /// The DC voltage of a node to `gnd` (0 for an id not in the circuit).
    pub fn node_voltage(&self, n: NodeId) -> f64 {
        self.node_voltages.get(n.index()).copied().unwrap_or(0.0)
    }

    /// The DC voltage across a two-terminal part (first node minus second), or the
    /// output voltage of an op-amp, or the output voltage of a controlled source;
    /// `None` for an id not in the circuit.
    pub fn voltage_across(&self, circuit: &Circuit, p: PartId) -> Option<f64> {
        let kind = &circuit.parts.get(p.index())?.kind;
        let (a, b) = match *kind {
            PartKind::Resistor { a, b, .. }
            | PartKind::Capacitor { a, b, .. }
            | PartKind::Inductor { a, b, .. } => (a, b),
            PartKind::VoltageSource { pos, neg, .. } => (pos, neg),
            PartKind::CurrentSource { from, to, .. } => (from, to),
            PartKind::Vcvs {
                out_pos, out_neg, ..
            }
            | PartKind::Vccs {
                out_pos, out_neg, ..
            } => (out_pos, out_neg),
            PartKind::OpAmp { out, .. } => (out, NodeId::GND),
        };
        Some(self.node_voltage(a) - self.node_voltage(b))
    }

    /// The DC current of a part (see [`BiasReport::part_currents`]).
    pub fn part_current(&self, p: PartId) -> Option<f64> {
        self.part_currents.get(p.index()).copied().flatten()
    }
}
