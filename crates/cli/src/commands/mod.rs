//! One module per command; this one holds what they share: loading a circuit, printing
//! diagnostics and the outcome that becomes the exit code.

pub mod bias;
pub mod check;
pub mod design;
pub mod fit;
pub mod plot;
pub mod report;
pub mod sensitivity;
pub mod snapshot;
pub mod sweep;
pub mod tolerance;
pub mod values;

use std::path::Path;
use std::process::ExitCode;

use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, CompileOptions};

use crate::diagnostics::{self, Message, Severity};
use crate::input::{self, Source};

/// How a command ended, as the exit code says it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Everything ran and holds: exit 0.
    Pass,
    /// A verdict: an expectation failed or a comparison went beyond a threshold: exit 1.
    Fail,
}

/// The run could not be judged (the reason has been printed): exit 2.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Reported;

/// The exit code for a command's result.
pub fn exit_code(result: Result<Outcome, Reported>) -> ExitCode {
    match result {
        Ok(Outcome::Pass) => ExitCode::SUCCESS,
        Ok(Outcome::Fail) => ExitCode::from(1),
        Err(Reported) => ExitCode::from(2),
    }
}

/// What every command needs from the global options.
#[derive(Debug, Clone)]
pub struct Session {
    /// `--set name=value` pairs, in order.
    pub overrides: Vec<(String, String)>,
}

impl Session {
    /// Prints an error that refers to no source text and returns [`Reported`].
    pub fn error(&self, message: &str) -> Reported {
        anstream::eprintln!(
            "{}",
            diagnostics::render_plain(Severity::Error, message, true)
        );
        Reported
    }

    /// Prints a warning that refers to no source text.
    pub fn warning(&self, message: &str) {
        anstream::eprintln!(
            "{}",
            diagnostics::render_plain(Severity::Warning, message, true)
        );
    }

    /// Prints a message against its source.
    pub fn message(&self, message: &Message, source: &Source) {
        // A blank line after each source diagnostic keeps several of them apart.
        anstream::eprintln!(
            "{}\n",
            diagnostics::render(message, &source.name, &source.text, true)
        );
    }

    /// Reads and compiles a circuit, printing every diagnostic.
    ///
    /// # Errors
    /// [`Reported`] when the file cannot be read or has errors.
    pub fn load(&self, path: &Path) -> Result<Loaded, Reported> {
        let source = input::read_source(path).map_err(|m| self.error(&m))?;
        let options = CompileOptions {
            overrides: self.overrides.clone(),
        };
        let compiled = rolloff_netlist::compile(&source.text, &options);
        for diagnostic in &compiled.diagnostics {
            self.message(&message_of(diagnostic), &source);
        }
        match compiled.circuit {
            Some(circuit) => Ok(Loaded { source, circuit }),
            None => Err(Reported),
        }
    }

    /// Stamps the circuit, printing the analyzer's warnings.
    ///
    /// # Errors
    /// [`Reported`] when the circuit cannot be solved (the error names the part or node).
    pub fn analyzer(&self, loaded: &Loaded) -> Result<Analyzer, Reported> {
        let analyzer = Analyzer::new(&loaded.circuit)
            .map_err(|e| self.error(&format!("{}: {e}", loaded.source.name)))?;
        for warning in analyzer.warnings() {
            self.warning(&format!("{}: {warning}", loaded.source.name));
        }
        Ok(analyzer)
    }
}

/// A compiled circuit with the text it came from.
#[derive(Debug, Clone)]
pub struct Loaded {
    /// The file as read.
    pub source: Source,
    /// The elaborated circuit.
    pub circuit: Circuit,
}

impl Loaded {
    /// The circuit's title, else the file name.
    pub fn title(&self) -> String {
        self.circuit
            .title
            .clone()
            .unwrap_or_else(|| self.source.name.clone())
    }
}

/// A library diagnostic as a renderable message.
fn message_of(diagnostic: &rolloff_netlist::Diagnostic) -> Message {
    Message {
        severity: Some(match diagnostic.severity {
            rolloff_netlist::Severity::Error => Severity::Error,
            rolloff_netlist::Severity::Warning => Severity::Warning,
        }),
        message: diagnostic.message.clone(),
        // A `--set` problem has no place in the file; it is shown without a snippet.
        span: (diagnostic.kind != rolloff_netlist::DiagnosticKind::Override)
            .then_some(diagnostic.span.start..diagnostic.span.end),
        label: diagnostic.expected.clone(),
        help: diagnostic.help.clone(),
        notes: diagnostic.notes.clone(),
    }
}

/// The name shown in diagnostics about the sweep options.
const COMMAND_LINE: &str = "<command line>";

