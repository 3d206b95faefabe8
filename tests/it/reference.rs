//! The reference suite: every case under `fixtures/reference/cases/` solved by the whole
//! pipeline and compared with values computed outside the project.
//!
//! Each case is a `.rol` circuit and a `.json` file of checks written by
//! `fixtures/reference/generate.py` from scipy.signal's analog prototypes, numpy chain
//! (ABCD) matrices, closed-form textbook formulas and facts of the trade (marked
//! "common practice"). Every check names its source and carries its tolerance; the
//! harness walks the directory, so no case can be forgotten.
//!
//! Run with `UPDATE_VERIFICATION=1` to rewrite `docs/verification.md` from the run's
//! worst errors; without it the test only asserts.

#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};

use rolloff_mna::{Analyzer, DenseLu, LinearSolver};
use rolloff_netlist::{
    Circuit, CompileOptions, Metric, MetricKind, MetricOptions, Severity, Target,
};
use serde::Deserialize;

/// The issue's floor: the suite must hold at least this many cases.
const MIN_CASES: usize = 25;

/// One `<name>.json` file.
#[derive(Debug, Deserialize)]
struct CaseFile {
    name: String,
    summary: String,
    source: String,
    generated_with: Versions,
    checks: Vec<Check>,
}

/// The library versions that produced a case's reference values.
#[derive(Debug, Deserialize)]
struct Versions {
    python: String,
    numpy: String,
    scipy: String,
}

/// One expected value with its tolerance and source.
#[derive(Debug, Deserialize)]
struct Check {
    metric: String,
    probe: String,
    freq_hz: Option<f64>,
    f1_hz: Option<f64>,
    f2_hz: Option<f64>,
    level_db: Option<f64>,
    node: Option<String>,
    part: Option<String>,
    expected: f64,
    unit: String,
    tolerance: f64,
    tolerance_kind: String,
    source: String,
    common_practice: bool,
    why_tolerance: Option<String>,
    in_rol: bool,
}

/// What one check measured.
#[derive(Debug)]
struct Outcome {
    label: String,
    measured: Result<f64, String>,
    /// Absolute (dB, degrees, V, dB/dec) or relative (Hz, s) error; `None` when unmeasured.
    error: Option<f64>,
    pass: bool,
}

/// What one case produced.
#[derive(Debug)]
struct CaseRun {
    file: CaseFile,
    /// Compile, analyzer and expectation problems that fail the case outright.
    problems: Vec<String>,
    /// Netlist and solver warnings (reported, not failing).
    warnings: Vec<String>,
    outcomes: Vec<Outcome>,
    /// `expect` lines of the `.rol` file evaluated by `rolloff_report::check`.
    verdicts_passed: usize,
    verdicts_total: usize,
}

impl CaseRun {
    fn failed(&self) -> bool {
        !self.problems.is_empty() || self.outcomes.iter().any(|o| !o.pass)
    }
}

fn cases_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/reference/cases")
}

