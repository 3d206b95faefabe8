//! The command line: clap derive definitions for every command and option.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

/// Small-signal AC analysis of filter and coupling networks.
///
/// Reads a circuit description (`.rol`), solves it across frequency and at DC, and
/// reports cutoffs, gains, slopes, phase and bias, or checks the file's `expect`
/// lines. Exit status: 0 all good, 1 an expectation or comparison failed, 2 a usage,
/// input, parse or solve error.
#[derive(Debug, Parser)]
#[command(
    name = "rolloff",
    version,
    propagate_version = true,
    max_term_width = 100
)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,

    /// Override a `let` for a quick what-if: `--set r_in=47k` (repeatable). The value
    /// is an expression as the file would write it (`22k`, `1.5 kHz`, `2 * r_in`).
    #[arg(long = "set", value_name = "NAME=VALUE", global = true, value_parser = parse_set)]
    pub set: Vec<(String, String)>,

    /// When to colour diagnostics: on a terminal only (`auto`, honouring `NO_COLOR`),
    /// `always` or `never`.
    #[arg(long, value_enum, value_name = "WHEN", default_value_t = ColorWhen::Auto, global = true)]
    pub color: ColorWhen,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Print the response of every probe across the sweep.
    Sweep(SweepArgs),
    /// Summarise every probe: shape, passband gain, cutoffs, bandwidth, slope and order,
    /// phase at the cutoff, group delay, plus bias warnings.
    Report(ReportArgs),
    /// Evaluate every `expect` line of one or more files.
    Check(CheckArgs),
    /// Draw a Bode plot (gain and phase over log frequency) as SVG.
    Plot(PlotArgs),
    /// DC node voltages and the voltage across each capacitor against its rating.
    Bias(BiasArgs),
    /// Store the response and metrics as a JSON snapshot for later comparison.
    Snapshot(SnapshotArgs),
    /// Compare the circuit against a snapshot at the snapshot's own frequencies.
    Compare(CompareArgs),
    /// The standard values (IEC 60063) around a value, with their codes (IEC 60062).
    Values(crate::commands::values::ValuesArgs),
    /// Solve the `?` parts for the file's `=` targets and round them to a series.
    Fit(crate::commands::fit::FitArgs),
    /// Monte Carlo over the tolerance bands: spread, yield, worst case, histograms.
    Tolerance(crate::commands::tolerance::ToleranceArgs),
    /// How strongly each metric depends on each part (normalised sensitivities).
    Sensitivity(crate::commands::sensitivity::SensitivityArgs),
    /// Print a shell completion script.
    Completions(CompletionsArgs),
}

/// Output format for commands whose output is data.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Aligned columns with engineering notation, for people.
    Table,
    /// Comma-separated values with a header, numbers in SI base units.
    Csv,
    /// JSON with stable field names, numbers in SI base units.
    Json,
}

/// Colour choice for diagnostics.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ColorWhen {
    /// Colour on a terminal unless `NO_COLOR` is set.
    Auto,
    /// Always colour.
    Always,
    /// Never colour.
    Never,
}

/// The circuit file argument shared by single-file commands.
#[derive(Debug, Args)]
pub struct FileArg {
    /// The circuit file (`.rol`); `-` reads standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
}

/// Options that replace the file's `sweep` line.
#[derive(Debug, Args, Default, Clone)]
pub struct SweepOverride {
    /// First frequency (`10`, `10 Hz`, `1k`).
    #[arg(long, value_name = "FREQ")]
    pub from: Option<String>,
    /// Last frequency.
    #[arg(long, value_name = "FREQ")]
    pub to: Option<String>,
    /// Points per decade (a logarithmic sweep).
    #[arg(long, value_name = "N", conflicts_with_all = ["every", "at"])]
    pub per_decade: Option<u32>,
    /// Step of a linear sweep (`100 Hz`).
    #[arg(long, value_name = "FREQ", conflicts_with_all = ["per_decade", "at"])]
    pub every: Option<String>,
    /// Spot frequencies, comma-separated (`--at 50,1k,20k`).
    #[arg(long, value_name = "F1,F2,…", value_delimiter = ',', conflicts_with_all = ["from", "to"])]
    pub at: Vec<String>,
}

