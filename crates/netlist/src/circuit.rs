//! The elaborated circuit: a flat, validated description that every later stage reads.
//!
//! A [`Circuit`] holds nodes, parts (passives, sources, controlled sources, op-amps),
//! the analysis settings (`sweep`, `drive`), the probes and the expectations, each
//! with the [`Span`] of the source text it came from (a zero span when the circuit was
//! made by the [`CircuitBuilder`]). Values are plain SI numbers (Ω, F, H, V, A, S, Hz,
//! radians are never used: phases are in degrees as the language writes them).

use std::collections::HashMap;
use std::fmt;

/// A byte range `start..end` in the source text.
///
/// Spans are plain offsets with no lifetime, so they can be stored, copied and
/// serialised; line and column are computed when a diagnostic is rendered.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct Span {
    /// Byte offset of the first byte.
    pub start: usize,
    /// Byte offset one past the last byte.
    pub end: usize,
}

impl Span {
    /// A span from `start` to `end` (byte offsets).
    pub const fn new(start: usize, end: usize) -> Self {
        Self { start, end }
    }

    /// The smallest span covering both.
    #[must_use]
    pub fn join(self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end.max(other.end))
    }
}

/// Index of a node in [`Circuit::nodes`]. Index 0 is always the reference node `gnd`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct NodeId(pub u32);

impl NodeId {
    /// The reference node `gnd`.
    pub const GND: NodeId = NodeId(0);

    /// The index as `usize`.
    pub fn index(self) -> usize {
        self.0 as usize
    }

    /// Whether this is the reference node.
    pub fn is_ground(self) -> bool {
        self.0 == 0
    }
}

/// Index of a part in [`Circuit::parts`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct PartId(pub u32);

impl PartId {
    /// The index as `usize`.
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// Index of a probe in [`Circuit::probes`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct ProbeId(pub u32);

impl ProbeId {
    /// The index as `usize`.
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// A relative tolerance band: the part lies in `value·(1+lower) ..= value·(1+upper)`.
///
/// `tol 5%` is `{ lower: -0.05, upper: 0.05 }`; `tol -20% .. +80%` is
/// `{ lower: -0.2, upper: 0.8 }`. Invariant: `-1 < lower <= upper`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerance {
    /// Lower relative deviation (negative or zero for the usual bands).
    pub lower: f64,
    /// Upper relative deviation.
    pub upper: f64,
}

impl Tolerance {
    /// A symmetric band `±fraction` (`0.01` for 1 %).
    pub fn symmetric(fraction: f64) -> Self {
        Self {
            lower: -fraction,
            upper: fraction,
        }
    }
}

/// The search range of a part whose value is to be fitted (`?` or `? in lo .. hi`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitRange {
    /// Smallest value the fit may return (SI units of the part's value).
    pub low: f64,
    /// Largest value the fit may return.
    pub high: f64,
}

/// One elaborated part with its qualified name (`R1`, `S1.C`, `LAD.s2.R`).
#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    /// Qualified, unique name.
    pub name: String,
    /// What the part is and how it connects.
    pub kind: PartKind,
    /// Where the part's line is in the source (zero for built circuits).
    pub span: Span,
}

