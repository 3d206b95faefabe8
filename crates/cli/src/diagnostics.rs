//! Rendering of diagnostics: `error: …`, then `--> file:line:col`, the source line and
//! a caret under the offending text, then help. Built on annotate-snippets; colour is
//! written as ANSI styles and stripped by `anstream` when the stream is not a terminal,
//! when `NO_COLOR` is set or when `--color never` is given.

use std::ops::Range;

use annotate_snippets::{AnnotationKind, Group, Level, Renderer, Snippet};

/// How serious a message is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// The input cannot be used.
    Error,
    /// The input works but is likely a mistake.
    Warning,
}

/// One message, independent of the library type it came from.
#[derive(Debug, Clone, Default)]
pub struct Message {
    /// Error or warning (`None` means error).
    pub severity: Option<Severity>,
    /// The headline.
    pub message: String,
    /// Byte range in the source it refers to, if any.
    pub span: Option<Range<usize>>,
    /// Text under the caret (what was expected).
    pub label: Option<String>,
    /// A suggestion shown as `= help: …`.
    pub help: Option<String>,
    /// Further facts shown as `= note: …`.
    pub notes: Vec<String>,
}

/// Renders `message` against `source` named `file_name`, with ANSI styles when
/// `styled` (plain text otherwise, byte-stable for snapshot tests).
pub fn render(message: &Message, file_name: &str, source: &str, styled: bool) -> String {
    let level = match message.severity {
        Some(Severity::Warning) => Level::WARNING,
        _ => Level::ERROR,
    };
    let title = level.primary_title(message.message.as_str());
    let group = match &message.span {
        Some(span) => title.element(
            Snippet::source(source)
                .path(file_name)
                .fold(true)
                .annotation(
                    AnnotationKind::Primary
                        .span(clamp_span(span.clone(), source))
                        .label(message.label.as_deref()),
                ),
        ),
        None => Group::with_title(title),
    };
    let group = match &message.help {
        Some(help) => group.element(Level::HELP.message(help.as_str())),
        None => group,
    };
    let group = message.notes.iter().fold(group, |g, note| {
        g.element(Level::NOTE.message(note.as_str()))
    });
    let report = [group];
    renderer(styled).render(&report)
}

/// Renders a message that refers to no source text: `error: cannot read …`.
pub fn render_plain(severity: Severity, message: &str, styled: bool) -> String {
    let level = match severity {
        Severity::Error => Level::ERROR,
        Severity::Warning => Level::WARNING,
    };
    let report = [Group::with_title(level.primary_title(message))];
    renderer(styled).render(&report)
}

fn renderer(styled: bool) -> Renderer {
    if styled {
        Renderer::styled()
    } else {
        Renderer::plain()
    }
}

/// Keeps a span inside the source and on character boundaries, so a stale or
/// out-of-range span can never make the renderer fail.
fn clamp_span(span: Range<usize>, source: &str) -> Range<usize> {
    let mut start = span.start.min(source.len());
    let mut end = span.end.clamp(start, source.len());
    while !source.is_char_boundary(start) {
        start -= 1;
    }
    while !source.is_char_boundary(end) {
        end += 1;
    }
    start..end
}

#[cfg(test)]
mod tests {
    use super::*;

    const SOURCE: &str = "resistor R1 (a, b) 1k\ncapacitor C1 (a, b) 10 uH\n";

    #[test]
    fn shows_file_line_column_and_caret() {
        let message = Message {
            severity: Some(Severity::Error),
            message: "wrong unit for a capacitance".into(),
            span: Some(42..47),
            label: Some("expected a capacitance (F), found H".into()),
            help: Some("write the value in farads, like `10 uF`".into()),
            notes: vec!["`10 uH` is 10 µH".into()],
        };
        let text = render(&message, "filter.rol", SOURCE, false);
        let expected = "\
error: wrong unit for a capacitance
 --> filter.rol:2:21
  |
2 | capacitor C1 (a, b) 10 uH
  |                     ^^^^^ expected a capacitance (F), found H
  |
  = help: write the value in farads, like `10 uF`
  = note: `10 uH` is 10 µH
";
        assert_eq!(text.trim_end(), expected.trim_end(), "\n{text}");
    }

    #[test]
    #[allow(clippy::reversed_empty_ranges)] // a reversed span is one of the cases tested
    fn out_of_range_and_mid_character_spans_are_clamped() {
        let source = "capacitor C1 (a, b) 10 µF";
        for span in [30..90, 24..25, 200..100] {
            let message = Message {
                message: "x".into(),
                span: Some(span),
                ..Message::default()
            };
            let text = render(&message, "f.rol", source, false);
            assert!(text.contains("f.rol:1:"), "{text}");
        }
    }

    #[test]
    fn plain_messages_have_no_source() {
        let text = render_plain(Severity::Error, "cannot read `x.rol`", false);
        assert_eq!(text.trim_end(), "error: cannot read `x.rol`");
    }

    #[test]
    fn styled_output_carries_ansi_and_plain_does_not() {
        let message = Message {
            message: "x".into(),
            span: Some(0..8),
            ..Message::default()
        };
        assert!(render(&message, "f.rol", SOURCE, true).contains('\u{1b}'));
        assert!(!render(&message, "f.rol", SOURCE, false).contains('\u{1b}'));
    }
}
