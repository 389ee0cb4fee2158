//! The commands behind `ebb report`, `note`, `plot`, `tidy` and `profiles`: each takes the
//! parsed arguments, does its work through the library, prints its one-line errors and
//! returns the exit status (0, or 2 for any error).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use crate::cli::out::{say, stdout};
use crate::core::note::NoteFormat;
use crate::files::guard;
use crate::files::mark::Style;
use crate::files::store;
use crate::files::toml_keep;

fn fail(message: impl std::fmt::Display) -> ExitCode {
    say(message);
    ExitCode::from(2)
}

/// `ebb report`: the report of each case file (and of the demo with `demo`), one after the
/// other; a file that fails is named on stderr and the others still print.
pub fn report(files: &[PathBuf], json: bool, demo: bool, dir: Option<&Path>) -> ExitCode {
    if files.is_empty() && !demo {
        return fail("ebb report: give one or more case files, or --demo");
    }
    let mut failed = false;
    if demo {
        let mut buf = Vec::new();
        let r = crate::cli::analyse_demo(dir)
            .and_then(|a| crate::cli::write_report(&mut buf, &a, "demo", json));
        match r {
            Ok(()) => {
                if let Err(e) = stdout(&buf) {
                    return fail(e);
                }
            }
            Err(e) => {
                say(e);
                failed = true;
            }
        }
    }
    for (i, path) in files.iter().enumerate() {
        let mut buf = Vec::new();
        let name = path.display().to_string();
        let r = crate::cli::analyse_file(path, dir)
            .and_then(|a| crate::cli::write_report(&mut buf, &a, &name, json));
        let separator: &[u8] = if !json && i > 0 {
            b"\n----------------------------------------\n\n"
        } else {
            b""
        };
        match r {
            Ok(()) => {
                // Standard output failing fails every file after it: stop at once.
                if let Err(e) = stdout(separator).and_then(|()| stdout(&buf)) {
                    return fail(e);
                }
            }
            Err(e) => {
                say(e);
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

/// `ebb note`: the record note to standard output, or to `output` under the output rules
/// (`files::guard`; `force` replaces a file ebb did not write).
pub fn note(
    file: &Path,
    output: Option<&Path>,
    markdown: bool,
    force: bool,
    dir: Option<&Path>,
) -> ExitCode {
    let name = file.display().to_string();
    let format = match (markdown, output) {
        (true, _) => NoteFormat::Markdown,
        (false, Some(o)) => NoteFormat::for_path(o),
        (false, None) => NoteFormat::Text,
    };
    if let Some(o) = output {
        // Refuse before any work: the rules do not depend on the note.
        if let Err(e) = guard::check_output(o, &[file], force) {
            return fail(format!("ebb note: {e}"));
        }
    }
    let meta = crate::cli::note::meta_now(&name);
    let mut buf = Vec::new();
    let made = crate::cli::analyse_file(file, dir)
        .and_then(|a| crate::cli::note::write_note(&mut buf, &a, &name, format, &meta));
    if let Err(e) = made {
        return fail(e);
    }
    let written = match output {
        Some(o) => {
            let style = match format {
                NoteFormat::Markdown => Style::Comment,
                NoteFormat::Text => Style::Plain,
            };
            let text = String::from_utf8_lossy(&buf);
            guard::write_output(o, &text, style, &[file], force)
                .map_err(|e| format!("ebb note: {e}"))
        }
        None => stdout(&buf).map_err(|e| e.to_string()),
    };
    match written {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => fail(e),
    }
}

/// Whether `path` names an SVG file.
fn is_svg(path: &Path) -> bool {
    path.extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("svg"))
}

/// `ebb plot`: the SVG drawing of a case, to `output` under the output rules; any name not
/// ending in `.svg` is refused (ebb draws SVG only).
pub fn plot(file: &Path, output: &Path, force: bool, dir: Option<&Path>) -> ExitCode {
    if !is_svg(output) {
        return fail(format!(
            "ebb plot: {}: ebb draws SVG only; give a file name ending in .svg",
            output.display()
        ));
    }
    if let Err(e) = guard::check_output(output, &[file], force) {
        return fail(format!("ebb plot: {e}"));
    }
    let name = file.display().to_string();
    let r = crate::cli::analyse_file(file, dir).and_then(|a| crate::cli::plot::plot_svg(&a, &name));
    match r {
        Err(e) => fail(e),
        Ok(svg) => match guard::write_output(output, &svg, Style::Comment, &[file], force) {
            Ok(()) => ExitCode::SUCCESS,
            Err(e) => fail(format!("ebb plot: {e}")),
        },
    }
}

/// `ebb tidy`: parse the case and write it back in the canonical layout with its comments
/// kept, safely, and only if the file did not change in between.
pub fn tidy(file: &Path) -> ExitCode {
    let name = file.display().to_string();
    if let Err(e) = store::check_replaceable(file) {
        return fail(e);
    }
    let (text, print) = match store::read_with_fingerprint(file) {
        Ok(x) => x,
        Err(e) => return fail(format!("{name}: cannot read the file: {e}")),
    };
    let case = match crate::core::casefile::CaseFile::parse(&text) {
        Ok(c) => c,
        Err(e) => return fail(e.in_file(name.as_str())),
    };
    // Tidying is optional: a file whose comments cannot be carried over is left alone.
    match toml_keep::render_checked(&case, Some(&text)) {
        Ok((_, true)) => {
            return fail(format!(
                "{name}: its comments could not be carried into the canonical form; not rewritten"
            ))
        }
        Ok(_) => {}
        Err(e) => return fail(format!("{name}: {e}")),
    }
    match store::save_case(
        &case,
        Some(&text),
        file,
        &store::Expect::Unchanged(Some(print)),
    ) {
        Ok(_) => ExitCode::SUCCESS,
        Err(e) => fail(e),
    }
}

/// `ebb profiles` (the list) and `ebb profiles show NAME` (one, or its TOML with `toml`).
pub fn profiles(show: Option<(&str, bool)>, dir: Option<&Path>) -> ExitCode {
    let catalog = match crate::profiles::Catalog::load(dir) {
        Ok(c) => c,
        Err(e) => return fail(e),
    };
    let mut buf = Vec::new();
    let written = match show {
        None => crate::profiles::write_list(&mut buf, &catalog),
        Some((name, toml)) => match catalog.lookup_loosely(name, "profile") {
            Ok(entry) if toml => buf.write_all(entry.text.as_bytes()),
            Ok(entry) => crate::profiles::write_show(&mut buf, entry),
            Err(e) => return fail(format!("ebb profiles show: {e}")),
        },
    };
    let printed = written
        .map_err(|e| crate::core::Error::invalid("standard output", e.to_string()))
        .and_then(|()| stdout(&buf));
    match printed {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => fail(format!("ebb profiles: {e}")),
    }
}