/// The part kinds of the language, with their connections and values in SI units.
///
/// Currents through two-terminal parts are positive from the first node to the second.
#[derive(Debug, Clone, PartialEq)]
pub enum PartKind {
    /// `resistor NAME (a, b) VALUE [tol …]`; `value` in Ω.
    Resistor {
        /// First node.
        a: NodeId,
        /// Second node.
        b: NodeId,
        /// Resistance in Ω (> 0).
        value: f64,
        /// Tolerance band, if given.
        tol: Option<Tolerance>,
        /// Set when the value is to be fitted (`?`); `value` then holds a start guess.
        fit: Option<FitRange>,
    },
    /// `capacitor NAME (a, b) VALUE [tol …] [rated V] [polar]`; `value` in F.
    Capacitor {
        /// First node (the positive one for a `polar` part).
        a: NodeId,
        /// Second node.
        b: NodeId,
        /// Capacitance in F (> 0).
        value: f64,
        /// Tolerance band, if given.
        tol: Option<Tolerance>,
        /// Set when the value is to be fitted (`?`).
        fit: Option<FitRange>,
        /// Voltage rating in V, compared with the magnitude of the bias voltage.
        rated: Option<f64>,
        /// The first node must stay positive with respect to the second at bias.
        polar: bool,
    },
    /// `inductor NAME (a, b) VALUE [tol …]`; `value` in H.
    Inductor {
        /// First node.
        a: NodeId,
        /// Second node.
        b: NodeId,
        /// Inductance in H (> 0).
        value: f64,
        /// Tolerance band, if given.
        tol: Option<Tolerance>,
        /// Set when the value is to be fitted (`?`).
        fit: Option<FitRange>,
    },
    /// `vsrc NAME (+, -) [amplitude] [phase deg] [bias V] [rs Ω]`.
    VoltageSource {
        /// Positive node.
        pos: NodeId,
        /// Negative node.
        neg: NodeId,
        /// Small-signal (peak) EMF amplitude in V; `None` for a DC-only source.
        amplitude: Option<f64>,
        /// Phase of the small-signal EMF in degrees.
        phase_deg: f64,
        /// DC value in V used by the bias analysis (0 when absent).
        bias: Option<f64>,
        /// Series resistance in Ω, if any.
        rs: Option<f64>,
    },
    /// `isrc NAME (from, to) [amplitude] [phase deg] [bias A] [rp Ω]`.
    ///
    /// The current flows through the source from `from` to `to`: drawn out of `from`,
    /// pushed into `to`.
    CurrentSource {
        /// Node the current is drawn from.
        from: NodeId,
        /// Node the current is pushed into.
        to: NodeId,
        /// Small-signal (peak) amplitude in A; `None` for a DC-only source.
        amplitude: Option<f64>,
        /// Phase in degrees.
        phase_deg: f64,
        /// DC value in A (0 when absent).
        bias: Option<f64>,
        /// Parallel resistance in Ω, if any.
        rp: Option<f64>,
    },
    /// `vcvs NAME (out+, out-) from (in+, in-) gain G`.
    Vcvs {
        /// Positive output node.
        out_pos: NodeId,
        /// Negative output node.
        out_neg: NodeId,
        /// Positive controlling node.
        in_pos: NodeId,
        /// Negative controlling node.
        in_neg: NodeId,
        /// Voltage gain (V/V).
        gain: f64,
    },
    /// `vccs NAME (out+, out-) from (in+, in-) gm S`: a current `gm·(v(in+)−v(in−))`
    /// flows through the source from `out_pos` to `out_neg`.
    Vccs {
        /// Node the current is drawn from.
        out_pos: NodeId,
        /// Node the current is pushed into.
        out_neg: NodeId,
        /// Positive controlling node.
        in_pos: NodeId,
        /// Negative controlling node.
        in_neg: NodeId,
        /// Transconductance in S.
        gm: f64,
    },
    /// `opamp NAME (out) from (in+, in-) [gain A] [gbw Hz] [swing lo .. hi]`; the output
    /// is referred to `gnd`.
    OpAmp {
        /// Output node.
        out: NodeId,
        /// Non-inverting input.
        in_pos: NodeId,
        /// Inverting input.
        in_neg: NodeId,
        /// Open-loop DC gain (V/V); `None` for an ideal (nullor) model.
        gain: Option<f64>,
        /// Gain-bandwidth product in Hz; with `gain`, a single-pole model.
        gbw: Option<f64>,
        /// Output swing limits `(low, high)` in V, checked by the bias analysis.
        swing: Option<(f64, f64)>,
    },
}

