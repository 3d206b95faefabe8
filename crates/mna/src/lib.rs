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
//! - Transfers have only the drive active, divided by its amplitude (the EMF before
//!   its `rs`, so source loading is in the result), phases relative to its phase.
//!   `zin` is what the drive sees at its terminals, itself (and its own `rs`/`rp`)
//!   removed; `zout` at a node has every independent source zeroed, `rs`/`rp` kept.
//! - 0 Hz is the DC system (capacitors open, inductors shorted); a circuit that has
//!   no DC solution (a node reached only through capacitors, an ideal integrator)
//!   gets the named DC error there.
//!
//! # Numerics
//! A dense complex LU with partial pivoting ([`DenseLu`], hand-written, in place, no
//! allocation per frequency) sits behind the [`LinearSolver`] trait; with the
//! `sparse` feature a faer sparse LU (`SparseLu`) reuses one symbolic
//! factorisation of the stamp pattern for every frequency. The [`System`] keeps `G`
//! and `C` as values on one compressed-column pattern, so either solver reads the
//! same stamps.
//!
//! Equilibration: before factorising, `Y` is scaled by powers of two — each row so
//! that its largest entry (`|re| + |im|`) lies in `[1, 2)`, then each column of the
//! row-scaled matrix likewise. Scaling by powers of two is exact (no rounding), and it
//! is what keeps closed forms to 1e-9 relative for values from 1 fF to 1 F, 1 mΩ to
//! 1 TΩ, 1 nH to 1 kH at 1 mHz to 10 GHz. Conditioning is judged on the scaled matrix:
//! when its pivots spread by more than 10⁶ or grow by more than 10⁶, a Hager/Higham
//! 1-norm condition estimate is made; above 10¹² (or with pivot growth above 10⁸) it
//! becomes an [`MnaWarning::IllConditioned`], above 1/ε an [`MnaError::Singular`]. A
//! drive current within 64 ulps of the currents meeting at the drive's terminals is an
//! open circuit ([`MnaError::InfiniteImpedance`]). No NaN or infinity is ever
//! returned.
//!
//! Diagnostics come from graph checks first (they name nodes and parts), then from
//! numerics (they name the unknown and the frequency). An op-amp's feedback sign is
//! checked once, in [`Analyzer::new`], by driving its output with a test source and
//! reading `β = ∂(v+ − v−)/∂v_out` (at DC, else from 1 Hz up): `Re β > 0` is positive
//! feedback, which an ideal model cannot see, and is warned about.
//!
//! # Adding a part kind
//! Stamp it in `System::new` (entries whose coefficients index the parameter vector,
//! a branch unknown if it defines a voltage), give its edges to the graph checks in
//! `topology.rs`, its current to `Analyzer::part_current` and its bias checks to
//! `Analyzer::bias`.
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
#[cfg(feature = "sparse")]
mod sparse;
mod system;
mod topology;

pub use analyzer::Analyzer;
pub use bias::BiasReport;
pub use error::{BiasWarning, MnaError, MnaWarning};
pub use solver::{DenseLu, FactorReport, LinearSolver, SolverError};
#[cfg(feature = "sparse")]
pub use sparse::SparseLu;
pub use system::{Coef, Matrix, ParamRole, Parameter, SourceStamp, StampEntry, System, Unknown};
