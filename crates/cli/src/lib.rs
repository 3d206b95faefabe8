//! rolloff-cli: the `rolloff` command's internals.
//!
//! Owns the command line (clap), reading files and standard input, choosing exit
//! codes, and every output format: aligned tables in engineering notation, CSV, JSON,
//! JUnit XML, the SVG Bode plot and the rendering of diagnostics. It holds no analysis:
//! every number it prints comes from a public call of `rolloff-netlist`, `rolloff-mna`
//! `rolloff-report` or `rolloff-tolerance`. The modules are public so the end-to-end tests and the binary
//! share them; they are not a stable library API.

pub mod args;
pub mod commands;
pub mod csv;
pub mod diagnostics;
pub mod eng;
pub mod histogram;
pub mod input;
pub mod json;
pub mod junit;
pub mod svg;
pub mod table;
