//! The crate's error and warning types.

use rolloff_netlist::DriveError;

/// Why a system cannot be solved or a value cannot be given.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MnaError {
    /// A node whose voltage nothing defines.
    #[error("{}", floating_message(node, *dc_only))]
    FloatingNode {
        /// The node's name.
        node: String,
        /// True when the node is connected at AC but its only paths to `gnd` run
        /// through capacitors (so only the DC solve fails).
        dc_only: bool,
    },
    /// A loop of voltage sources (`vsrc` without `rs`, `vcvs` and op-amp outputs) and,
    /// at DC, inductors: their voltages are over-determined.
    #[error("{} form a loop of {}: the loop's voltages are over-determined{}",
        quoted(parts), if *dc_only { "voltage sources and inductors" } else { "voltage sources" },
        if *dc_only { " at DC" } else { "" })]
    SourceLoop {
        /// The parts around the loop.
        parts: Vec<String>,
        /// True when the loop closes only through inductors shorted at DC.
        dc_only: bool,
    },
    /// A set of nodes joined to the rest only through current sources: the currents
    /// into it are forced, its voltage is undefined.
    #[error("{} connected to the rest of the circuit only through the current {} {}{}",
        plural(nodes, "node", "is", "nodes", "are"), if parts.len() == 1 { "source" } else { "sources" },
        quoted(parts), if *dc_only { " at DC (capacitors open)" } else { "" })]
    CurrentCutSet {
        /// The current sources (`isrc` without `rp`, `vccs` outputs) in the cut.
        parts: Vec<String>,
        /// The nodes cut off.
        nodes: Vec<String>,
        /// True when the cut exists only with capacitors open.
        dc_only: bool,
    },
    /// An ideal op-amp with no path from its output back to its inputs.
    #[error(
        "op-amp `{part}` has no feedback path from its output to its inputs; an ideal op-amp needs one (give it a finite `gain` for open-loop use)"
    )]
    OpAmpNoFeedback {
        /// The op-amp.
        part: String,
    },
    /// An ideal op-amp whose feedback runs only through capacitors, so it has no DC
    /// operating point.
    #[error(
        "op-amp `{part}` has no DC feedback path (its feedback runs only through capacitors), so it has no DC operating point"
    )]
    OpAmpNoDcFeedback {
        /// The op-amp.
        part: String,
    },
    /// The matrix is singular (or too ill-conditioned to give any correct digit) at a
    /// frequency, for a reason the structural checks did not name.
    #[error("the system is singular at {freq_hz} Hz near {near}{}", condition_text(*condition))]
    Singular {
        /// The frequency in Hz (0 for DC).
        freq_hz: f64,
        /// The unknown where elimination broke down: `node \`x\`` or `current of \`L1\``.
        near: String,
        /// Its index among the system's unknowns.
        unknown: usize,
        /// The condition-number estimate of the equilibrated matrix; `None` for an
        /// exactly zero pivot.
        condition: Option<f64>,
    },
    /// No drive could be chosen for a transfer.
    #[error(transparent)]
    Drive(#[from] DriveError),
    /// A frequency that is negative or not finite.
    #[error("frequency {freq_hz} Hz is not a finite, non-negative number")]
    BadFrequency {
        /// The offending value.
        freq_hz: f64,
    },
    /// A ratio probe whose denominator node voltage is zero.
    #[error("the ratio's denominator, node `{node}`, is zero at {freq_hz} Hz")]
    ZeroDenominator {
        /// The denominator node.
        node: String,
        /// The frequency in Hz.
        freq_hz: f64,
    },
    /// An impedance that is infinite (the drive sees an open circuit).
    #[error("{what} is infinite at {freq_hz} Hz (an open circuit)")]
    InfiniteImpedance {
        /// What was asked for.
        what: String,
        /// The frequency in Hz.
        freq_hz: f64,
    },
    /// A computed value that is not finite (overflow); reported instead of returned.
    #[error("{what} overflows at {freq_hz} Hz")]
    NotFinite {
        /// What was computed.
        what: String,
        /// The frequency in Hz.
        freq_hz: f64,
    },
    /// A part id not in the circuit.
    #[error("no part with index {0}")]
    UnknownPart(u32),
    /// A node id not in the circuit.
    #[error("no node with index {0}")]
    UnknownNode(u32),
    /// A part whose value is not a parameter (an ideal op-amp, a `vsrc` without `rs`).
    #[error("part `{part}` has no value to set")]
    NoValue {
        /// The part.
        part: String,
    },
    /// A value that is not allowed for the part.
    #[error("`{value}` is not a valid value for part `{part}` (it must be finite{})",
        if *positive { " and positive" } else { "" })]
    BadValue {
        /// The part.
        part: String,
        /// The rejected value.
        value: f64,
        /// Whether the value must also be positive.
        positive: bool,
    },
    /// An output slice of the wrong length.
    #[error("output slice has {got} elements, {expected} expected")]
    OutputLength {
        /// Elements needed.
        expected: usize,
        /// Elements given.
        got: usize,
    },
}

