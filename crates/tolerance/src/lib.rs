//! rolloff-tolerance: buildable values and tolerance analysis.
//!
//! Will own the IEC 60063 standard value series, fitting part values to expectations,
//! Monte Carlo, worst case and sensitivity. It does not parse text or print.
