//! `rolloff check`: evaluates every `expect` line of one or more files.

use std::fmt::Write as _;

use std::path::Path;

use rolloff_netlist::Unit;
use rolloff_report::{Verdict, check, sweep_frequencies};
use serde::Serialize;

use super::{Loaded, Outcome, Reported, Session};
use crate::args::{CheckArgs, Format};
use crate::csv::{Cell, Csv};
use crate::eng::{quantity, signed_quantity};
use crate::input;
use crate::json::to_json;
use crate::junit;
use crate::table::{Align, Table};

/// Runs the command: every file is checked even when an earlier one fails.
///
/// # Errors
/// [`Reported`] when any file cannot be read, compiled or solved, or the JUnit file
/// cannot be written (exit 2 takes precedence over a failed expectation).
pub fn run(args: &CheckArgs, session: &Session) -> Result<Outcome, Reported> {
    let results: Vec<FileResult> = args
        .files
        .iter()
        .map(|path| check_file(path, session))
        .collect();
    let text = match args.format {
        Format::Table => table(&results),
        Format::Csv => csv(&results),
        Format::Json => to_json(&CheckView::new(&results)),
    };
    crate::input::print_stdout(&text);
    if let Some(path) = &args.junit {
        let suites: Vec<junit::Suite> = results.iter().map(FileResult::suite).collect();
        input::write_output(path, &junit::render(&suites)).map_err(|m| session.error(&m))?;
    }
    if results.iter().any(|r| r.error.is_some()) {
        Err(Reported)
    } else if results.iter().all(FileResult::pass) {
        Ok(Outcome::Pass)
    } else {
        Ok(Outcome::Fail)
    }
}

/// One file's verdicts, with the 1-based line of each.
struct FileResult {
    name: String,
    title: Option<String>,
    verdicts: Vec<(usize, Verdict)>,
    /// Why the file could not be checked.
    error: Option<String>,
}

impl FileResult {
    fn pass(&self) -> bool {
        self.error.is_none() && self.verdicts.iter().all(|(_, v)| v.pass)
    }

    fn suite(&self) -> junit::Suite {
        let cases = self
            .verdicts
            .iter()
            .map(|(line, v)| junit::Case {
                name: v.text.clone(),
                location: line.to_string(),
                failure: (!v.pass).then(|| failure_message(v)),
                detail: detail(v),
            })
            .collect();
        junit::Suite {
            name: self.name.clone(),
            cases,
            error: self.error.clone(),
        }
    }
}

fn check_file(path: &Path, session: &Session) -> FileResult {
    let name = if path.as_os_str() == "-" {
        input::STDIN_NAME.to_string()
    } else {
        path.display().to_string()
    };
    let failed = |error: &str| FileResult {
        name: name.clone(),
        title: None,
        verdicts: Vec::new(),
        error: Some(error.to_string()),
    };
    let Ok(loaded) = session.load(path) else {
        return failed("the file could not be read or has errors (see the diagnostics)");
    };
    let Ok(mut analyzer) = session.analyzer(&loaded) else {
        return failed("the circuit cannot be solved (see the diagnostics)");
    };
    let freqs = sweep_frequencies(&loaded.circuit);
    let verdicts = check(&mut analyzer, &freqs)
        .into_iter()
        .map(|v| (line_of(&loaded, &v), v))
        .collect();
    FileResult {
        name,
        title: loaded.circuit.title.clone(),
        verdicts,
        error: None,
    }
}

fn line_of(loaded: &Loaded, verdict: &Verdict) -> usize {
    rolloff_netlist::line_col(&loaded.source.text, verdict.span.start).0
}

fn measured_text(v: &Verdict) -> String {
    match &v.measured {
        Ok(value) => quantity(*value, v.unit),
        Err(_) => "n/a".to_string(),
    }
}

fn margin_text(v: &Verdict) -> String {
    v.margin
        .map_or_else(String::new, |m| signed_quantity(m, v.unit))
}

fn failure_message(v: &Verdict) -> String {
    match &v.measured {
        Ok(_) => format!("measured {}, bound {}", measured_text(v), v.bound),
        Err(e) => format!("not measured: {e}"),
    }
}

fn detail(v: &Verdict) -> String {
    match &v.measured {
        Ok(_) => format!(
            "measured {}; bound {}; margin {}",
            measured_text(v),
            v.bound,
            margin_text(v)
        ),
        Err(e) => format!("not measured: {e}; bound {}", v.bound),
    }
}