impl PartKind {
    /// The nodes the part touches, in the order written.
    pub fn nodes(&self) -> Vec<NodeId> {
        match *self {
            PartKind::Resistor { a, b, .. }
            | PartKind::Capacitor { a, b, .. }
            | PartKind::Inductor { a, b, .. } => vec![a, b],
            PartKind::VoltageSource { pos, neg, .. } => vec![pos, neg],
            PartKind::CurrentSource { from, to, .. } => vec![from, to],
            PartKind::Vcvs {
                out_pos,
                out_neg,
                in_pos,
                in_neg,
                ..
            }
            | PartKind::Vccs {
                out_pos,
                out_neg,
                in_pos,
                in_neg,
                ..
            } => {
                vec![out_pos, out_neg, in_pos, in_neg]
            }
            PartKind::OpAmp {
                out,
                in_pos,
                in_neg,
                ..
            } => vec![out, in_pos, in_neg],
        }
    }

    /// The language keyword of this kind (`resistor`, `vsrc`, …).
    pub fn keyword(&self) -> &'static str {
        match self {
            PartKind::Resistor { .. } => "resistor",
            PartKind::Capacitor { .. } => "capacitor",
            PartKind::Inductor { .. } => "inductor",
            PartKind::VoltageSource { .. } => "vsrc",
            PartKind::CurrentSource { .. } => "isrc",
            PartKind::Vcvs { .. } => "vcvs",
            PartKind::Vccs { .. } => "vccs",
            PartKind::OpAmp { .. } => "opamp",
        }
    }

    /// The main value of a passive part (Ω, F or H) and its tolerance; `None` for others.
    pub fn passive_value(&self) -> Option<(f64, Option<Tolerance>)> {
        match *self {
            PartKind::Resistor { value, tol, .. }
            | PartKind::Capacitor { value, tol, .. }
            | PartKind::Inductor { value, tol, .. } => Some((value, tol)),
            _ => None,
        }
    }

    /// Whether this is an independent source with a small-signal amplitude.
    pub fn is_ac_source(&self) -> bool {
        matches!(
            self,
            PartKind::VoltageSource {
                amplitude: Some(_),
                ..
            } | PartKind::CurrentSource {
                amplitude: Some(_),
                ..
            }
        )
    }
}

/// The frequencies an analysis visits, as written by `sweep`.
#[derive(Debug, Clone, PartialEq)]
pub enum Sweep {
    /// `sweep F1 to F2 per_decade N`: logarithmic, both ends included.
    Log {
        /// First frequency in Hz (> 0).
        start: f64,
        /// Last frequency in Hz (> start).
        stop: f64,
        /// Points per decade (≥ 1).
        per_decade: u32,
    },
    /// `sweep F1 to F2 every DF`: linear, both ends included where they fall on the grid.
    Linear {
        /// First frequency in Hz (≥ 0).
        start: f64,
        /// Last frequency in Hz.
        stop: f64,
        /// Step in Hz (> 0).
        step: f64,
    },
    /// `sweep at F1, F2, …`: spot frequencies in the order written.
    List(Vec<f64>),
}

impl Default for Sweep {
    /// 1 Hz to 100 MHz at 50 points per decade, as the language defines.
    fn default() -> Self {
        Sweep::Log {
            start: 1.0,
            stop: 1e8,
            per_decade: 50,
        }
    }
}