impl Session {
    /// The frequencies to visit: the file's `sweep` (or the language default), with the
    /// command line's options replacing what they name.
    ///
    /// The options are written back into a `sweep` line and compiled by the library, so
    /// they accept exactly what the language accepts (`1k`, `10 Hz`, `1.5 kHz`) and a
    /// mistake is reported with a caret under it.
    ///
    /// # Errors
    /// [`Reported`] when an option does not compile into a sweep.
    pub fn frequencies(
        &self,
        loaded: &Loaded,
        options: &crate::args::SweepOverride,
    ) -> Result<Vec<f64>, Reported> {
        let file_sweep = loaded.circuit.sweep_or_default();
        if options.is_empty() {
            return Ok(file_sweep.frequencies());
        }
        let line = sweep_line(&file_sweep, options);
        // The file is compiled again with its `sweep` line replaced, so the options mean
        // exactly what the language means; only diagnostics on that line are new.
        let (text, at) = replace_sweep(&loaded.source.text, &line);
        let options = CompileOptions {
            overrides: self.overrides.clone(),
        };
        let compiled = rolloff_netlist::compile(&text, &options);
        let source = Source {
            name: COMMAND_LINE.to_string(),
            text: line.clone(),
        };
        let mut reported = false;
        for diagnostic in compiled.diagnostics.iter().filter(|d| d.is_error()) {
            let mut message = message_of(diagnostic);
            let inside = diagnostic.span.start >= at && diagnostic.span.end <= at + line.len();
            message.span = inside.then(|| diagnostic.span.start - at..diagnostic.span.end - at);
            self.message(&message, &source);
            reported = true;
        }
        match compiled.circuit.and_then(|c| c.sweep) {
            Some(sweep) => Ok(sweep.frequencies()),
            None if reported => Err(Reported),
            None => Err(self.error("the sweep options do not describe a sweep")),
        }
    }
}

/// The source with its `sweep` statement replaced by `line` (or `line` appended), and
/// the byte offset where `line` starts.
fn replace_sweep(source: &str, line: &str) -> (String, usize) {
    let mut text = String::with_capacity(source.len() + line.len());
    let mut at = None;
    for original in source.split_inclusive('\n') {
        let first_word = original.split_whitespace().next();
        if first_word == Some("sweep") && at.is_none() {
            at = Some(text.len());
            text.push_str(line);
        } else {
            text.push_str(original);
        }
    }
    let at = at.unwrap_or_else(|| {
        if !text.is_empty() && !text.ends_with('\n') {
            text.push('\n');
        }
        let at = text.len();
        text.push_str(line);
        at
    });
    (text, at)
}

/// A `sweep` line from the file's sweep and the options that replace parts of it.
fn sweep_line(file_sweep: &rolloff_netlist::Sweep, options: &crate::args::SweepOverride) -> String {
    use rolloff_netlist::Sweep;
    if !options.at.is_empty() {
        return format!("sweep at {}\n", options.at.join(", "));
    }
    let (start, stop) = match file_sweep {
        Sweep::Log { start, stop, .. } | Sweep::Linear { start, stop, .. } => (*start, *stop),
        Sweep::List(points) => (
            points.iter().copied().fold(f64::INFINITY, f64::min),
            points.iter().copied().fold(0.0, f64::max),
        ),
    };
    let from = options
        .from
        .clone()
        .unwrap_or_else(|| format!("{start:e} Hz"));
    let to = options.to.clone().unwrap_or_else(|| format!("{stop:e} Hz"));
    let step = match (options.every.as_ref(), options.per_decade, file_sweep) {
        (Some(every), _, _) => format!("every {every}"),
        (None, Some(n), _) => format!("per_decade {n}"),
        (None, None, Sweep::Linear { step, .. }) => format!("every {step:e} Hz"),
        (None, None, Sweep::Log { per_decade, .. }) => format!("per_decade {per_decade}"),
        (None, None, Sweep::List(_)) => "per_decade 50".to_string(),
    };
    format!("sweep {from} to {to} {step}\n")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::args::SweepOverride;
    use rolloff_netlist::Sweep;

    #[test]
    fn the_sweep_line_is_replaced_or_appended() {
        let source =
            "# sweep in a comment stays\nprobe out\n  sweep 1 Hz to 1 kHz per_decade 5\nexpect x\n";
        let (text, at) = replace_sweep(source, "sweep at 5 Hz\n");
        assert_eq!(
            text,
            "# sweep in a comment stays\nprobe out\nsweep at 5 Hz\nexpect x\n"
        );
        assert_eq!(&text[at..at + 5], "sweep");
        let (text, at) = replace_sweep("probe out", "sweep at 5 Hz\n");
        assert_eq!(text, "probe out\nsweep at 5 Hz\n");
        assert_eq!(at, 10);
    }

    #[test]
    fn options_replace_only_what_they_name() {
        let file = Sweep::Log {
            start: 10.0,
            stop: 1e5,
            per_decade: 40,
        };
        let only_points = SweepOverride {
            per_decade: Some(5),
            ..SweepOverride::default()
        };
        assert_eq!(
            sweep_line(&file, &only_points),
            "sweep 1e1 Hz to 1e5 Hz per_decade 5\n"
        );
        let linear = SweepOverride {
            from: Some("0".into()),
            every: Some("1 kHz".into()),
            ..SweepOverride::default()
        };
        assert_eq!(
            sweep_line(&file, &linear),
            "sweep 0 to 1e5 Hz every 1 kHz\n"
        );
        let spots = SweepOverride {
            at: vec!["50".into(), "1k".into()],
            ..SweepOverride::default()
        };
        assert_eq!(sweep_line(&file, &spots), "sweep at 50, 1k\n");
    }
}