fn table(results: &[FileResult]) -> String {
    let mut text = String::new();
    let (mut passed, mut failed) = (0, 0);
    for result in results {
        text.push_str(&result.name);
        if let Some(title) = &result.title {
            let _ = write!(text, " — {title}");
        }
        text.push('\n');
        if let Some(error) = &result.error {
            let _ = write!(text, "  error: {error}\n\n");
            continue;
        }
        if result.verdicts.is_empty() {
            text.push_str("  no `expect` lines\n\n");
            continue;
        }
        let mut table = Table::new(&[
            ("result", Align::Left),
            ("line", Align::Right),
            ("expectation", Align::Left),
            ("measured", Align::Right),
            ("bound", Align::Left),
            ("margin", Align::Right),
        ]);
        let mut reasons = Vec::new();
        for (line, v) in &result.verdicts {
            if v.pass {
                passed += 1;
            } else {
                failed += 1;
            }
            table.push(vec![
                if v.pass { "pass" } else { "FAIL" }.to_string(),
                line.to_string(),
                v.text.clone(),
                measured_text(v),
                v.bound.clone(),
                margin_text(v),
            ]);
            if let Err(e) = &v.measured {
                reasons.push(format!("  line {line}: not measured: {e}\n"));
            }
        }
        text.push_str(&styled_results(&table.render()));
        for reason in reasons {
            text.push_str(&reason);
        }
        text.push('\n');
    }
    let errors = results.iter().filter(|r| r.error.is_some()).count();
    if errors > 0 {
        let _ = writeln!(text, "{errors} file(s) could not be checked");
    }
    let _ = writeln!(text, "check: {passed} passed, {failed} failed");
    text
}

/// Colours the leading `pass`/`FAIL` of each row (stripped again off a terminal).
fn styled_results(table: &str) -> String {
    let green = anstyle::AnsiColor::Green.on_default();
    let red = anstyle::AnsiColor::Red.on_default().bold();
    let mut out = String::with_capacity(table.len());
    for line in table.split_inclusive('\n') {
        if let Some(rest) = line.strip_prefix("pass") {
            let _ = write!(out, "{green}pass{green:#}{rest}");
        } else if let Some(rest) = line.strip_prefix("FAIL") {
            let _ = write!(out, "{red}FAIL{red:#}{rest}");
        } else {
            out.push_str(line);
        }
    }
    out
}

fn csv(results: &[FileResult]) -> String {
    let header = [
        "file",
        "line",
        "expectation",
        "pass",
        "measured",
        "unit",
        "margin",
        "reason",
    ]
    .map(String::from);
    let mut csv = Csv::new(&header);
    for result in results {
        for (line, v) in &result.verdicts {
            csv.push(&[
                Cell::Text(result.name.clone()),
                Cell::Number(Some(*line as f64)),
                Cell::Text(v.text.clone()),
                Cell::Text(v.pass.to_string()),
                Cell::Number(v.measured.as_ref().ok().copied()),
                Cell::Text(unit_name(v.unit).to_string()),
                Cell::Number(v.margin),
                Cell::Text(
                    v.measured
                        .as_ref()
                        .err()
                        .map(ToString::to_string)
                        .unwrap_or_default(),
                ),
            ]);
        }
    }
    csv.into_text()
}

/// The unit of a CSV or JSON value: SI symbols in ASCII.
pub fn unit_name(unit: Unit) -> &'static str {
    match unit {
        Unit::Ohm => "ohm",
        Unit::Degree => "deg",
        other => other.symbol(),
    }
}

/// The JSON document of `rolloff check --format json`.
#[derive(Debug, Serialize)]
struct CheckView {
    passed: usize,
    failed: usize,
    files: Vec<FileView>,
}

#[derive(Debug, Serialize)]
struct FileView {
    file: String,
    title: Option<String>,
    expectations: Vec<ExpectationView>,
    error: Option<String>,
}

#[derive(Debug, Serialize)]
struct ExpectationView {
    text: String,
    line: usize,
    pass: bool,
    /// In `unit` (SI base units; dB; degrees; dB/decade).
    measured: Option<f64>,
    unit: &'static str,
    bound: String,
    margin: Option<f64>,
    /// Why nothing was measured.
    reason: Option<String>,
}

impl CheckView {
    fn new(results: &[FileResult]) -> Self {
        let all = results.iter().flat_map(|r| &r.verdicts);
        let passed = all.clone().filter(|(_, v)| v.pass).count();
        let failed = all.filter(|(_, v)| !v.pass).count();
        let files = results
            .iter()
            .map(|r| FileView {
                file: r.name.clone(),
                title: r.title.clone(),
                expectations: r
                    .verdicts
                    .iter()
                    .map(|(line, v)| ExpectationView {
                        text: v.text.clone(),
                        line: *line,
                        pass: v.pass,
                        measured: v.measured.as_ref().ok().copied(),
                        unit: unit_name(v.unit),
                        bound: v.bound.clone(),
                        margin: v.margin,
                        reason: v.measured.as_ref().err().map(ToString::to_string),
                    })
                    .collect(),
                error: r.error.clone(),
            })
            .collect();
        Self {
            passed,
            failed,
            files,
        }
    }
}