impl Sweep {
    /// The frequencies in Hz, in sweep order.
    ///
    /// ```
    /// use rolloff_netlist::Sweep;
    /// let f = Sweep::Log { start: 10.0, stop: 1000.0, per_decade: 2 }.frequencies();
    /// assert_eq!(f.len(), 5);
    /// assert!((f[2] - 100.0).abs() < 1e-9);
    /// ```
    pub fn frequencies(&self) -> Vec<f64> {
        match self {
            Sweep::Log {
                start,
                stop,
                per_decade,
            } => {
                let decades = (stop / start).log10();
                let steps = (decades * f64::from(*per_decade) - 1e-9).ceil().max(0.0) as usize;
                (0..=steps)
                    .map(|i| {
                        if i == steps {
                            *stop
                        } else {
                            start * 10f64.powf(i as f64 / f64::from(*per_decade))
                        }
                    })
                    .collect()
            }
            Sweep::Linear { start, stop, step } => {
                let steps = ((stop - start) / step + 1e-9).floor().max(0.0) as usize;
                (0..=steps).map(|i| start + i as f64 * step).collect()
            }
            Sweep::List(points) => points.clone(),
        }
    }
}

/// What a probe measures.
#[derive(Debug, Clone, PartialEq)]
pub enum ProbeKind {
    /// `probe out`: the node voltage to `gnd`.
    Node(NodeId),
    /// `probe g = out / tip`: a ratio of two node voltages.
    Ratio {
        /// Numerator node.
        num: NodeId,
        /// Denominator node.
        den: NodeId,
    },
    /// `probe d = out - mid`: a difference of two node voltages.
    Difference {
        /// Node taken positive.
        pos: NodeId,
        /// Node taken negative.
        neg: NodeId,
    },
    /// `probe i1 = current R1`: the current through a part, first node to second.
    Current(PartId),
    /// `probe zin`: the impedance the drive sees, drive removed.
    InputImpedance,
    /// `probe zo = zout out`: the impedance at a node to `gnd`, all independent
    /// sources zeroed (their `rs`/`rp` kept).
    OutputImpedance(NodeId),
}

/// A named probe.
#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    /// Probe name (a node probe is named after its node).
    pub name: String,
    /// What it measures.
    pub kind: ProbeKind,
    /// Passband reference frequency in Hz (`ref 1 kHz`), if given.
    pub reference: Option<f64>,
    /// Source location.
    pub span: Span,
}

/// What an expectation or metric is measured on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Target {
    /// A declared probe.
    Probe(ProbeId),
    /// A node voltage to `gnd` that is not (necessarily) a declared probe.
    Node(NodeId),
    /// The current through a part (`current R1`).
    Current(PartId),
    /// A part, for `bias(part)`: the voltage across it, first node minus second.
    Part(PartId),
}

/// The metrics the language names. Frequencies are in Hz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MetricKind {
    /// The single −3 dB (or `level`) point.
    Cutoff,
    /// The lower −3 dB point of a band-pass.
    CutoffLow,
    /// The upper −3 dB point.
    CutoffHigh,
    /// `cutoff_high − cutoff_low`.
    Bandwidth,
    /// The reference gain of the passband (dB).
    PassbandGain,
    /// The centre of a band-pass (Hz).
    Resonance,
    /// Quality factor `resonance / bandwidth`.
    Q,
    /// The largest gain (dB).
    PeakGain,
    /// Where the largest gain is (Hz).
    PeakFreq,
    /// `peak_gain − passband_gain` (dB).
    Peaking,
    /// Where the smallest gain of a notch is (Hz).
    NotchFreq,
    /// How deep the notch is below the passband (dB, positive).
    NotchDepth,
    /// `gain(p, f)` in dB.
    Gain {
        /// Frequency in Hz.
        freq: f64,
    },
    /// `phase(p, f)` in degrees.
    Phase {
        /// Frequency in Hz.
        freq: f64,
    },
    /// `group_delay(p, f)` in s.
    GroupDelay {
        /// Frequency in Hz.
        freq: f64,
    },
    /// `slope(p, f1, f2)`: signed average dB/decade between two frequencies.
    Slope {
        /// First frequency in Hz.
        f1: f64,
        /// Second frequency in Hz.
        f2: f64,
    },
    /// `impedance(p, f)` in Ω (magnitude).
    Impedance {
        /// Frequency in Hz.
        freq: f64,
    },
    /// `bias(node)` or `bias(part)` in V.
    Bias,
}

