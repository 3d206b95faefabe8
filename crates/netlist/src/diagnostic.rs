//! Diagnostics: the errors and warnings of the front end as plain data, and their
//! plain-text rendering (`file:line:col`, the source line, a caret, the expectation).

use crate::circuit::Span;
use std::fmt::Write as _;

/// How serious a diagnostic is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Severity {
    /// The input is wrong; no circuit is produced.
    Error,
    /// The input is accepted but probably not what was meant.
    Warning,
}

/// What went wrong, as a category a program can match on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum DiagnosticKind {
    /// The text does not follow the grammar.
    Syntax,
    /// A line does not start with a known statement keyword.
    UnknownKeyword,
    /// A well-meant but wrong spelling (`10K`, `1meg`, `GND`, node `0`, `R47`).
    Refusal,
    /// A name that is not defined.
    UnknownName,
    /// A name defined twice.
    Duplicate,
    /// A value whose dimension does not fit its place.
    Dimension,
    /// A value out of its allowed range (zero, negative, too many points…).
    BadValue,
    /// A number that overflows or underflows a 64-bit float.
    NumberRange,
    /// A `use` or `chain` with the wrong number of nodes.
    PinCount,
    /// A block that uses itself, directly or not.
    RecursiveBlock,
    /// A `block` without `end`, or an `end` without `block`.
    Unterminated,
    /// Nesting deeper than the parser allows.
    TooDeep,
    /// A line longer than the parser allows.
    LineTooLong,
    /// Input bytes that are not UTF-8.
    InvalidUtf8,
    /// A node with no path to `gnd` through any part.
    NoPathToGround,
    /// A statement that may appear only once appears again (`sweep`, `drive`, `title`).
    Repeated,
    /// A command-line override (`--set name=value`) that cannot be applied.
    Override,
    /// A file with no parts at all.
    Empty,
    /// Warning: a node with only one connection.
    SingleConnection,
    /// Warning: a `let` that nothing uses.
    UnusedLet,
    /// Warning: a part with both ends on one node.
    ShortedPart,
}

/// One error or warning, with the byte span of the offending text.
///
/// A diagnostic is data; [`render_diagnostic`] turns it into text.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{message}")]
pub struct Diagnostic {
    /// Error or warning.
    pub severity: Severity,
    /// The category.
    pub kind: DiagnosticKind,
    /// One sentence saying what is wrong (lower case, no trailing period).
    pub message: String,
    /// The offending text in the source (byte offsets).
    pub span: Span,
    /// What was expected, printed under the caret (`expected a capacitance (F), found H`).
    pub expected: Option<String>,
    /// What to write instead, if known.
    pub help: Option<String>,
    /// Further facts (where a name was defined, what a value evaluated to).
    pub notes: Vec<String>,
}

impl Diagnostic {
    /// An error of `kind` at `span`.
    pub fn error(kind: DiagnosticKind, span: Span, message: impl Into<String>) -> Self {
        Self {
            severity: Severity::Error,
            kind,
            message: message.into(),
            span,
            expected: None,
            help: None,
            notes: Vec::new(),
        }
    }

    /// A warning of `kind` at `span`.
    pub fn warning(kind: DiagnosticKind, span: Span, message: impl Into<String>) -> Self {
        Self {
            severity: Severity::Warning,
            ..Self::error(kind, span, message)
        }
    }

    /// Sets the label under the caret.
    #[must_use]
    pub fn with_expected(mut self, expected: impl Into<String>) -> Self {
        self.expected = Some(expected.into());
        self
    }

    /// Sets the help line.
    #[must_use]
    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    /// Adds a note line.
    #[must_use]
    pub fn with_note(mut self, note: impl Into<String>) -> Self {
        self.notes.push(note.into());
        self
    }