fn floating_message(node: &str, dc_only: bool) -> String {
    if dc_only {
        format!("node `{node}` has no DC path to gnd: its only paths run through capacitors")
    } else {
        format!("node `{node}` has no path to gnd")
    }
}

fn condition_text(condition: Option<f64>) -> String {
    match condition {
        Some(k) => format!(" (condition estimate {k:.3e}: no correct digit is left)"),
        None => " (a zero pivot: the equations are dependent)".to_string(),
    }
}

fn plural(names: &[String], one: &str, is: &str, many: &str, are: &str) -> String {
    if names.len() == 1 {
        format!("{one} {} {is}", quoted(names))
    } else {
        format!("{many} {} {are}", quoted(names))
    }
}

fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Something the analyzer noticed that does not stop it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MnaWarning {
    /// The op-amp's feedback is positive when it is evaluated with a finite-gain model
    /// (swapped inputs, which an ideal model cannot see).
    #[error(
        "op-amp `{part}` has positive feedback (loop gain {loop_gain:.3} at {freq_hz} Hz): are its inputs swapped?"
    )]
    PositiveFeedback {
        /// The op-amp.
        part: String,
        /// The feedback factor `β = ∂(v+ − v−)/∂v_out` found positive.
        loop_gain: f64,
        /// Where it was evaluated (0 for DC).
        freq_hz: f64,
    },
    /// The scaled matrix is ill-conditioned: results may have lost digits.
    #[error(
        "the system is ill-conditioned at {freq_hz} Hz near {near} (condition estimate {condition:.3e}, {count} frequencies affected)"
    )]
    IllConditioned {
        /// The worst frequency seen.
        freq_hz: f64,
        /// The 1-norm condition estimate of the equilibrated matrix there.
        condition: f64,
        /// The unknown with the smallest pivot there.
        near: String,
        /// How many solves were affected.
        count: usize,
    },
}

/// A finding of the bias (DC) analysis.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum BiasWarning {
    /// A capacitor's bias voltage magnitude exceeds its `rated` value.
    #[error("capacitor `{part}` has {} V across it at bias, beyond its {} V rating", sig(*voltage), sig(*rated))]
    OverRated {
        /// The capacitor.
        part: String,
        /// Its bias voltage (first node minus second).
        voltage: f64,
        /// Its rating.
        rated: f64,
    },
    /// A `polar` capacitor whose first node is negative with respect to its second.
    #[error("polar capacitor `{part}` is reverse-biased ({} V, first node minus second)", sig(*voltage))]
    ReversePolarity {
        /// The capacitor.
        part: String,
        /// Its bias voltage.
        voltage: f64,
    },
    /// An op-amp output outside its `swing`.
    #[error("op-amp `{part}` output sits at {} V at bias, outside its swing {} .. {} V", sig(*voltage), sig(*low), sig(*high))]
    SwingExceeded {
        /// The op-amp.
        part: String,
        /// Its output bias voltage.
        voltage: f64,
        /// Lower swing limit.
        low: f64,
        /// Upper swing limit.
        high: f64,
    },
}

/// A number to 6 significant digits, without trailing zeros.
fn sig(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let digits = (5 - v.abs().log10().floor() as i32).clamp(0, 15) as usize;
    let text = format!("{v:.digits$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}
