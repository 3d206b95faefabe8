//! Unit tests of the front end, one module per layer, plus the `fixtures/bad` corpus.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod corpus;
mod errors;
mod grammar;
mod props;
mod roundtrip;

use crate::{Circuit, CompileOptions, Diagnostic, DiagnosticKind, PartKind, compile, line_col};

/// Compiles and asserts there is no error; returns the circuit.
#[track_caller]
pub(super) fn ok(source: &str) -> Circuit {
    let compiled = compile(source, &CompileOptions::default());
    let errors: Vec<&Diagnostic> = compiled
        .diagnostics
        .iter()
        .filter(|d| d.is_error())
        .collect();
    assert!(
        errors.is_empty(),
        "unexpected errors for {source:?}: {errors:#?}"
    );
    compiled.circuit.expect("a circuit when there is no error")
}

/// Compiles and returns all diagnostics.
pub(super) fn diagnostics(source: &str) -> Vec<Diagnostic> {
    compile(source, &CompileOptions::default()).diagnostics
}

/// Asserts the first diagnostic's kind, that its message contains `message`, and its
/// 1-based line and column.
#[track_caller]
pub(super) fn check_error(source: &str, kind: DiagnosticKind, message: &str, at: (usize, usize)) {
    let all = diagnostics(source);
    let first = all
        .first()
        .unwrap_or_else(|| panic!("no diagnostic for {source:?}"));
    assert_eq!(first.kind, kind, "kind, for {source:?}: {first:#?}");
    assert!(
        first.message.contains(message),
        "message {:?} does not contain {message:?}",
        first.message
    );
    assert_eq!(
        line_col(source, first.span.start),
        at,
        "location of {first:#?}"
    );
}

/// The value (SI) of `resistor R (a, gnd) <text>` in a minimal circuit.
#[track_caller]
pub(super) fn resistance(text: &str) -> f64 {
    let c = ok(&format!(
        "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) {text}\n"
    ));
    match c.parts[1].kind {
        PartKind::Resistor { value, .. } => value,
        ref other => panic!("not a resistor: {other:?}"),
    }
}

/// The value of a plain (dimensionless) expression, read back as a `vcvs` gain.
#[track_caller]
pub(super) fn plain(text: &str) -> f64 {
    let c = ok(&format!(
        "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k\nvcvs E (b, gnd) from (a, gnd) gain ({text})\nresistor R2 (b, gnd) 1k\n"
    ));
    match c.parts[2].kind {
        PartKind::Vcvs { gain, .. } => gain,
        ref other => panic!("not a vcvs: {other:?}"),
    }
}

/// The examples of `docs/language.md`, put together, make one valid file.
#[test]
fn language_reference_examples_compile() {
    let doc = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../docs/language.md"
    ))
    .unwrap();
    let mut source = String::new();
    let mut inside = false;
    for line in doc.lines() {
        if line.starts_with("```") {
            inside = !inside;
        } else if inside {
            source.push_str(line);
            source.push('\n');
        }
    }
    let c = ok(&source);
    assert!(c.parts.len() > 15 && c.expectations.len() == 5 && c.probes.len() == 3);
}