    /// Whether this is an error (not a warning).
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

/// The 1-based line and column (in characters) of a byte offset.
///
/// Offsets past the end are clamped; an offset inside a multi-byte character counts
/// as that character.
pub fn line_col(source: &str, offset: usize) -> (usize, usize) {
    let offset = floor_char_boundary(source, offset.min(source.len()));
    let before = &source[..offset];
    let line = before.bytes().filter(|&b| b == b'\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let col = source[line_start..offset].chars().count() + 1;
    (line, col)
}

fn floor_char_boundary(s: &str, mut i: usize) -> usize {
    while i > 0 && !s.is_char_boundary(i) {
        i -= 1;
    }
    i
}

/// How many characters of a long line are shown either side of the caret.
const WINDOW: usize = 60;

/// Renders a diagnostic as plain text (no colour):
///
/// ```text
/// error: the value does not fit a capacitor
///  --> file.rol:3:21
///   |
/// 3 | capacitor C1 (a, b) 10 uH
///   |                     ^^^^^ expected a capacitance (F), found H
///   = help: ...
/// ```
///
/// A line longer than about 120 characters is cut to a window around the caret, with
/// `…` marking the cuts.
///
/// ```
/// use rolloff_netlist::{compile, render_diagnostic, CompileOptions};
/// let source = "resistor R1 (a, gnd) 10K\n";
/// let compiled = compile(source, &CompileOptions::default());
/// let text = render_diagnostic(&compiled.diagnostics[0], "f.rol", source);
/// assert!(text.contains("f.rol:1:24"));
/// assert!(text.contains("write `10k`"));
/// ```
pub fn render_diagnostic(d: &Diagnostic, file_name: &str, source: &str) -> String {
    let mut out = String::new();
    let severity = match d.severity {
        Severity::Error => "error",
        Severity::Warning => "warning",
    };
    let _ = writeln!(out, "{severity}: {}", d.message);
    let start = floor_char_boundary(source, d.span.start.min(source.len()));
    let end = floor_char_boundary(source, d.span.end.min(source.len())).max(start);
    let (line, col) = line_col(source, start);
    let gutter = line.to_string().len();
    let pad = " ".repeat(gutter);
    let _ = writeln!(out, "{pad}--> {file_name}:{line}:{col}");
    let line_start = source[..start].rfind('\n').map_or(0, |i| i + 1);
    let line_end = source[start..]
        .find('\n')
        .map_or(source.len(), |i| start + i);
    let text = source[line_start..line_end].trim_end_matches('\r');
    let caret_start = source[line_start..start].chars().count();
    let caret_len = source[start..end.min(line_start + text.len()).max(start)]
        .chars()
        .count()
        .max(1);
    let (shown, caret_col) = window(text, caret_start, caret_len);
    let _ = writeln!(out, "{pad} |");
    let _ = writeln!(out, "{line} | {shown}");
    let mut marker = format!(
        "{pad} | {}{}",
        " ".repeat(caret_col),
        "^".repeat(caret_len.min(WINDOW))
    );
    if let Some(expected) = &d.expected {
        let _ = write!(marker, " {expected}");
    }
    let _ = writeln!(out, "{}", marker.trim_end());
    for note in &d.notes {
        let _ = writeln!(out, "{pad} = note: {note}");
    }
    if let Some(help) = &d.help {
        let _ = writeln!(out, "{pad} = help: {help}");
    }
    out
}

/// The part of a line to show, and the caret's column within it; tabs become spaces
/// so the caret lines up.
fn window(text: &str, caret: usize, caret_len: usize) -> (String, usize) {
    let chars: Vec<char> = text
        .chars()
        .map(|c| if c == '\t' { ' ' } else { c })
        .collect();
    if chars.len() <= 2 * WINDOW {
        return (chars.iter().collect(), caret);
    }
    let from = caret.saturating_sub(WINDOW);
    let to = (caret + caret_len.min(WINDOW) + WINDOW).min(chars.len());
    let mut shown = String::new();
    let mut caret_col = caret - from;
    if from > 0 {
        shown.push('…');
        caret_col += 1;
    }
    shown.extend(&chars[from..to]);
    if to < chars.len() {
        shown.push('…');
    }
    (shown, caret_col)
}

/// Renders all diagnostics, errors and warnings in the given order, separated by blank
/// lines.
pub fn render_all(diagnostics: &[Diagnostic], file_name: &str, source: &str) -> String {
    diagnostics
        .iter()
        .map(|d| render_diagnostic(d, file_name, source))
        .collect::<Vec<_>>()
        .join("\n")
}
