//! rolloff-netlist: the circuit description language.
//!
//! Owns the text side of rolloff: the `nom` grammar of `.rol` files, the syntax tree
//! with byte spans, elaboration (lets, dimensions, blocks, chains, units) into a flat
//! validated [`Circuit`], diagnostics with spans, and printing a circuit back in the
//! language. It also owns the [`Circuit`] data model and its [`CircuitBuilder`], so
//! programs can make circuits without text.
//!
//! It does not solve anything (that is `rolloff-mna`), does not read files, and does
//! not render diagnostics to a terminal in colour (the CLI does).

pub mod circuit;

pub use circuit::{
    BuildError, Circuit, CircuitBuilder, Comparison, Deviation, DriveError, Expectation, FitRange,
    Metric, MetricKind, MetricOptions, NodeId, Part, PartId, PartKind, Probe, ProbeId, ProbeKind,
    Span, Sweep, Target, Tolerance, Unit,
};
