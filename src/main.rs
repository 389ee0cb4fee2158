//! The `ebb` binary: parse the command line, dispatch, map errors to exit codes.

use std::io::Write;
use std::path::{Path, PathBuf};
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
    },
    /// Draw the semi-log course of a case (levels, fit, model, plan, threshold) as SVG.
    Plot {
        /// The case file (TOML).
        file: PathBuf,
        /// The SVG file to write.
        #[arg(short = 'o', long = "output", value_name = "FILE.svg")]
        output: PathBuf,
    },
    /// Rewrite a case file in the canonical form the bedside screen saves (same content,
    /// tables and fields in a fixed order), through the same safe save. Refuses a file with
    /// comments, which would be lost, unless --drop-comments.
    Tidy {
        /// The case file (TOML).
        file: PathBuf,
        /// Rewrite even though the comments in the file will be lost.
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

fn main() -> ExitCode {
    let cli = Cli::parse();
    if let (Some(case), Some(_)) = (&cli.case, &cli.command) {
        eprintln!(
            "ebb: give a case file or a command, not both (got {} before the command)",
            case.display()
        );
        return ExitCode::from(2);
    }
    let dir = ebb::profiles::override_dir(cli.profiles.as_deref());
    let dir = dir.as_deref();
    match cli.command {
        Some(Command::Report { files, json, demo }) => report(&files, json, demo, dir),
        Some(Command::Demo) => screen(|| ebb::tui::App::demo_in(ui(dir))),
        Some(Command::Open { file }) => screen(|| ebb::tui::App::open_in(&file, ui(dir))),
        Some(Command::Profiles { action }) => profiles(action, dir),
        Some(Command::Note {
            file,
            output,
            markdown,
        }) => note(&file, output.as_deref(), markdown, dir),
        Some(Command::Plot { file, output }) => plot(&file, &output, dir),
        Some(Command::Tidy {
            file,
            drop_comments,
        }) => tidy(&file, drop_comments),
        None => match cli.case {
            Some(path) => screen(|| ebb::tui::App::open_in(&path, ui(dir))),
            None => screen(|| ebb::tui::App::new_case_in(ui(dir))),
        },
    }
}

/// The drug profiles the bedside screen offers: the built-ins and the `--profiles` (or
/// `EBB_PROFILES`) directory.
fn ui(dir: Option<&Path>) -> ebb::tui::catalog::Profiles {
    ebb::tui::catalog::Profiles::load(dir)
}

/// Run the bedside screen, or say in one line why not (no terminal).
fn screen(app: impl FnOnce() -> ebb::tui::App) -> ExitCode {
    use std::io::IsTerminal;
    if !std::io::stdout().is_terminal() {
        eprintln!("ebb: the bedside screen needs a terminal; for printed figures use `ebb report CASE.toml` or `ebb report --demo`");
        return ExitCode::from(2);
    }
    match ebb::tui::run(app()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("ebb: the terminal failed: {e}");
            ExitCode::from(2)
        }
    }
}

fn profiles(action: Option<ProfilesAction>, dir: Option<&Path>) -> ExitCode {
    let catalog = match ebb::profiles::Catalog::load(dir) {
        Ok(c) => c,
        Err(e) => {
            eprintln!("{e}");
            return ExitCode::from(2);
        }
    };
    let mut buf = Vec::new();
    let written = match action {
        None => ebb::profiles::write_list(&mut buf, &catalog),
        Some(ProfilesAction::Show { name, toml }) => match catalog.lookup_loosely(&name, "profile")
        {
            Ok(entry) if toml => buf.write_all(entry.text.as_bytes()),
            Ok(entry) => ebb::profiles::write_show(&mut buf, entry),
            Err(e) => {
                eprintln!("ebb profiles show: {e}");
                return ExitCode::from(2);
            }
        },
    };
    match written.and_then(|()| std::io::stdout().lock().write_all(&buf)) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("ebb profiles: {e}");
            ExitCode::from(2)
        }
    }
}

fn report(files: &[PathBuf], json: bool, demo: bool, dir: Option<&Path>) -> ExitCode {
    let stdout = std::io::stdout();
    let mut failed = false;
    if demo {
        let mut buf = Vec::new();
        let r = ebb::cli::analyse_demo(dir)
            .and_then(|a| ebb::cli::write_report(&mut buf, &a, "demo", json));
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
        let r = ebb::cli::analyse_file(path, dir)
            .and_then(|a| ebb::cli::write_report(&mut buf, &a, &name, json));
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

/// `ebb note`: the record note to a file or to standard output.
fn note(file: &Path, output: Option<&Path>, markdown: bool, dir: Option<&Path>) -> ExitCode {
    use ebb::core::note::NoteFormat;
    let name = file.display().to_string();
    let format = match (markdown, output) {
        (true, _) => NoteFormat::Markdown,
        (false, Some(o)) => NoteFormat::for_path(o),
        (false, None) => NoteFormat::Text,
    };
    let meta = ebb::cli::note::meta_now(&name);
    let mut buf = Vec::new();
    let r = ebb::cli::analyse_file(file, dir)
        .and_then(|a| ebb::cli::note::write_note(&mut buf, &a, &name, format, &meta))
        .and_then(|()| match output {
            Some(o) => ebb::cli::note::write_file(o, &String::from_utf8_lossy(&buf)),
            None => std::io::stdout()
                .lock()
                .write_all(&buf)
                .map_err(|e| ebb::core::Error::invalid("output", e.to_string())),
        });
    match r {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("{e}");
            ExitCode::from(2)
        }
    }
}

/// `ebb plot`: the SVG drawing of a case.
fn plot(file: &Path, output: &Path, dir: Option<&Path>) -> ExitCode {
    let name = file.display().to_string();
    let r = ebb::cli::analyse_file(file, dir)
        .and_then(|a| ebb::cli::plot::plot_svg(&a, &name))
        .and_then(|svg| ebb::cli::note::write_file(output, &svg));
    match r {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("{e}");
            ExitCode::from(2)
        }
    }
}

/// `ebb tidy`: parse the case and write it back in canonical form, safely, and only if the
/// file did not change in between.
fn tidy(file: &Path, drop_comments: bool) -> ExitCode {
    use ebb::cli::store;
    let name = file.display().to_string();
    let (text, print) = match store::read_with_fingerprint(file) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("{name}: cannot read the file: {e}");
            return ExitCode::from(2);
        }
    };
    let case = match ebb::core::casefile::CaseFile::parse(&text) {
        Ok(c) => c,
        Err(e) => {
            eprintln!("{}", e.in_file(name.as_str()));
            return ExitCode::from(2);
        }
    };
    if let (false, Some(line)) = (drop_comments, store::first_comment_line(&text)) {
        eprintln!(
            "{name}: line {line}: has a comment, which tidying would drop; remove the comments or pass --drop-comments"
        );
        return ExitCode::from(2);
    }
    match store::save_case(&case, file, &store::Expect::Unchanged(Some(print))) {
        Ok(_) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("{e}");
            ExitCode::from(2)
        }
    }
}