impl SweepOverride {
    /// Whether any option was given.
    pub fn is_empty(&self) -> bool {
        self.from.is_none()
            && self.to.is_none()
            && self.per_decade.is_none()
            && self.every.is_none()
            && self.at.is_empty()
    }
}

/// `rolloff sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// Options replacing the file's `sweep`.
    #[command(flatten)]
    pub sweep: SweepOverride,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// `rolloff report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// Options replacing the file's `sweep`.
    #[command(flatten)]
    pub sweep: SweepOverride,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// `rolloff check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// The circuit files; `-` reads standard input (once).
    #[arg(value_name = "FILE", required = true)]
    pub files: Vec<PathBuf>,
    /// Also write the results as JUnit XML to this path.
    #[arg(long, value_name = "PATH")]
    pub junit: Option<PathBuf>,
    /// Output format of the results on standard output.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// `rolloff plot`.
#[derive(Debug, Args)]
pub struct PlotArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// Options replacing the file's `sweep`.
    #[command(flatten)]
    pub sweep: SweepOverride,
    /// Where to write the SVG (`-` for standard output).
    #[arg(short, long, value_name = "PATH.svg")]
    pub output: PathBuf,
}

/// `rolloff bias`.
#[derive(Debug, Args)]
pub struct BiasArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// `rolloff snapshot`.
#[derive(Debug, Args)]
pub struct SnapshotArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// Options replacing the file's `sweep`.
    #[command(flatten)]
    pub sweep: SweepOverride,
    /// Where to write the snapshot JSON (`-` for standard output).
    #[arg(short, long, value_name = "PATH.json")]
    pub output: PathBuf,
}

/// `rolloff compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The circuit file.
    #[command(flatten)]
    pub input: FileArg,
    /// The snapshot written earlier by `rolloff snapshot`.
    #[arg(value_name = "SNAPSHOT.json")]
    pub snapshot: PathBuf,
    /// Largest allowed gain difference in dB (also for dB metrics; default 0.01).
    #[arg(long, value_name = "DB")]
    pub max_db: Option<f64>,
    /// Largest allowed phase difference in degrees (default 0.1).
    #[arg(long, value_name = "DEG")]
    pub max_deg: Option<f64>,
    /// Largest allowed relative change of a frequency or other metric (0.001 is 0.1 %,
    /// the default).
    #[arg(long, value_name = "FRACTION")]
    pub max_rel: Option<f64>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// `rolloff completions`.
#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell to generate for.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

/// Parses `NAME=VALUE` for `--set`.
fn parse_set(text: &str) -> Result<(String, String), String> {
    match text.split_once('=') {
        Some((name, value)) if !name.trim().is_empty() && !value.trim().is_empty() => {
            Ok((name.trim().to_string(), value.trim().to_string()))
        }
        _ => Err(format!(
            "expected NAME=VALUE (like r_in=47k), found `{text}`"
        )),
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn the_command_line_definition_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn set_takes_name_equals_value() {
        assert_eq!(
            parse_set("r_in = 47k").unwrap(),
            ("r_in".to_string(), "47k".to_string())
        );
        assert!(parse_set("r_in").is_err());
        assert!(parse_set("=1").is_err());
    }

    #[test]
    fn set_is_accepted_after_the_command() {
        let cli =
            Cli::try_parse_from(["rolloff", "sweep", "a.rol", "--set", "r=1k", "--at", "1,2k"])
                .unwrap();
        assert_eq!(cli.set, [("r".to_string(), "1k".to_string())]);
        let Command::Sweep(args) = cli.command else {
            panic!("parsed as another command")
        };
        assert_eq!(args.sweep.at, ["1", "2k"]);
    }
}
