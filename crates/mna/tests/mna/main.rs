//! Tests of rolloff-mna against closed forms, invariants and its diagnostics.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::missing_panics_doc)]

mod closed_form;
mod diagnostics;
mod properties;
mod robustness;
mod solver_trait;

use num_complex::Complex64;
use rolloff_netlist::{NodeId, PartKind};

/// Asserts `|got − want| <= tol·|want|` (or `<= tol` when `want` is 0).
#[track_caller]
pub fn check(got: Complex64, want: Complex64, tol: f64) {
    let scale = if want.norm() > 0.0 { want.norm() } else { 1.0 };
    let err = (got - want).norm() / scale;
    assert!(
        err <= tol,
        "got {got}, want {want}: relative error {err:e} > {tol:e}"
    );
}

/// `jω` at `f` Hz.
pub fn jw(f: f64) -> Complex64 {
    Complex64::new(0.0, 2.0 * std::f64::consts::PI * f)
}

/// An op-amp part kind.
pub fn opamp(
    out: NodeId,
    in_pos: NodeId,
    in_neg: NodeId,
    gain: Option<f64>,
    gbw: Option<f64>,
) -> PartKind {
    PartKind::OpAmp {
        out,
        in_pos,
        in_neg,
        gain,
        gbw,
        swing: None,
    }
}
