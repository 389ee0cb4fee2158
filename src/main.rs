//! The `ebb` binary: parse the command line, dispatch, map errors to exit codes.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Level-guided dosing: fit a patient's elimination from measured levels and project
/// regimens, thresholds and washout. Decision support only.
#[derive(Parser)]
#[command(name = "ebb", version, args_conflicts_with_subcommands = true)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
    /// A case file to open.
    case: Option<PathBuf>,
}

#[derive(Subcommand)]
enum Command {
    /// Print the report of one or more case files (or of the demo case).
    Report {
        /// Case files (TOML).
        files: Vec<PathBuf>,
        /// Print the contract's JSON, one object per line.
        #[arg(long)]
        json: bool,
        /// Report on the built-in demo case.
        #[arg(long)]
        demo: bool,
    },
    /// Show the built-in demo case.
    Demo,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Some(Command::Report { files, json, demo }) => report(&files, json, demo),
        Some(Command::Demo) => report(&[], false, true),
        None => match cli.case {
            Some(path) => report(&[path], false, false),
            None => {
                eprintln!("ebb: give a case file, or try `ebb demo`; see `ebb --help`");
                ExitCode::from(2)
            }
        },
    }
}

fn report(files: &[PathBuf], json: bool, demo: bool) -> ExitCode {
    let stdout = std::io::stdout();
    let mut failed = false;
    if demo {
        let mut buf = Vec::new();
        let r =
            ebb::cli::load_demo().and_then(|c| ebb::cli::write_report(&mut buf, &c, "demo", json));
        match r {
            Ok(()) => {
                let _ = stdout.lock().write_all(&buf);
            }
            Err(e) => {
                eprintln!("{e}");
                failed = true;
            }
        }
    }
    if files.is_empty() && !demo {
        eprintln!("ebb report: give one or more case files, or --demo");
        return ExitCode::from(2);
    }
    for (i, path) in files.iter().enumerate() {
        let mut buf = Vec::new();
        let name = path.display().to_string();
        let r = ebb::cli::load_case(path)
            .and_then(|c| ebb::cli::write_report(&mut buf, &c, &name, json));
        match r {
            Ok(()) => {
                let mut out = stdout.lock();
                if !json && i > 0 {
                    let _ = writeln!(out, "\n----------------------------------------\n");
                }
                let _ = out.write_all(&buf);
            }
            Err(e) => {
                eprintln!("{e}");
                failed = true;
            }
        }
    }
    if failed {
        ExitCode::from(2)
    } else {
        ExitCode::SUCCESS
    }
}
