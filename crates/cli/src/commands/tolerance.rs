//! `rolloff tolerance FILE`: Monte Carlo over the parts' tolerance bands (statistics per
//! metric, yield per expectation and overall), optionally the worst case over the
//! tolerance box and one SVG histogram per metric.

use std::path::PathBuf;
use std::time::Duration;

use std::fmt::Write as _;

use clap::Args;
use rolloff_netlist::{Circuit, Metric, PartId, Tolerance};
use rolloff_tolerance::montecarlo::MonteCarloReport;
use rolloff_tolerance::worstcase::{Corner, Extreme, WorstCaseReport};
use rolloff_tolerance::{
    Distribution, Model, MonteCarloOptions, WorstCaseOptions, monte_carlo, worst_case,
};
use serde::Serialize;

use super::check::unit_name;
use super::design::{self, parse_band, part_symbol_of, unit_ascii};
use super::{Outcome, Reported, Session};
use crate::args::{FileArg, Format};
use crate::csv::{Cell, Csv};
use crate::eng::{fixed, quantity};
use crate::json::{finite, to_json};
use crate::table::{Align, Table};

/// `rolloff tolerance`.
#[derive(Debug, Args)]
pub struct ToleranceArgs {
    /// The circuit file; its `expect` lines name the metrics and the yields.
    #[command(flatten)]
    pub input: FileArg,
    /// Number of Monte Carlo trials.
    #[arg(long, value_name = "N", default_value_t = 1000)]
    pub runs: usize,
    /// The seed: the same seed gives the same results, whatever `--jobs`.
    #[arg(long, value_name = "S", default_value_t = 1)]
    pub seed: u64,
    /// Draw values from a Gaussian with the tolerance as 3σ (truncated to the band)
    /// instead of uniformly over the band.
    #[arg(long)]
    pub gaussian: bool,
    /// The band of resistors, capacitors and inductors that have no `tol`
    /// (`5%`, `-20% .. +80%`); without it they stay at their nominal value.
    #[arg(long, value_name = "BAND", value_parser = parse_band)]
    pub default_tol: Option<Tolerance>,
    /// Worker threads (default: one per core).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Also find each metric's extremes over the corners of the tolerance box.
    #[arg(long)]
    pub worst_case: bool,
    /// Write one SVG histogram per metric into this directory (created if needed).
    #[arg(long, value_name = "DIR")]
    pub histograms: Option<PathBuf>,
    /// Bins of each histogram.
    #[arg(long, value_name = "N", default_value_t = 30)]
    pub bins: usize,
    /// Exit 1 when the overall yield is below this percentage (`99`, `99.5%`).
    #[arg(long, value_name = "PERCENT", value_parser = parse_percent)]
    pub min_yield: Option<f64>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// Reads a percentage between 0 and 100 (`99`, `99.5%`) as a fraction.
fn parse_percent(text: &str) -> Result<f64, String> {
    let number = text.trim().trim_end_matches('%').trim();
    match number.parse::<f64>() {
        Ok(p) if (0.0..=100.0).contains(&p) => Ok(p / 100.0),
        _ => Err(format!("`{text}` is not a percentage between 0 and 100")),
    }
}

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or solved, has no expectation, still has
/// `?` parts, the options are out of range or a histogram cannot be written.
pub fn run(args: &ToleranceArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let model = design::model(session, &loaded)?;
    let pool = design::pool(session, args.jobs)?;
    let options = MonteCarloOptions {
        runs: args.runs,
        seed: args.seed,
        distribution: if args.gaussian {
            Distribution::Gaussian
        } else {
            Distribution::Uniform
        },
        default_tolerance: args.default_tol,
        histogram_bins: args.bins,
    };
    // The bar counts the trials as the library measures them (one `measure_many` per
    // trial, plus one at nominal); indicatif hides it when stderr is not a terminal.
    let long = args.runs >= 100;
    let bar = if long {
        let bar = indicatif::ProgressBar::new(args.runs as u64 + 1);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{msg} [{bar:30}] {pos}/{len} runs, {eta} left",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar())
            .progress_chars("=> "),
        );
        bar.set_message("Monte Carlo");
        bar
    } else {
        indicatif::ProgressBar::hidden()
    };
    let counted = Counted {
        inner: model.clone(),
        bar: bar.clone(),
    };
    let report = monte_carlo(&counted, &options, Some(&pool));
    bar.finish_and_clear();
    let worst = if args.worst_case && report.is_ok() {
        let spinner = if long {
            let spinner = indicatif::ProgressBar::new_spinner();
            spinner.set_message("worst case: corners evaluated");
            spinner.enable_steady_tick(Duration::from_millis(120));
            spinner
        } else {
            indicatif::ProgressBar::hidden()
        };
        let options = WorstCaseOptions {
            default_tolerance: args.default_tol,
            ..WorstCaseOptions::default()
        };
        let counted = Counted {
            inner: model.clone(),
            bar: spinner.clone(),
        };
        let result = worst_case(&counted, &options, Some(&pool));
        spinner.finish_and_clear();
        Some(result)
    } else {
        None
    };
    let report = report.map_err(|e| design::failed(session, &loaded, &e))?;
    let worst = worst
        .transpose()
        .map_err(|e| design::failed(session, &loaded, &e))?;
    let view = ToleranceView::new(&loaded, &report, worst.as_ref());
    if let Some(dir) = &args.histograms {
        write_histograms(session, dir, &loaded.circuit, &report)?;
    }
    let text = match args.format {
        Format::Table => view.table(&loaded.circuit, &report),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    match args.min_yield {
        Some(min) if report.overall_yield < min => Ok(Outcome::Fail),
        _ => Ok(Outcome::Pass),
    }
}

/// A model that counts its measurements on a progress bar and otherwise is `inner`
/// (the values it gives are the inner model's, so results do not change).
#[derive(Debug, Clone)]
struct Counted<M> {
    inner: M,
    bar: indicatif::ProgressBar,
}

impl<M: Model> Model for Counted<M> {
    fn circuit(&self) -> &Circuit {
        self.inner.circuit()
    }

    fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), String> {
        self.inner.set_part_value(part, value)
    }

    fn measure(&mut self, metric: &Metric) -> Result<f64, String> {
        self.inner.measure(metric)
    }

    fn measure_many(&mut self, metrics: &[Metric]) -> Vec<Result<f64, String>> {
        let measured = self.inner.measure_many(metrics);
        self.bar.inc(1);
        measured
    }
}

fn write_histograms(
    session: &Session,
    dir: &std::path::Path,
    circuit: &Circuit,
    report: &MonteCarloReport,
) -> Result<(), Reported> {
    std::fs::create_dir_all(dir)
        .map_err(|e| session.error(&format!("cannot create `{}`: {e}", dir.display())))?;
    let mut used: Vec<String> = Vec::new();
    for m in &report.metrics {
        let (Some(histogram), Some(summary)) = (&m.histogram, &m.summary) else {
            session.warning(&format!(
                "{}: no value to draw a histogram of",
                m.entry.label
            ));
            continue;
        };
        let mut name = crate::histogram::file_stem(&m.entry.label);
        // Two metrics whose labels clean up to the same name get a numbered suffix.
        let base = name.clone();
        let mut k = 2;
        while used.contains(&name) {
            name = format!("{base}_{k}");
            k += 1;
        }
        used.push(name.clone());
        let unit = design::metric_unit(circuit, &m.entry.metric);
        let chart = crate::histogram::Chart {
            title: &m.entry.label,
            subtitle: format!(
                "{} runs, seed {}, {}",
                report.runs,
                report.seed,
                distribution_name(report.distribution)
            ),
            unit,
            histogram,
            summary,
            nominal: m.nominal.as_ref().ok().copied(),
        };
        let path = dir.join(format!("{name}.svg"));
        crate::input::write_output(&path, &crate::histogram::render(&chart))
            .map_err(|e| session.error(&e))?;
    }
    Ok(())
}

fn distribution_name(d: Distribution) -> &'static str {
    match d {
        Distribution::Gaussian => "gaussian",
        Distribution::Uniform => "uniform",
    }
}