/// Options a cutoff-family metric accepts.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct MetricOptions {
    /// Passband reference frequency in Hz (`ref 1 kHz`), overriding the probe's.
    pub reference: Option<f64>,
    /// The level in dB relative to the passband (`level -6 dB`); −3.0103 dB when absent.
    pub level_db: Option<f64>,
}

/// A metric applied to a target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Metric {
    /// Which metric.
    pub kind: MetricKind,
    /// What it is measured on.
    pub target: Target,
    /// `ref` and `level`.
    pub options: MetricOptions,
}

/// The unit a compared quantity is expressed in (values are stored in this unit).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    /// Hz.
    Hertz,
    /// dB.
    Decibel,
    /// Degrees.
    Degree,
    /// dB per decade (dB/oct values are converted).
    DecibelPerDecade,
    /// Ω.
    Ohm,
    /// V.
    Volt,
    /// A.
    Ampere,
    /// s.
    Second,
    /// A plain number (for `q`).
    Dimensionless,
}

impl Unit {
    /// The symbol used when printing (`Hz`, `dB`, `deg`, `dB/dec`, `Ω`, `V`, `A`, `s`, ``).
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Hertz => "Hz",
            Unit::Decibel => "dB",
            Unit::Degree => "deg",
            Unit::DecibelPerDecade => "dB/dec",
            Unit::Ohm => "Ω",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Second => "s",
            Unit::Dimensionless => "",
        }
    }
}

/// The allowed deviation in `= x ± tol`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Deviation {
    /// An absolute deviation in the expectation's unit.
    Absolute(f64),
    /// A relative deviation (`± 2 %` is `Relative(0.02)`).
    Relative(f64),
}

/// How a measured value is compared with the bound.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Comparison {
    /// `< x`
    Less(f64),
    /// `<= x`
    LessEqual(f64),
    /// `> x`
    Greater(f64),
    /// `>= x`
    GreaterEqual(f64),
    /// `= x ± d`
    Equal {
        /// Nominal value.
        value: f64,
        /// Allowed deviation.
        deviation: Deviation,
    },
    /// `within lo .. hi` (inclusive).
    Within {
        /// Lower bound.
        low: f64,
        /// Upper bound.
        high: f64,
    },
}

/// One `expect` line.
#[derive(Debug, Clone, PartialEq)]
pub struct Expectation {
    /// The metric measured.
    pub metric: Metric,
    /// The comparison it must satisfy.
    pub comparison: Comparison,
    /// The unit of the comparison's numbers.
    pub unit: Unit,
    /// The expectation as written (trimmed, without the `expect` keyword), for reports.
    pub text: String,
    /// Source location.
    pub span: Span,
}

/// A flat, validated circuit.
///
/// Invariants (upheld by elaboration and by [`CircuitBuilder::build`]): `nodes[0]` is
/// `gnd`; names are unique across nodes, parts and probes; every [`NodeId`],
/// [`PartId`] and [`ProbeId`] indexes into this circuit; passive values are finite
/// and positive.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Circuit {
    /// The `title`, if any.
    pub title: Option<String>,
    /// Node names; index 0 is `gnd`.
    pub nodes: Vec<String>,
    /// Parts in source order (block instances expanded in place).
    pub parts: Vec<Part>,
    /// The source named by `drive`, if any.
    pub drive: Option<PartId>,
    /// The `sweep`, if any (use [`Circuit::sweep_or_default`] for the effective one).
    pub sweep: Option<Sweep>,
    /// Probes in source order.
    pub probes: Vec<Probe>,
    /// Expectations in source order.
    pub expectations: Vec<Expectation>,
}

/// Why no single drive can be chosen.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum DriveError {
    /// The circuit has no source with a small-signal amplitude.
    #[error("the circuit has no AC source (a vsrc or isrc with an amplitude) to drive it")]
    NoAcSource,
    /// Several AC sources and no `drive` statement.
    #[error("several AC sources ({}) and no `drive`; add `drive <name>` to pick one", .0.join(", "))]
    Ambiguous(Vec<String>),
}

