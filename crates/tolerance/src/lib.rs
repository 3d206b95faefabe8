//! rolloff-tolerance: buildable values and tolerance analysis.
//!
//! Owns the IEC 60063 standard value series ([`series`]), tolerance-band sampling and
//! reproducible parallel trials ([`sampling`]). It does not parse text, stamp matrices,
//! compute response metrics itself (it asks `rolloff-report`) or print.

pub mod sampling;
pub mod series;