/// The JSON document of `rolloff tolerance --format json` (field names are stable).
#[derive(Debug, Serialize)]
struct ToleranceView {
    file: String,
    title: Option<String>,
    runs: usize,
    seed: u64,
    /// The random generator and how trials get their streams.
    rng: &'static str,
    /// `uniform` or `gaussian`.
    distribution: &'static str,
    parts: Vec<PartView>,
    metrics: Vec<MetricView>,
    expectations: Vec<YieldView>,
    /// Trials in which every expectation held, as a fraction of the runs.
    overall_yield: f64,
    /// With `--worst-case`.
    worst_case: Option<WorstView>,
}

#[derive(Debug, Serialize)]
struct PartView {
    name: String,
    nominal: f64,
    /// `ohm`, `F` or `H`.
    unit: &'static str,
    /// The band as fractions (`-0.05`, `0.05`).
    lower: f64,
    upper: f64,
    /// Whether the band came from `--default-tol`.
    default_band: bool,
}

#[derive(Debug, Serialize)]
struct MetricView {
    /// The metric as the expectations write it (`cutoff(out)`).
    metric: String,
    unit: &'static str,
    /// At the nominal values; `null` if it could not be measured there.
    nominal: Option<f64>,
    /// Trials in which it was measured.
    count: usize,
    /// Trials in which it could not be, and the first reason.
    failures: usize,
    first_failure: Option<String>,
    min: Option<f64>,
    p01: Option<f64>,
    p50: Option<f64>,
    p99: Option<f64>,
    max: Option<f64>,
    mean: Option<f64>,
    std_dev: Option<f64>,
    histogram: Option<HistogramView>,
}

#[derive(Debug, Serialize)]
struct HistogramView {
    low: f64,
    high: f64,
    counts: Vec<u64>,
}

#[derive(Debug, Serialize)]
struct YieldView {
    /// The expectation as written.
    text: String,
    line: usize,
    /// Index into `metrics`.
    metric: usize,
    passed: usize,
    /// `passed / runs`.
    yield_fraction: f64,
}

#[derive(Debug, Serialize)]
struct WorstView {
    /// Whether every corner of the box was evaluated (else only the corners the
    /// sensitivity signs pick).
    exhaustive: bool,
    metrics: Vec<WorstMetricView>,
}

#[derive(Debug, Serialize)]
struct WorstMetricView {
    metric: String,
    unit: &'static str,
    nominal: f64,
    min: Option<f64>,
    max: Option<f64>,
    /// Per part (in `parts` order), `low` or `high`, at the minimum and maximum.
    min_corner: Option<Vec<&'static str>>,
    max_corner: Option<Vec<&'static str>>,
    /// The extremes at the corners the sensitivity signs pick.
    sign_min: Option<f64>,
    sign_max: Option<f64>,
    /// Whether those matched the exhaustive extremes; `null` without an exhaustive run.
    signs_matched: Option<bool>,
    /// Corners where the metric could not be measured.
    corner_failures: usize,
}

fn corner_names(e: &Extreme) -> Vec<&'static str> {
    e.corner
        .iter()
        .map(|c| match c {
            Corner::Low => "low",
            Corner::High => "high",
        })
        .collect()
}