impl Circuit {
    /// A builder for circuits made in code rather than text.
    pub fn builder() -> CircuitBuilder {
        CircuitBuilder::new()
    }

    /// Looks a node up by name.
    pub fn node(&self, name: &str) -> Option<NodeId> {
        self.nodes
            .iter()
            .position(|n| n == name)
            .map(|i| NodeId(i as u32))
    }

    /// Looks a part up by its qualified name.
    pub fn part(&self, name: &str) -> Option<PartId> {
        self.parts
            .iter()
            .position(|p| p.name == name)
            .map(|i| PartId(i as u32))
    }

    /// Looks a probe up by name.
    pub fn probe(&self, name: &str) -> Option<ProbeId> {
        self.probes
            .iter()
            .position(|p| p.name == name)
            .map(|i| ProbeId(i as u32))
    }

    /// The name of a node.
    pub fn node_name(&self, id: NodeId) -> &str {
        &self.nodes[id.index()]
    }

    /// The sweep to run: the file's, else the language default.
    pub fn sweep_or_default(&self) -> Sweep {
        self.sweep.clone().unwrap_or_default()
    }

    /// The AC sources (those with an amplitude), in source order.
    pub fn ac_sources(&self) -> Vec<PartId> {
        (0..self.parts.len())
            .filter(|&i| self.parts[i].kind.is_ac_source())
            .map(|i| PartId(i as u32))
            .collect()
    }

    /// The drive: the `drive` source, else the only AC source.
    ///
    /// # Errors
    /// [`DriveError::NoAcSource`] when there is none, [`DriveError::Ambiguous`] (naming
    /// them) when there are several and no `drive`.
    pub fn drive_source(&self) -> Result<PartId, DriveError> {
        if let Some(d) = self.drive {
            return Ok(d);
        }
        match self.ac_sources().as_slice() {
            [] => Err(DriveError::NoAcSource),
            [one] => Ok(*one),
            many => Err(DriveError::Ambiguous(
                many.iter()
                    .map(|p| self.parts[p.index()].name.clone())
                    .collect(),
            )),
        }
    }
}

/// An error from [`CircuitBuilder::build`].
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum BuildError {
    /// A name used twice (parts, nodes and probes share one namespace).
    #[error("the name `{0}` is used twice")]
    Duplicate(String),
    /// A value that is not finite and positive where it must be.
    #[error("`{name}`: {what} must be finite and positive")]
    BadValue {
        /// Part or probe name.
        name: String,
        /// Which value.
        what: &'static str,
    },
    /// A probe, drive or expectation names a part that does not exist.
    #[error("unknown part `{0}`")]
    UnknownPart(String),
    /// A name that is not a valid identifier.
    #[error("`{0}` is not a valid name (letters, digits and `_`, not starting with a digit)")]
    BadName(String),
}

/// Builds a [`Circuit`] in code. Nodes are created on first mention; `"gnd"` is ground.
///
/// ```
/// use rolloff_netlist::Circuit;
/// let circuit = Circuit::builder()
///     .vsrc("V1", "in", "gnd", 1.0)
///     .resistor("R1", "in", "out", 10e3)
///     .capacitor("C1", "out", "gnd", 10e-9)
///     .probe_node("out")
///     .build()
///     .unwrap();
/// assert_eq!(circuit.nodes, ["gnd", "in", "out"]);
/// assert_eq!(circuit.parts.len(), 3);
/// ```
#[derive(Debug, Clone)]
pub struct CircuitBuilder {
    circuit: Circuit,
    node_index: HashMap<String, NodeId>,
    pending_drive: Option<String>,
    pending_current_probes: Vec<(String, String)>,
}

impl Default for CircuitBuilder {
    fn default() -> Self {
        Self::new()
    }
}

