//! rolloff-tolerance: buildable values and tolerance analysis.
//!
//! Owns the IEC 60063 standard value series and IEC 60062 value codes ([`series`]),
//! tolerance-band sampling and reproducible parallel trials ([`sampling`]), and the
//! design analyses that vary part values on a circuit model: Monte Carlo
//! ([`montecarlo`]), worst case ([`worstcase`]), sensitivity ([`mod@sensitivity`]) and
//! fitting a `?` part ([`mod@fit`]). The analyses run on anything implementing [`Model`]
//! (set a part value, measure a metric); [`CircuitModel`] is the solver-backed one
//! (`rolloff-mna` stamps once, `rolloff-report` measures).
//!
//! Conventions, stated once:
//! - A part with `tol` is drawn on its own in every trial, each part of each block
//!   instance too (`LAD.s1.R`, `LAD.s2.R`); a default tolerance option covers the
//!   passives without one. Asymmetric bands (`tol -20% .. +80%`) are honoured.
//! - Values are uniform within the band by default. [`Distribution::Gaussian`] takes
//!   the tolerance as 3σ about the band's centre, truncated to the band: treating a
//!   tolerance as a 3σ limit is common practice, not a maker's promise.
//! - Same seed, same results, bit for bit, whatever the thread count: each trial draws
//!   from its own ChaCha8 stream (`seed_from_u64(seed)` + `set_stream(trial)`),
//!   results are kept in trial order and reduced serially.
//! - No NaN reaches a result: a metric that fails in a trial is counted (with the
//!   first reason) and left out of the statistics; it fails that trial's yield.
//!
//! It does not parse text, stamp or solve matrices, compute response metrics itself,
//! format output or print; it never builds the global rayon pool (callers pass a pool
//! or run inside their own).

pub mod circuit_model;
pub mod error;
pub mod fit;
pub mod model;
pub mod montecarlo;
pub mod sampling;
pub mod sensitivity;
pub mod series;
pub mod worstcase;

#[cfg(test)]
pub(crate) mod testing;

pub use circuit_model::CircuitModel;
pub use error::ToleranceError;
pub use fit::{FitOptions, FitReport, fit, fit_all};
pub use model::{Model, TolerancedPart};
pub use montecarlo::{MonteCarloOptions, MonteCarloReport, monte_carlo};
pub use sampling::Distribution;
pub use sensitivity::{SensitivityOptions, SensitivityReport, sensitivity};
pub use series::Series;
pub use worstcase::{WorstCaseOptions, WorstCaseReport, worst_case};

use rolloff_netlist::Tolerance;

/// Checks the invariant of a band given as an option: `-1 < lower <= upper`, finite.
pub(crate) fn check_band(band: Tolerance, option: &'static str) -> Result<(), ToleranceError> {
    if band.lower.is_finite()
        && band.upper.is_finite()
        && band.lower > -1.0
        && band.lower <= band.upper
    {
        Ok(())
    } else {
        Err(ToleranceError::InvalidOption {
            option,
            reason: format!(
                "the band {} .. {} must satisfy -1 < lower <= upper",
                band.lower, band.upper
            ),
        })
    }
}