impl ToleranceView {
    fn new(
        loaded: &super::Loaded,
        report: &MonteCarloReport,
        worst: Option<&WorstCaseReport>,
    ) -> Self {
        let circuit = &loaded.circuit;
        let unit = |metric| unit_name(design::metric_unit(circuit, metric));
        let parts = report
            .parts
            .iter()
            .map(|p| PartView {
                name: p.name.clone(),
                nominal: p.nominal,
                unit: unit_ascii(part_symbol_of(circuit, p.part.index())),
                lower: p.band.lower,
                upper: p.band.upper,
                default_band: p.default_band,
            })
            .collect();
        let metrics = report
            .metrics
            .iter()
            .map(|m| {
                let s = m.summary;
                MetricView {
                    metric: m.entry.label.clone(),
                    unit: unit(&m.entry.metric),
                    nominal: m.nominal.as_ref().ok().copied().and_then(finite),
                    count: s.map_or(0, |s| s.count),
                    failures: m.failures,
                    first_failure: m.first_failure.clone(),
                    min: s.map(|s| s.min),
                    p01: s.map(|s| s.p01),
                    p50: s.map(|s| s.p50),
                    p99: s.map(|s| s.p99),
                    max: s.map(|s| s.max),
                    mean: s.map(|s| s.mean),
                    std_dev: s.and_then(|s| s.std_dev),
                    histogram: m.histogram.as_ref().map(|h| HistogramView {
                        low: h.low,
                        high: h.high,
                        counts: h.counts.clone(),
                    }),
                }
            })
            .collect();
        let expectations = report
            .expectations
            .iter()
            .map(|y| YieldView {
                text: y.text.clone(),
                line: rolloff_netlist::line_col(
                    &loaded.source.text,
                    circuit.expectations[y.expectation].span.start,
                )
                .0,
                metric: y.metric,
                passed: y.passed,
                yield_fraction: y.yield_fraction,
            })
            .collect();
        let worst_case = worst.map(|w| WorstView {
            exhaustive: w.exhaustive,
            metrics: w
                .metrics
                .iter()
                .map(|m| WorstMetricView {
                    metric: m.entry.label.clone(),
                    unit: unit(&m.entry.metric),
                    nominal: m.nominal,
                    min: m.min().map(|e| e.value),
                    max: m.max().map(|e| e.value),
                    min_corner: m.min().map(corner_names),
                    max_corner: m.max().map(corner_names),
                    sign_min: m.sign_min.as_ref().map(|e| e.value),
                    sign_max: m.sign_max.as_ref().map(|e| e.value),
                    signs_matched: m.signs_confirmed(),
                    corner_failures: m.corner_failures,
                })
                .collect(),
        });
        Self {
            file: loaded.source.name.clone(),
            title: circuit.title.clone(),
            runs: report.runs,
            seed: report.seed,
            rng: report.rng,
            distribution: distribution_name(report.distribution),
            parts,
            metrics,
            expectations,
            overall_yield: report.overall_yield,
            worst_case,
        }
    }

    fn table(&self, circuit: &Circuit, report: &MonteCarloReport) -> String {
        let mut text = String::new();
        if let Some(title) = &self.title {
            text.push_str(title);
            text.push('\n');
        }
        let _ = write!(
            text,
            "Monte Carlo: {} runs, seed {}, {} within each band, {} parts varied\nrandom generator: {}\n\n",
            self.runs,
            self.seed,
            self.distribution,
            self.parts.len(),
            self.rng
        );
        let mut stats = Table::new(&[
            ("metric", Align::Left),
            ("nominal", Align::Right),
            ("min", Align::Right),
            ("p1", Align::Right),
            ("p50", Align::Right),
            ("p99", Align::Right),
            ("max", Align::Right),
            ("mean", Align::Right),
            ("σ", Align::Right),
            ("failed", Align::Right),
        ]);
        for m in &report.metrics {
            let unit = design::metric_unit(circuit, &m.entry.metric);
            let show = |v: Option<f64>| v.map_or_else(|| "n/a".to_string(), |v| quantity(v, unit));
            let s = m.summary;
            stats.push(vec![
                m.entry.label.clone(),
                show(m.nominal.as_ref().ok().copied()),
                show(s.map(|s| s.min)),
                show(s.map(|s| s.p01)),
                show(s.map(|s| s.p50)),
                show(s.map(|s| s.p99)),
                show(s.map(|s| s.max)),
                show(s.map(|s| s.mean)),
                show(s.and_then(|s| s.std_dev)),
                m.failures.to_string(),
            ]);
        }
        text.push_str(&stats.render());
        for m in report.metrics.iter().filter(|m| m.failures > 0) {
            let _ = writeln!(
                text,
                "  note: {} could not be measured in {} runs (first: {})",
                m.entry.label,
                m.failures,
                m.first_failure.as_deref().unwrap_or("no reason given")
            );
        }
        text.push('\n');
        let mut yields = Table::new(&[
            ("line", Align::Right),
            ("expectation", Align::Left),
            ("passed", Align::Right),
            ("yield", Align::Right),
        ]);
        for y in &self.expectations {
            yields.push(vec![
                y.line.to_string(),
                y.text.clone(),
                format!("{}/{}", y.passed, self.runs),
                format!("{} %", fixed(100.0 * y.yield_fraction, 1)),
            ]);
        }
        yields.push(vec![
            String::new(),
            "overall (every expectation)".into(),
            String::new(),
            format!("{} %", fixed(100.0 * self.overall_yield, 1)),
        ]);
        text.push_str(&yields.render());
        if let Some(w) = &self.worst_case {
            text.push('\n');
            let _ = writeln!(
                text,
                "worst case over the tolerance box ({}):",
                if w.exhaustive {
                    format!("all {} corners", 1u64 << self.parts.len().min(63))
                } else {
                    "the corners the sensitivity signs pick".to_string()
                }
            );
            let mut table = Table::new(&[
                ("metric", Align::Left),
                ("nominal", Align::Right),
                ("min", Align::Right),
                ("max", Align::Right),
                ("sign method", Align::Left),
            ]);
            for (m, entry) in w.metrics.iter().zip(&report.metrics) {
                let unit = design::metric_unit(circuit, &entry.entry.metric);
                let show =
                    |v: Option<f64>| v.map_or_else(|| "n/a".to_string(), |v| quantity(v, unit));
                table.push(vec![
                    m.metric.clone(),
                    quantity(m.nominal, unit),
                    show(m.min),
                    show(m.max),
                    match m.signs_matched {
                        Some(true) => "matches the corners".into(),
                        Some(false) => {
                            format!("differs: {} .. {}", show(m.sign_min), show(m.sign_max))
                        }
                        None => "not compared".into(),
                    },
                ]);
            }
            text.push_str(&table.render());
        }
        text
    }

