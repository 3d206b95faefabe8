//! JUnit XML for CI systems: one test suite per checked file, one test case per `expect`.
//!
//! The output is deterministic (no timestamps or durations) so it can be compared in
//! tests and diffed between runs.

use std::fmt::Write as _;

/// One expectation's outcome, already formatted for people.
#[derive(Debug, Clone)]
pub struct Case {
    /// The expectation as written (`cutoff(out) within 14 .. 18 Hz`).
    pub name: String,
    /// Where it is (`filter.rol:12`), used as the JUnit `classname` suffix.
    pub location: String,
    /// `None` when it holds; the failure message otherwise.
    pub failure: Option<String>,
    /// Free text for the case's `system-out` (measured value, bound, margin).
    pub detail: String,
}

/// All cases of one file.
#[derive(Debug, Clone)]
pub struct Suite {
    /// The file name as given on the command line.
    pub name: String,
    /// The cases in file order.
    pub cases: Vec<Case>,
    /// An input error that kept the file from being checked at all.
    pub error: Option<String>,
}

/// Renders the suites as one `<testsuites>` document.
pub fn render(suites: &[Suite]) -> String {
    let tests: usize = suites.iter().map(suite_tests).sum();
    let failures: usize = suites.iter().map(suite_failures).sum();
    let errors = suites.iter().filter(|s| s.error.is_some()).count();
    let mut out = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let _ = writeln!(
        out,
        "<testsuites name=\"rolloff check\" tests=\"{tests}\" failures=\"{failures}\" errors=\"{errors}\">"
    );
    for suite in suites {
        render_suite(&mut out, suite);
    }
    out.push_str("</testsuites>\n");
    out
}

fn suite_tests(suite: &Suite) -> usize {
    suite.cases.len() + usize::from(suite.error.is_some())
}

fn suite_failures(suite: &Suite) -> usize {
    suite.cases.iter().filter(|c| c.failure.is_some()).count()
}

fn render_suite(out: &mut String, suite: &Suite) {
    let _ = writeln!(
        out,
        "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{}\" errors=\"{}\">",
        escape(&suite.name),
        suite_tests(suite),
        suite_failures(suite),
        usize::from(suite.error.is_some()),
    );
    if let Some(error) = &suite.error {
        let _ = writeln!(
            out,
            "    <testcase name=\"input\" classname=\"{}\">\n      <error message=\"the file could not be checked\">{}</error>\n    </testcase>",
            escape(&suite.name),
            escape(error)
        );
    }
    for case in &suite.cases {
        render_case(out, &suite.name, case);
    }
    out.push_str("  </testsuite>\n");
}

fn render_case(out: &mut String, suite: &str, case: &Case) {
    let _ = writeln!(
        out,
        "    <testcase name=\"{}\" classname=\"{}\">",
        escape(&case.name),
        escape(&format!("{suite}:{}", case.location)),
    );
    if let Some(message) = &case.failure {
        let _ = writeln!(
            out,
            "      <failure message=\"{}\">{}</failure>",
            escape(message),
            escape(&case.detail)
        );
    }
    let _ = writeln!(
        out,
        "      <system-out>{}</system-out>\n    </testcase>",
        escape(&case.detail)
    );
}

/// Escapes text for an XML attribute or element and drops characters XML 1.0 cannot
/// hold (control characters such as ANSI escapes).
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(c),
            c if (c as u32) < 0x20 || c == '\u{FFFE}' || c == '\u{FFFF}' => {}
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    fn sample() -> Vec<Suite> {
        vec![
            Suite {
                name: "a&b.rol".into(),
                cases: vec![
                    Case {
                        name: "cutoff(out) within 14 .. 18 Hz".into(),
                        location: "12".into(),
                        failure: None,
                        detail: "measured 15.92 Hz".into(),
                    },
                    Case {
                        name: "gain(out, 1 kHz) >= 20 dB".into(),
                        location: "13".into(),
                        failure: Some("measured 19.5 dB < 20 dB \u{1b}[31m".into()),
                        detail: "margin -0.5 dB".into(),
                    },
                ],
                error: None,
            },
            Suite {
                name: "broken.rol".into(),
                cases: vec![],
                error: Some("error: unknown node `x` <here>".into()),
            },
        ]
    }

    #[test]
    fn parses_as_xml_with_the_counts() {
        let text = render(&sample());
        let doc = roxmltree::Document::parse(&text).unwrap();
        let root = doc.root_element();
        assert_eq!(root.tag_name().name(), "testsuites");
        assert_eq!(root.attribute("tests"), Some("3"));
        assert_eq!(root.attribute("failures"), Some("1"));
        assert_eq!(root.attribute("errors"), Some("1"));
        let suites: Vec<_> = root
            .children()
            .filter(roxmltree::Node::is_element)
            .collect();
        assert_eq!(suites[0].attribute("name"), Some("a&b.rol"));
        let failure = doc
            .descendants()
            .find(|n| n.has_tag_name("failure"))
            .unwrap();
        // The ANSI escape character is dropped; the rest of the message survives.
        assert_eq!(
            failure.attribute("message"),
            Some("measured 19.5 dB < 20 dB [31m")
        );
        assert!(doc.descendants().any(|n| n.has_tag_name("error")));
    }

    #[test]
    fn output_is_deterministic() {
        assert_eq!(render(&sample()), render(&sample()));
        assert!(!render(&sample()).contains("timestamp"));
    }
}
