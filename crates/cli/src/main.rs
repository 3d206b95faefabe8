//! The `rolloff` binary: parses the command line and hands it to `rolloff_cli`.

use std::process::ExitCode;

use clap::{CommandFactory, Parser};
use rolloff_cli::args::{Cli, ColorWhen, Command};
use rolloff_cli::commands::{self, Session, exit_code};

fn main() -> ExitCode {
    let cli = Cli::parse();
    let choice = match cli.color {
        ColorWhen::Auto => anstream::ColorChoice::Auto,
        ColorWhen::Always => anstream::ColorChoice::Always,
        ColorWhen::Never => anstream::ColorChoice::Never,
    };
    choice.write_global();
    let session = Session {
        overrides: cli.set.clone(),
    };
    match &cli.command {
        Command::Bias(args) => exit_code(commands::bias::run(args, &session)),
        Command::Sweep(args) => exit_code(commands::sweep::run(args, &session)),
        Command::Check(args) => exit_code(commands::check::run(args, &session)),
        Command::Plot(args) => exit_code(commands::plot::run(args, &session)),
        Command::Snapshot(args) => exit_code(commands::snapshot::run_snapshot(args, &session)),
        Command::Compare(args) => exit_code(commands::snapshot::run_compare(args, &session)),
        Command::Report(args) => exit_code(commands::report::run(args, &session)),
        Command::Values(args) => exit_code(commands::values::run(args, &session)),
        Command::Fit(args) => exit_code(commands::fit::run(args, &session)),
        Command::Tolerance(args) => exit_code(commands::tolerance::run(args, &session)),
        Command::Sensitivity(args) => exit_code(commands::sensitivity::run(args, &session)),
        Command::Completions(args) => {
            let mut script = Vec::new();
            clap_complete::generate(args.shell, &mut Cli::command(), "rolloff", &mut script);
            rolloff_cli::input::print_stdout(&String::from_utf8_lossy(&script));
            ExitCode::SUCCESS
        }
    }
}
