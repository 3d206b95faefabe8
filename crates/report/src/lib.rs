//! rolloff-report: response metrics, expectation verdicts and regression snapshots.
//!
//! Will own cutoffs, slopes, phase, group delay and passband metrics computed from a
//! response source, the evaluation of `expect` lines and snapshot comparison. It does
//! not parse text, stamp matrices or format output for a terminal.
