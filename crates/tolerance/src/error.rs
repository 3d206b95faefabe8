//! The crate's error type.

/// Why a tolerance analysis or a fit could not run.
///
/// A metric that cannot be found in some trials is not an error: the analyses count
/// those trials and report the first reason. These are the failures that leave no
/// result at all.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ToleranceError {
    /// The circuit has no expectation, so there is nothing to measure.
    #[error("the circuit has no `expect` line, so there is no metric to analyse")]
    NoMetrics,
    /// A part value could not be set.
    #[error("cannot set the value of `{part}` to {value:e}: {reason}")]
    SetValue {
        /// The part's name.
        part: String,
        /// The value that was refused.
        value: f64,
        /// Why.
        reason: String,
    },
    /// The options are out of range.
    #[error("invalid option `{option}`: {reason}")]
    InvalidOption {
        /// The option's field name.
        option: &'static str,
        /// What is wrong.
        reason: String,
    },
    /// A tolerance analysis of a circuit that still has `?` parts.
    #[error("the value of {} is `?`: fit it first, or write a value", .0.join(", "))]
    UnfittedParts(Vec<String>),
    /// No part's value is `?`.
    #[error(
        "no part to fit: write `?` (or `? in low .. high`) as the value of the part to solve for"
    )]
    NothingToFit,
    /// More than one part to fit (not supported yet).
    #[error("only one part can be fitted at a time; these are `?`: {}", .0.join(", "))]
    SeveralFitParts(Vec<String>),
    /// Several `?` parts and not as many fit targets.
    #[error("{} parts to fit ({}) need as many `=` targets, found {}: {}", .parts.len(), .parts.join(", "), .targets.len(), .targets.join("; "))]
    FitCountMismatch {
        /// The parts to fit.
        parts: Vec<String>,
        /// The fit targets' texts.
        targets: Vec<String>,
    },
    /// No equality expectation to fit to.
    #[error("no fit target: add an expectation `expect <metric> = <value>` for `{part}` to meet")]
    NoFitTarget {
        /// The part to fit.
        part: String,
    },
    /// Several equality expectations and one part to fit.
    #[error("one part to fit (`{part}`) but several `=` expectations: {}; keep one without `±` as the target", .targets.join("; "))]
    AmbiguousFitTarget {
        /// The part to fit.
        part: String,
        /// The candidate expectations' texts.
        targets: Vec<String>,
    },
    /// The target value is not met anywhere in the fit range.
    #[error("`{part}`: no value in {low:e} .. {high:e} makes {metric} equal {target}; {found}")]
    NoBracket {
        /// The part to fit.
        part: String,
        /// The metric label.
        metric: String,
        /// The target value.
        target: f64,
        /// The search range.
        low: f64,
        /// The search range.
        high: f64,
        /// What the metric did over the range.
        found: String,
    },
    /// The metric failed at the nominal values where the analysis needs it.
    #[error("{metric} cannot be measured at the nominal values: {reason}")]
    Nominal {
        /// The metric label.
        metric: String,
        /// Why.
        reason: String,
    },
    /// The metric failed while the root finder was running.
    #[error("fitting `{part}`: {metric} failed at {value:e}: {reason}")]
    FitFailed {
        /// The part to fit.
        part: String,
        /// The metric label.
        metric: String,
        /// The part value at which it failed.
        value: f64,
        /// Why.
        reason: String,
    },
}