    fn csv(&self) -> String {
        let header = [
            "kind", "name", "unit", "nominal", "min", "p01", "p50", "p99", "max", "mean",
            "std_dev", "failures", "passed", "yield",
        ]
        .map(String::from);
        let mut csv = Csv::new(&header);
        for m in &self.metrics {
            csv.push(&[
                Cell::Text("metric".into()),
                Cell::Text(m.metric.clone()),
                Cell::Text(m.unit.into()),
                Cell::Number(m.nominal),
                Cell::Number(m.min),
                Cell::Number(m.p01),
                Cell::Number(m.p50),
                Cell::Number(m.p99),
                Cell::Number(m.max),
                Cell::Number(m.mean),
                Cell::Number(m.std_dev),
                Cell::Number(Some(m.failures as f64)),
                Cell::Number(None),
                Cell::Number(None),
            ]);
        }
        let mut yield_row = |kind: &str, name: String, passed: Option<usize>, y: f64| {
            let mut row = vec![
                Cell::Text(kind.into()),
                Cell::Text(name),
                Cell::Text(String::new()),
            ];
            row.extend((0..9).map(|_| Cell::Number(None)));
            row.push(Cell::Number(passed.map(|p| p as f64)));
            row.push(Cell::Number(Some(y)));
            csv.push(&row);
        };
        for y in &self.expectations {
            yield_row(
                "expectation",
                y.text.clone(),
                Some(y.passed),
                y.yield_fraction,
            );
        }
        yield_row("overall", String::new(), None, self.overall_yield);
        if let Some(w) = &self.worst_case {
            for m in &w.metrics {
                let mut row = vec![
                    Cell::Text("worst_case".into()),
                    Cell::Text(m.metric.clone()),
                    Cell::Text(m.unit.into()),
                    Cell::Number(Some(m.nominal)),
                    Cell::Number(m.min),
                ];
                row.extend((0..3).map(|_| Cell::Number(None)));
                row.push(Cell::Number(m.max));
                row.extend((0..2).map(|_| Cell::Number(None)));
                row.push(Cell::Number(Some(m.corner_failures as f64)));
                row.extend((0..2).map(|_| Cell::Number(None)));
                csv.push(&row);
            }
        }
        csv.into_text()
    }
}
