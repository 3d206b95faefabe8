//! rolloff-tolerance: buildable values and tolerance analysis.
//!
//! Owns the IEC 60063 standard value series ([`series`]), tolerance-band sampling and
//! reproducible parallel trials ([`sampling`]), and the design analyses that vary part
//! values on a circuit model: Monte Carlo ([`montecarlo`]), worst case
//! ([`worstcase`]), sensitivity ([`mod@sensitivity`]) and fitting a `?` part ([`mod@fit`]).
//! The analyses run on anything implementing [`Model`] (set a part value, measure a
//! metric).
//!
//! It does not parse text, stamp or solve matrices, compute response metrics itself
//! (metrics come from the model), format output or print; it never builds the global
//! rayon pool (callers pass a pool or run inside their own).

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
pub use fit::{FitOptions, FitReport, fit};
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
