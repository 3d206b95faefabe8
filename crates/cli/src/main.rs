//! The `rolloff` binary: parses the command line and hands it to `rolloff_cli`.

use std::process::ExitCode;

use clap::{CommandFactory, Parser};
use rolloff_cli::args::{Cli, Command};

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Completions(args) => {
            clap_complete::generate(
                args.shell,
                &mut Cli::command(),
                "rolloff",
                &mut std::io::stdout(),
            );
            ExitCode::SUCCESS
        }
        // FIXME: wired once the library branches are merged.
        _ => ExitCode::from(2),
    }
}