impl CircuitBuilder {
    /// An empty circuit with only `gnd`.
    pub fn new() -> Self {
        let mut node_index = HashMap::new();
        node_index.insert("gnd".to_string(), NodeId::GND);
        Self {
            circuit: Circuit {
                nodes: vec!["gnd".into()],
                ..Circuit::default()
            },
            node_index,
            pending_drive: None,
            pending_current_probes: Vec::new(),
        }
    }

    /// The node of that name, created if new.
    pub fn node(&mut self, name: &str) -> NodeId {
        if let Some(&id) = self.node_index.get(name) {
            return id;
        }
        let id = NodeId(self.circuit.nodes.len() as u32);
        self.circuit.nodes.push(name.to_string());
        self.node_index.insert(name.to_string(), id);
        id
    }

    /// Adds a part of any kind (nodes already resolved with [`CircuitBuilder::node`]).
    #[must_use]
    pub fn part(mut self, name: &str, kind: PartKind) -> Self {
        self.circuit.parts.push(Part {
            name: name.to_string(),
            kind,
            span: Span::default(),
        });
        self
    }

    /// Adds `resistor name (a, b) ohms`.
    #[must_use]
    pub fn resistor(mut self, name: &str, a: &str, b: &str, ohms: f64) -> Self {
        let (a, b) = (self.node(a), self.node(b));
        self.part(
            name,
            PartKind::Resistor {
                a,
                b,
                value: ohms,
                tol: None,
                fit: None,
            },
        )
    }

    /// Adds `capacitor name (a, b) farads`.
    #[must_use]
    pub fn capacitor(mut self, name: &str, a: &str, b: &str, farads: f64) -> Self {
        let (a, b) = (self.node(a), self.node(b));
        let kind = PartKind::Capacitor {
            a,
            b,
            value: farads,
            tol: None,
            fit: None,
            rated: None,
            polar: false,
        };
        self.part(name, kind)
    }

    /// Adds `inductor name (a, b) henries`.
    #[must_use]
    pub fn inductor(mut self, name: &str, a: &str, b: &str, henries: f64) -> Self {
        let (a, b) = (self.node(a), self.node(b));
        self.part(
            name,
            PartKind::Inductor {
                a,
                b,
                value: henries,
                tol: None,
                fit: None,
            },
        )
    }

    /// Adds an AC voltage source `vsrc name (pos, neg) amplitude` (no bias, no `rs`).
    #[must_use]
    pub fn vsrc(mut self, name: &str, pos: &str, neg: &str, amplitude: f64) -> Self {
        let (pos, neg) = (self.node(pos), self.node(neg));
        let kind = PartKind::VoltageSource {
            pos,
            neg,
            amplitude: Some(amplitude),
            phase_deg: 0.0,
            bias: None,
            rs: None,
        };
        self.part(name, kind)
    }

    /// Adds an AC current source `isrc name (from, to) amplitude`.
    #[must_use]
    pub fn isrc(mut self, name: &str, from: &str, to: &str, amplitude: f64) -> Self {
        let (from, to) = (self.node(from), self.node(to));
        let kind = PartKind::CurrentSource {
            from,
            to,
            amplitude: Some(amplitude),
            phase_deg: 0.0,
            bias: None,
            rp: None,
        };
        self.part(name, kind)
    }

    /// Sets the tolerance of the last part added (a passive one; ignored otherwise).
    #[must_use]
    pub fn tol(mut self, band: Tolerance) -> Self {
        if let Some(part) = self.circuit.parts.last_mut() {
            match &mut part.kind {
                PartKind::Resistor { tol, .. }
                | PartKind::Capacitor { tol, .. }
                | PartKind::Inductor { tol, .. } => *tol = Some(band),
                _ => {}
            }
        }
        self
    }

    /// Picks the drive by name.
    #[must_use]
    pub fn drive(mut self, source: &str) -> Self {
        self.pending_drive = Some(source.to_string());
        self
    }

