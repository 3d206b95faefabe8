//! rolloff-netlist: the circuit description language.
//!
//! Owns the text side of rolloff: the `nom` grammar of `.rol` files, the syntax tree
//! with byte spans, elaboration (lets, dimensions, blocks, chains, units) into a flat
//! validated [`Circuit`], diagnostics with spans and their plain-text rendering, and
//! printing a circuit back in the language (`Display for Circuit`). It also owns the
//! [`Circuit`] data model and its [`CircuitBuilder`], so programs can make circuits
//! without text.
//!
//! It does not solve anything (that is `rolloff-mna`), does not read files, and does
//! not colour diagnostics for a terminal (the CLI does).
//!
//! ```
//! use rolloff_netlist::{compile, CompileOptions};
//! let source = "\
//! let r = 10k
//! vsrc      V1 (in, gnd) 1 V
//! resistor  R1 (in, out) r tol 1%
//! capacitor C1 (out, gnd) 10 nF
//! probe out
//! expect cutoff(out) within 1.5 .. 1.7 kHz
//! ";
//! let compiled = compile(source, &CompileOptions::default());
//! assert!(compiled.diagnostics.is_empty());
//! let circuit = compiled.circuit.unwrap();
//! assert_eq!(circuit.parts[1].name, "R1");
//! ```

pub mod circuit;
mod diagnostic;
mod elaborate;
mod parser;
mod print;
mod syntax;
mod units;

pub use circuit::{
    BuildError, Circuit, CircuitBuilder, Comparison, Deviation, DriveError, Expectation, FitRange,
    Metric, MetricKind, MetricOptions, NodeId, Part, PartId, PartKind, Probe, ProbeId, ProbeKind,
    Span, Sweep, Target, Tolerance, Unit,
};
pub use diagnostic::{
    Diagnostic, DiagnosticKind, Severity, line_col, render_all, render_diagnostic,
};
pub use parser::{MAX_DEPTH, MAX_LINE};

/// Options for [`compile`].
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct CompileOptions {
    /// `--set name=value` pairs: each replaces the expression of the file's
    /// `let name`; the value is expression text (`"22k"`, `"1.5 kHz"`). A name with no
    /// `let` is an error.
    pub overrides: Vec<(String, String)>,
}

/// What [`compile`] built, and everything it has to say.
#[derive(Debug, Clone, PartialEq)]
pub struct Compiled {
    /// The circuit, when there is no error (warnings allowed).
    pub circuit: Option<Circuit>,
    /// Every error and warning, errors first in source order, then warnings.
    pub diagnostics: Vec<Diagnostic>,
}

impl Compiled {
    /// Whether any diagnostic is an error.
    pub fn has_errors(&self) -> bool {
        self.diagnostics.iter().any(Diagnostic::is_error)
    }
}

/// Parses and elaborates a `.rol` source into a [`Circuit`].
///
/// Never panics, whatever the text. Every line is parsed even after an error, and
/// elaboration runs on what parsed, so all errors come out of one call. The circuit
/// is `None` when there is any error.
pub fn compile(source: &str, options: &CompileOptions) -> Compiled {
    let (statements, mut diagnostics) = parser::parse(source);
    let mut overrides = Vec::new();
    for (name, text) in &options.overrides {
        match parser::parse_expression(text) {
            Ok(e) => overrides.push((name.clone(), e, text.clone())),
            Err(d) => diagnostics.push(Diagnostic {
                kind: DiagnosticKind::Override,
                message: format!("`--set {name}={text}`: {}", d.message),
                span: Span::default(),
                ..d
            }),
        }
    }
    let circuit = elaborate::elaborate(source, &statements, &overrides, &mut diagnostics);
    // Errors first (in source order), then warnings; the sort is stable.
    diagnostics.sort_by_key(|d| (!d.is_error(), d.span.start));
    let circuit = if diagnostics.iter().any(Diagnostic::is_error) {
        None
    } else {
        Some(circuit)
    };
    Compiled {
        circuit,
        diagnostics,
    }
}

/// Like [`compile`] for raw bytes: invalid UTF-8 is an error at the first bad byte.
///
/// ```
/// use rolloff_netlist::{compile_bytes, CompileOptions, DiagnosticKind};
/// let compiled = compile_bytes(b"title \"a\xff\"\n", &CompileOptions::default());
/// assert_eq!(compiled.diagnostics[0].kind, DiagnosticKind::InvalidUtf8);
/// assert_eq!(compiled.diagnostics[0].span.start, 8);
/// ```
pub fn compile_bytes(source: &[u8], options: &CompileOptions) -> Compiled {
    match std::str::from_utf8(source) {
        Ok(text) => compile(text, options),
        Err(e) => {
            let at = e.valid_up_to();
            let len = e.error_len().unwrap_or(source.len() - at);
            Compiled {
                circuit: None,
                diagnostics: vec![
                    Diagnostic::error(
                        DiagnosticKind::InvalidUtf8,
                        Span::new(at, at + len),
                        format!("the file is not valid UTF-8 (bad byte at offset {at})"),
                    )
                    .with_expected("expected UTF-8 text")
                    .with_help("save the file as UTF-8"),
                ],
            }
        }
    }
}

/// The valid UTF-8 text of `source` up to its first invalid byte, for rendering a
/// [`DiagnosticKind::InvalidUtf8`] diagnostic with [`render_diagnostic`] (whose span
/// then points at the end of this text).
pub fn valid_prefix(source: &[u8]) -> &str {
    match std::str::from_utf8(source) {
        Ok(text) => text,
        Err(e) => std::str::from_utf8(&source[..e.valid_up_to()]).unwrap_or_default(),
    }
}

#[cfg(test)]
mod tests;