/// The case names: every `.rol` file, which must have its `.json` beside it.
fn case_names() -> Vec<String> {
    let mut names: Vec<String> = fs::read_dir(cases_dir())
        .expect("fixtures/reference/cases exists")
        .map(|entry| entry.unwrap().path())
        .filter(|path| path.extension().is_some_and(|e| e == "rol"))
        .map(|path| path.file_stem().unwrap().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

#[test]
fn every_case_has_its_expected_values() {
    let dir = cases_dir();
    let names = case_names();
    assert!(
        names.len() >= MIN_CASES,
        "the suite needs at least {MIN_CASES} cases, found {}",
        names.len()
    );
    for entry in fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        let stem = path.file_stem().unwrap().to_string_lossy().into_owned();
        match path.extension().and_then(|e| e.to_str()) {
            Some("rol") => assert!(
                dir.join(format!("{stem}.json")).exists(),
                "{stem}.rol has no .json"
            ),
            Some("json") => assert!(names.contains(&stem), "{stem}.json has no .rol"),
            _ => panic!("unexpected file {} in the reference cases", path.display()),
        }
    }
}

#[test]
fn reference_cases_match_their_sources() {
    let runs: Vec<CaseRun> = case_names()
        .iter()
        .map(|name| run_case::<DenseLu>(name))
        .collect();
    let table = failure_report(&runs);
    if std::env::var_os("UPDATE_VERIFICATION").is_some() {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/verification.md");
        fs::create_dir_all(path.parent().unwrap()).unwrap();
        fs::write(&path, verification_markdown(&runs)).unwrap();
    }
    let failed: Vec<&str> = runs
        .iter()
        .filter(|r| r.failed())
        .map(|r| r.file.name.as_str())
        .collect();
    assert!(
        failed.is_empty(),
        "{} of {} reference cases failed: {}\n{table}",
        failed.len(),
        runs.len(),
        failed.join(", ")
    );
}

/// The same cases through the sparse solver: same references, same tolerances.
#[test]
fn reference_cases_match_their_sources_with_the_sparse_solver() {
    let runs: Vec<CaseRun> = case_names()
        .iter()
        .map(|name| run_case::<rolloff_mna::SparseLu>(name))
        .collect();
    let failed: Vec<&str> = runs
        .iter()
        .filter(|r| r.failed())
        .map(|r| r.file.name.as_str())
        .collect();
    assert!(
        failed.is_empty(),
        "sparse solver: {} of {} reference cases failed: {}\n{}",
        failed.len(),
        runs.len(),
        failed.join(", "),
        failure_report(&runs)
    );
}

fn run_case<S: LinearSolver>(name: &str) -> CaseRun {
    let dir = cases_dir();
    let json = fs::read_to_string(dir.join(format!("{name}.json"))).unwrap();
    let file: CaseFile = serde_json::from_str(&json).unwrap_or_else(|e| panic!("{name}.json: {e}"));
    assert_eq!(file.name, name, "{name}.json names another case");
    let source = fs::read_to_string(dir.join(format!("{name}.rol"))).unwrap();
    let mut run = CaseRun {
        file,
        problems: Vec::new(),
        warnings: Vec::new(),
        outcomes: Vec::new(),
        verdicts_passed: 0,
        verdicts_total: 0,
    };
    let file_name = format!("fixtures/reference/cases/{name}.rol");
    let compiled = rolloff_netlist::compile(&source, &CompileOptions::default());
    for diagnostic in &compiled.diagnostics {
        let text = rolloff_netlist::render_diagnostic(diagnostic, &file_name, &source);
        match diagnostic.severity {
            Severity::Error => run.problems.push(text),
            Severity::Warning => run.warnings.push(text),
        }
    }
    let Some(circuit) = compiled.circuit else {
        run.problems.push("the case did not compile".to_string());
        return run;
    };
    let mut analyzer = match Analyzer::<S>::with_solver(&circuit) {
        Ok(analyzer) => analyzer,
        Err(error) => {
            run.problems.push(format!("Analyzer::new: {error}"));
            return run;
        }
    };
    run.warnings
        .extend(analyzer.warnings().iter().map(|w| format!("{w:?}")));
    let freqs = circuit.sweep_or_default().frequencies();
    for check in &run.file.checks {
        run.outcomes
            .push(measure_check(&mut analyzer, &circuit, &freqs, check));
    }
    // The headline checks are also written as `expect` lines; the report crate must
    // pass every one of them.
    let verdicts = rolloff_report::check(&mut analyzer, &freqs);
    run.verdicts_total = verdicts.len();
    for verdict in &verdicts {
        if verdict.pass {
            run.verdicts_passed += 1;
        } else {
            run.problems.push(format!(
                "expect {} failed: measured {:?}, bound {}",
                verdict.text, verdict.measured, verdict.bound
            ));
        }
    }
    let written = run.file.checks.iter().filter(|c| c.in_rol).count();
    if verdicts.len() != written {
        run.problems.push(format!(
            "{} expect lines evaluated, the case file has {written}",
            verdicts.len()
        ));
    }
    run
}

fn measure_check<S: LinearSolver>(
    analyzer: &mut Analyzer<S>,
    circuit: &Circuit,
    freqs: &[f64],
    check: &Check,
) -> Outcome {
    let label = check_label(check);
    let metric = match metric_of(circuit, check) {
        Ok(metric) => metric,
        Err(reason) => {
            return Outcome {
                label,
                measured: Err(reason),
                error: None,
                pass: false,
            };
        }
    };
    let measured = rolloff_report::measure(analyzer, &metric, freqs).map_err(|e| e.to_string());
    let error = measured.as_ref().ok().map(|&value| deviation(check, value));
    let pass = error.is_some_and(|e| e <= check.tolerance);
    Outcome {
        label,
        measured,
        error,
        pass,
    }
}

/// The error in the check's own terms: relative for `relative` checks, absolute otherwise,
/// and on the circle for phases.
fn deviation(check: &Check, measured: f64) -> f64 {
    if check.metric == "phase" {
        let d = (measured - check.expected).rem_euclid(360.0);
        return d.min(360.0 - d);
    }
    match check.tolerance_kind.as_str() {
        "relative" if check.expected != 0.0 => (measured / check.expected - 1.0).abs(),
        _ => (measured - check.expected).abs(),
    }
}

/// The metric a check names, on the probe (or node or part) it names, with the probe's
/// own passband reference so the harness measures exactly what the generator computed.
fn metric_of(circuit: &Circuit, check: &Check) -> Result<Metric, String> {
    let need = |v: Option<f64>, what: &str| v.ok_or_else(|| format!("check has no {what}"));
    let kind = match check.metric.as_str() {
        "gain" => MetricKind::Gain {
            freq: need(check.freq_hz, "freq_hz")?,
        },
        "phase" => MetricKind::Phase {
            freq: need(check.freq_hz, "freq_hz")?,
        },
        "group_delay" => MetricKind::GroupDelay {
            freq: need(check.freq_hz, "freq_hz")?,
        },
        "slope" => MetricKind::Slope {
            f1: need(check.f1_hz, "f1_hz")?,
            f2: need(check.f2_hz, "f2_hz")?,
        },
        "cutoff" => MetricKind::Cutoff,
        "cutoff_low" => MetricKind::CutoffLow,
        "cutoff_high" => MetricKind::CutoffHigh,
        "bandwidth" => MetricKind::Bandwidth,
        "resonance" => MetricKind::Resonance,
        "q" => MetricKind::Q,
        "notch_freq" => MetricKind::NotchFreq,
        "peak_freq" => MetricKind::PeakFreq,
        "peak_gain" => MetricKind::PeakGain,
        "passband_gain" => MetricKind::PassbandGain,
        "bias" => MetricKind::Bias,
        other => return Err(format!("unknown metric `{other}` in the case file")),
    };
    let probe = circuit
        .probe(&check.probe)
        .ok_or_else(|| format!("no probe `{}`", check.probe))?;
    let target = if let Some(node) = &check.node {
        Target::Node(
            circuit
                .node(node)
                .ok_or_else(|| format!("no node `{node}`"))?,
        )
    } else if let Some(part) = &check.part {
        Target::Part(
            circuit
                .part(part)
                .ok_or_else(|| format!("no part `{part}`"))?,
        )
    } else {
        Target::Probe(probe)
    };
    let options = MetricOptions {
        reference: circuit.probes[probe.index()].reference,
        level_db: check.level_db,
    };
    Ok(Metric {
        kind,
        target,
        options,
    })
}

fn check_label(check: &Check) -> String {
    let on = check
        .node
        .as_ref()
        .or(check.part.as_ref())
        .unwrap_or(&check.probe);
    let mut label = format!("{}({on}", check.metric);
    for (name, value) in [
        ("f", check.freq_hz),
        ("f1", check.f1_hz),
        ("f2", check.f2_hz),
    ] {
        if let Some(v) = value {
            let _ = write!(label, ", {name} = {} Hz", short(v));
        }
    }
    if let Some(level) = check.level_db {
        let _ = write!(label, ", level {level} dB");
    }
    label.push(')');
    label
}

/// The unit an error is reported in.
fn error_unit(check: &Check) -> &str {
    if check.tolerance_kind == "relative" {
        "rel"
    } else {
        &check.unit
    }
}

fn failure_report(runs: &[CaseRun]) -> String {
    let mut out = String::new();
    for run in runs.iter().filter(|r| r.failed()) {
        let _ = writeln!(out, "== {}", run.file.name);
        for problem in &run.problems {
            let _ = writeln!(out, "  problem: {problem}");
        }
        for (outcome, check) in run.outcomes.iter().zip(&run.file.checks) {
            if !outcome.pass {
                let _ = writeln!(
                    out,
                    "  {}: expected {} {} ± {} ({}), measured {:?}, error {:?}  [{}]",
                    outcome.label,
                    check.expected,
                    check.unit,
                    check.tolerance,
                    check.tolerance_kind,
                    outcome.measured,
                    outcome.error,
                    check.source
                );
            }
        }
    }
    out
}

/// Worst error per (metric, tolerance) group of one case, in the metric's error unit;
/// `None` when a check of the group could not be measured.
fn worst_errors(run: &CaseRun) -> Vec<(String, Option<f64>)> {
    let mut groups: Vec<(String, Option<f64>)> = Vec::new();
    for (outcome, check) in run.outcomes.iter().zip(&run.file.checks) {
        let key = tolerance_text(check);
        let index = groups
            .iter()
            .position(|(k, _)| *k == key)
            .unwrap_or_else(|| {
                groups.push((key, Some(0.0)));
                groups.len() - 1
            });
        let entry = &mut groups[index].1;
        *entry = match (*entry, outcome.error) {
            (Some(a), Some(b)) => Some(a.max(b)),
            _ => None,
        };
    }
    groups
}

/// `gain ± 1e-6 dB`: a check's metric and bound as the tables print them.
fn tolerance_text(check: &Check) -> String {
    format!(
        "{} ± {} {}",
        check.metric,
        short(check.tolerance),
        error_unit(check)
    )
}

/// A number in few characters: plain between 0.01 and 10⁴, else in exponent form.
fn short(x: f64) -> String {
    if x == 0.0 {
        "0".to_string()
    } else if (0.01..1e4).contains(&x.abs()) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

fn verification_markdown(runs: &[CaseRun]) -> String {
    let mut out = String::new();
    let versions = runs.first().map(|r| &r.file.generated_with);
    let _ = writeln!(out, "# Verification against outside references\n");
    let _ = writeln!(
        out,
        "This file is written by the reference suite (`tests/it/reference.rs`) from a real run:\n\
         `UPDATE_VERIFICATION=1 cargo test --test it reference`. Each case under\n\
         `fixtures/reference/cases/` is a `.rol` circuit and a `.json` file of checks written by\n\
         `fixtures/reference/generate.py` (run by hand; its output is committed, so CI needs no\n\
         Python). No expected value comes from rolloff itself."
    );
    if let Some(v) = versions {
        let _ = writeln!(
            out,
            "\nReference values generated with Python {}, numpy {}, scipy {} (see\n\
             `fixtures/reference/versions.json`).",
            v.python, v.numpy, v.scipy
        );
    }
    let _ = writeln!(
        out,
        "\nDefault tolerances: gains within 1e-6 dB, phases within 1e-6°, frequencies (cutoffs,\n\
         notches) within 1e-7 relative, slopes within 1e-6 dB/decade. Looser bounds are listed\n\
         with their reason below the table. Errors are absolute in the check's unit, `rel` marks\n\
         a relative error, phases are compared on the circle.\n"
    );
    let passed = runs.iter().filter(|r| !r.failed()).count();
    let checks: usize = runs.iter().map(|r| r.outcomes.len()).sum();
    let _ = writeln!(
        out,
        "Result of the run: {passed} of {} cases pass, {checks} checks in all.\n",
        runs.len()
    );
    let _ = writeln!(
        out,
        "| Case | What is checked | Source | Tolerance: worst error observed | Result |"
    );
    let _ = writeln!(out, "| --- | --- | --- | --- | --- |");
    for run in runs {
        let _ = writeln!(
            out,
            "| `{}` | {} | {} | {} | {} |",
            run.file.name,
            checked_summary(run),
            run.file.source.replace('|', "\\|"),
            worst_summary(run),
            if run.failed() { "**fail**" } else { "pass" }
        );
    }
    let _ = writeln!(
        out,
        "\nNotes on the method:\n\n\
         - Every LC ladder's element values are confirmed in `generate.py` against scipy's\n  \
         prototype (ABCD response of the normalised ladder vs `freqs`, 0.01..100 rad/s); the\n  \
         Bessel table values (from memory) also against a Darlington synthesis of scipy's\n  \
         polynomial. `fixtures/reference/selfcheck.py` re-reads every `.rol` file and checks\n  \
         that the text reproduces its gain and phase values, so a fixture slip cannot be\n  \
         blamed on rolloff.\n\
         - Cutoffs are measured against the probe's `ref` frequency, as the generator\n  \
         computes them; each case puts `ref` where the closed form holds to 1e-10.\n\
         - The Chebyshev ripple edge is checked as `cutoff_high` at level −(ripple) dB: the\n  \
         ripple minima inside the band touch that level exactly, so the report may count\n  \
         them as (double) crossings; the ripple edge is the highest one.\n\
         - The table is from the dense solver; `cargo test` runs the same cases, references\n  \
         and tolerances through the sparse solver as well."
    );
    let _ = writeln!(out, "\n## Looser tolerances and why\n");
    for run in runs {
        for check in run.file.checks.iter().filter(|c| c.why_tolerance.is_some()) {
            let _ = writeln!(
                out,
                "- `{}` {}: ± {} {} — {}",
                run.file.name,
                check_label(check),
                short(check.tolerance),
                error_unit(check),
                check.why_tolerance.as_deref().unwrap_or_default()
            );
        }
    }
    let _ = writeln!(out, "\n## Facts of the trade (common practice)\n");
    for run in runs {
        for check in run.file.checks.iter().filter(|c| c.common_practice) {
            let _ = writeln!(
                out,
                "- `{}` {} = {} {}: {}",
                run.file.name,
                check_label(check),
                check.expected,
                check.unit,
                check.source
            );
        }
    }
    let failed: Vec<&CaseRun> = runs.iter().filter(|r| r.failed()).collect();
    if !failed.is_empty() {
        let _ = writeln!(
            out,
            "\n## Failures in this run\n\n```text\n{}```",
            failure_report(runs)
        );
    }
    let warned: Vec<&CaseRun> = runs.iter().filter(|r| !r.warnings.is_empty()).collect();
    if !warned.is_empty() {
        let _ = writeln!(out, "\n## Warnings in this run\n");
        for run in warned {
            for warning in &run.warnings {
                let _ = writeln!(out, "- `{}`: {}", run.file.name, warning.replace('\n', " "));
            }
        }
    }
    out
}

fn checked_summary(run: &CaseRun) -> String {
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    for check in &run.file.checks {
        *counts.entry(check.metric.as_str()).or_default() += 1;
    }
    let parts: Vec<String> = counts
        .iter()
        .map(|(metric, n)| {
            if *n == 1 {
                (*metric).to_string()
            } else {
                format!("{n}× {metric}")
            }
        })
        .collect();
    format!(
        "{}: {} ({} `expect` lines)",
        run.file.summary.replace('|', "\\|"),
        parts.join(", "),
        run.verdicts_total
    )
}

fn worst_summary(run: &CaseRun) -> String {
    if !run.problems.is_empty() && run.outcomes.is_empty() {
        return "not run (see failures)".to_string();
    }
    worst_errors(run)
        .iter()
        .map(|(group, worst)| match worst {
            Some(e) => format!("{group}: {e:.1e}"),
            None => format!("{group}: not measured"),
        })
        .collect::<Vec<_>>()
        .join("; ")
}
