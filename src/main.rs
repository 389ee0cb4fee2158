//! The `ebb` binary: parse the command line, dispatch, map errors to exit codes.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Level-guided dosing: fit a patient's elimination from measured levels and project
/// regimens, thresholds and washout. Decision support only.
#[derive(Parser)]
#[command(name = "ebb", version)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
    /// A case file to open.
    case: Option<PathBuf>,
    /// A directory of drug profiles (NAME.toml) that replace or add to the built-in ones;
    /// default: the EBB_PROFILES environment variable.
    #[arg(long, global = true, value_name = "DIR")]
    profiles: Option<PathBuf>,
}

// Each subcommand's arguments are built only when that subcommand is parsed or its help is
// shown (start-up; the names, help and usage are the same).
#[derive(Subcommand)]
#[command(defer = true)]
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
    /// Open the built-in demo case (invented) in the bedside screen.
    Demo,
    /// Open a case file in the bedside screen (`ebb CASE.toml` does the same).
    Open {
        /// The case file (TOML).
        file: PathBuf,
    },
    /// Write the record note of a case: plain text, or Markdown with --markdown or a FILE
    /// ending in .md.
    Note {
        /// The case file (TOML).
        file: PathBuf,
        /// Write the note to this file instead of standard output.
        #[arg(short = 'o', long = "output", value_name = "FILE")]
        output: Option<PathBuf>,
        /// Write Markdown.
        #[arg(long)]
        markdown: bool,
        /// Replace the output file even if ebb did not write it (or it was edited since).
        #[arg(long)]
        force: bool,
    },
    /// Draw the semi-log course of a case (levels, fit, model, plan, threshold) as SVG.
    Plot {
        /// The case file (TOML).
        file: PathBuf,
        /// The SVG file to write (the name must end in .svg).
        #[arg(short = 'o', long = "output", value_name = "FILE.svg")]
        output: PathBuf,
        /// Replace the output file even if ebb did not write it (or it was edited since).
        #[arg(long)]
        force: bool,
    },
    /// Rewrite a case file in the canonical form the bedside screen saves (same content,
    /// tables and fields in a fixed order, every comment kept), through the same safe save.
    Tidy {
        /// The case file (TOML).
        file: PathBuf,
        /// No effect: comments are always kept now (accepted so older scripts still run).
        #[arg(long)]
        drop_comments: bool,
    },
    /// List the drug profiles and where each came from, or show one.
    Profiles {
        #[command(subcommand)]
        action: Option<ProfilesAction>,
    },
}

#[derive(Subcommand)]
#[command(defer = true)]
enum ProfilesAction {
    /// Print one profile: every number with its source, the strategies and the cautions.
    Show {
        /// The profile's name (its file stem, as in `drug.profile`).
        name: String,
        /// Print the TOML as written (a starting point for a local profile).
        #[arg(long)]
        toml: bool,
    },
}

/// One line on standard error, made printable; see `ebb::cli::out::say`.
macro_rules! say {
    ($($arg:tt)*) => { ebb::cli::out::say(format_args!($($arg)*)) };
}

fn main() -> ExitCode {
    use ebb::cli::commands;
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        // Help, version and usage errors: clap's text, and exit status 2 when it cannot
        // be written.
        Err(e) => {
            let written = e
                .print()
                .and_then(|()| std::io::stdout().flush())
                .and_then(|()| std::io::stderr().flush());
            return match written {
                Ok(()) => ExitCode::from(u8::try_from(e.exit_code()).unwrap_or(2)),
                Err(err) => {
                    say!("standard output: cannot write: {err}");
                    ExitCode::from(2)
                }
            };
        }
    };
    if let (Some(case), Some(_)) = (&cli.case, &cli.command) {
        say!(
            "ebb: give a case file or a command, not both (got {} before the command)",
            case.display()
        );
        return ExitCode::from(2);
    }
    let dir = ebb::profiles::override_dir(cli.profiles.as_deref());
    let dir = dir.as_deref();
    let ui = || ebb::tui::catalog::Profiles::load(dir);
    match cli.command {
        Some(Command::Report { files, json, demo }) => commands::report(&files, json, demo, dir),
        Some(Command::Demo) => ebb::tui::run::screen(|| ebb::tui::App::demo_in(ui())),
        Some(Command::Open { file }) => {
            ebb::tui::run::screen(|| ebb::tui::App::open_in(&file, ui()))
        }
        Some(Command::Profiles { action }) => match action {
            None => commands::profiles(None, dir),
            Some(ProfilesAction::Show { name, toml }) => {
                commands::profiles(Some((name.as_str(), toml)), dir)
            }
        },
        Some(Command::Note {
            file,
            output,
            markdown,
            force,
        }) => commands::note(&file, output.as_deref(), markdown, force, dir),
        Some(Command::Plot {
            file,
            output,
            force,
        }) => commands::plot(&file, &output, force, dir),
        Some(Command::Tidy { file, .. }) => commands::tidy(&file),
        None => match cli.case {
            Some(path) => ebb::tui::run::screen(|| ebb::tui::App::open_in(&path, ui())),
            None => ebb::tui::run::screen(|| ebb::tui::App::new_case_in(ui()).offer_recovery()),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    /// clap's own checks of every command and argument, the deferred subcommands built too.
    #[test]
    fn the_command_line_is_well_formed() {
        Cli::command().debug_assert();
    }
}
