//! rolloff-mna: modified nodal analysis of an elaborated circuit.
//!
//! Owns stamping a [`rolloff_netlist::Circuit`] once into a [`System`] — the
//! conductance part `G` and the susceptance part `C` kept apart, so that
//! `Y(jω) = G + jωC` is formed per frequency without re-stamping, with part values in
//! one parameter vector the stamps index into — and solving it: the AC solve at any
//! frequency (transfers normalised to the drive, impedances, derivatives with respect
//! to ω), the DC bias solve with its rating checks, and the diagnosis of singular
//! systems by name (floating nodes, loops of sources or inductors, current-source cut
//! sets, op-amps without feedback, and the frequency where numerics fail).
//!
//! It does not parse text (that is `rolloff-netlist`) and computes no response
//! metrics such as cutoffs or slopes (that is `rolloff-report`).
//!
//! # Conventions
//! - Unknowns: node voltages (node `k ≥ 1` is unknown `k−1`), then one branch current
//!   per inductor, `vsrc`, `vcvs` and `opamp`, positive from the part's first node to
//!   its second through the part (an op-amp's from its output node into it).
//! - An `isrc` pushes its current into its second node; a `vccs` pushes
//!   `gm·(v(in+) − v(in−))` into its second output node.
//! - An op-amp is `v+ − v− = v_out/A + jω·v_out/(2π·gbw)`: the nullor without `gain`
//!   and `gbw`, a finite gain with `gain`, a single pole at `gbw/gain` with both (an
//!   integrator `2π·gbw/(jω)` with `gbw` alone).
//!
//! # Numerics
//! A dense complex LU with partial pivoting ([`DenseLu`]) sits behind the
//! [`LinearSolver`] trait. Before factorising, `Y` is equilibrated by powers of two
//! (rows, then columns, each to a largest entry in `[1, 2)`): exact, and enough for
//! values from 1 fF to 1 F, 1 mΩ to 1 TΩ, 1 nH to 1 kH at 1 mHz to 10 GHz. When the
//! pivots of the scaled matrix spread by more than 10⁶ (or grow by more than 10⁶), a
//! Hager/Higham 1-norm condition estimate is made: above 10¹² it is recorded as a
//! warning, above 1/ε it is an error. No NaN or infinity is ever returned.
//!
//! # Example
//! ```
//! use rolloff_mna::Analyzer;
//! use rolloff_netlist::{Circuit, PartKind, ProbeKind};
//!
//! // A non-inverting stage, gain 1 + RF/RG = 11 (textbook ideal op-amp formula).
//! let mut b = Circuit::builder();
//! let (out, inn, inp) = (b.node("out"), b.node("fb"), b.node("in"));
//! let circuit = b
//!     .vsrc("V1", "in", "gnd", 1.0)
//!     .part("U1", PartKind::OpAmp { out, in_pos: inp, in_neg: inn, gain: None, gbw: None, swing: None })
//!     .resistor("RF", "out", "fb", 10e3)
//!     .resistor("RG", "fb", "gnd", 1e3)
//!     .build()
//!     .unwrap();
//! let mut analyzer = Analyzer::new(&circuit).unwrap();
//! let h = analyzer.transfer(&ProbeKind::Node(out), 1e3).unwrap();
//! assert!((h.re - 11.0).abs() < 1e-12 && h.im.abs() < 1e-12);
//! assert!(analyzer.warnings().is_empty());
//! ```

mod analyzer;
mod bias;
mod error;
mod solver;
mod sparse;
mod system;
mod topology;

pub use analyzer::Analyzer;
pub use bias::BiasReport;
pub use error::{BiasWarning, MnaError, MnaWarning};
pub use solver::{DenseLu, FactorReport, LinearSolver, SolverError};
pub use sparse::{
    AutoLu, DENSE_ALWAYS_MAX, DENSE_NEVER_ABOVE, PIVOT_THRESHOLD, SolverChoice, SparseLu,
};
pub use system::{Coef, Matrix, ParamRole, Parameter, SourceStamp, StampEntry, System, Unknown};