    /// Sets the sweep.
    #[must_use]
    pub fn sweep(mut self, sweep: Sweep) -> Self {
        self.circuit.sweep = Some(sweep);
        self
    }

    /// Sets the title.
    #[must_use]
    pub fn title(mut self, title: &str) -> Self {
        self.circuit.title = Some(title.to_string());
        self
    }

    /// Adds `probe node`.
    #[must_use]
    pub fn probe_node(mut self, node: &str) -> Self {
        let id = self.node(node);
        self.probe(node, ProbeKind::Node(id))
    }

    /// Adds `probe name = current part`.
    #[must_use]
    pub fn probe_current(mut self, name: &str, part: &str) -> Self {
        self.pending_current_probes
            .push((name.to_string(), part.to_string()));
        self.probe(name, ProbeKind::Current(PartId(u32::MAX)))
    }

    /// Adds a probe of any kind (nodes resolved with [`CircuitBuilder::node`]).
    #[must_use]
    pub fn probe(mut self, name: &str, kind: ProbeKind) -> Self {
        self.circuit.probes.push(Probe {
            name: name.to_string(),
            kind,
            reference: None,
            span: Span::default(),
        });
        self
    }

    /// Checks names and values and returns the circuit.
    ///
    /// # Errors
    /// A [`BuildError`] for a duplicate or invalid name, a non-positive or non-finite
    /// passive value, or a drive or current probe naming no part.
    pub fn build(mut self) -> Result<Circuit, BuildError> {
        let lookup = |circuit: &Circuit, name: &str| {
            circuit
                .part(name)
                .ok_or_else(|| BuildError::UnknownPart(name.to_string()))
        };
        if let Some(drive) = self.pending_drive.take() {
            self.circuit.drive = Some(lookup(&self.circuit, &drive)?);
        }
        for (probe, part) in std::mem::take(&mut self.pending_current_probes) {
            let id = lookup(&self.circuit, &part)?;
            if let Some(p) = self.circuit.probes.iter_mut().find(|p| p.name == probe) {
                p.kind = ProbeKind::Current(id);
            }
        }
        validate(&self.circuit)?;
        Ok(self.circuit)
    }
}

/// Whether `name` is a valid identifier of the language.
pub fn is_identifier(name: &str) -> bool {
    let mut chars = name.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '.')
}

fn validate(circuit: &Circuit) -> Result<(), BuildError> {
    let mut seen = std::collections::HashSet::new();
    let names = circuit
        .nodes
        .iter()
        .chain(circuit.parts.iter().map(|p| &p.name))
        .chain(
            circuit
                .probes
                .iter()
                .filter(|p| !matches!(p.kind, ProbeKind::Node(_)))
                .map(|p| &p.name),
        );
    for name in names {
        if !is_identifier(name) {
            return Err(BuildError::BadName(name.clone()));
        }
        if !seen.insert(name.as_str()) {
            return Err(BuildError::Duplicate(name.clone()));
        }
    }
    for part in &circuit.parts {
        let bad = |what| BuildError::BadValue {
            name: part.name.clone(),
            what,
        };
        let positive = |v: f64| v.is_finite() && v > 0.0;
        match part.kind {
            PartKind::Resistor { value, .. } if !positive(value) => return Err(bad("resistance")),
            PartKind::Capacitor { value, .. } if !positive(value) => {
                return Err(bad("capacitance"));
            }
            PartKind::Inductor { value, .. } if !positive(value) => return Err(bad("inductance")),
            PartKind::VoltageSource { rs: Some(r), .. } if !positive(r) => return Err(bad("rs")),
            PartKind::CurrentSource { rp: Some(r), .. } if !positive(r) => return Err(bad("rp")),
            _ => {}
        }
    }
    Ok(())
}

impl fmt::Display for NodeId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "node#{}", self.0)
    }
}
