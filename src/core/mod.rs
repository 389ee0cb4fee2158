//! The terminal-free core: case model, maths, case files and the report. Nothing below here
//! touches a terminal.

pub mod advice;
pub mod auc;
pub mod bayes;
pub mod case;
pub mod casefile;
pub mod clock;
pub mod dialysis;
pub mod error;
pub mod fit;
pub mod fitted;
pub mod format;
pub mod history;
pub mod json;
pub mod minimise;
pub mod model;
pub mod note;
pub mod population;
pub mod prior;
pub mod procedure;
pub mod projection;
pub mod regimen;
pub mod renal;
pub mod report;
pub mod saturable;
pub mod saturable_report;
pub mod spread;
pub mod switch;
pub mod text;
pub mod uncertainty;
pub mod units;
pub mod warning;

pub use error::{Error, Result};

#[cfg(test)]
mod layering {
    //! The core's modules form layers, bottom to top, and none imports one above it (so there
    //! is no cycle); nothing in the core reaches the shells or a terminal crate.

    /// Every core module, bottom to top: a module may use only modules listed before it.
    const ORDER: [&str; 32] = [
        "text",
        "error",
        "units",
        "clock",
        "warning",
        "format",
        "model",
        "minimise",
        "saturable",
        "prior",
        "case",
        "casefile",
        "renal",
        "spread",
        "population",
        "fitted",
        "history",
        "bayes",
        "fit",
        "projection",
        "uncertainty",
        "auc",
        "regimen",
        "procedure",
        "switch",
        "dialysis",
        "advice",
        "saturable_report",
        "report",
        "json",
        "note",
        "mod",
    ];

    /// The `crate::core::NAME` modules a source file uses, outside its tests.
    fn uses(text: &str) -> Vec<String> {
        let code = text.split("#[cfg(test)]").next().unwrap_or("");
        let mut out = Vec::new();
        for part in code.split("crate::core::").skip(1) {
            let names: Vec<&str> = if let Some(group) = part.strip_prefix('{') {
                group.split('}').next().unwrap_or("").split(',').collect()
            } else {
                vec![part]
            };
            for n in names {
                let n: String = n
                    .trim()
                    .chars()
                    .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                    .collect();
                if !n.is_empty() {
                    out.push(n);
                }
            }
        }
        out
    }

    #[test]
    fn no_core_module_uses_one_above_it() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src/core");
        let mut files: Vec<String> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".rs"))
            .map(|n| n.trim_end_matches(".rs").to_string())
            .collect();
        files.sort();
        for m in &files {
            let at = ORDER
                .iter()
                .position(|o| o == m)
                .unwrap_or_else(|| panic!("src/core/{m}.rs is not in the layer list"));
            let text = std::fs::read_to_string(dir.join(format!("{m}.rs"))).unwrap();
            for dep in uses(&text) {
                if let Some(d) = ORDER.iter().position(|o| *o == dep) {
                    assert!(
                        d < at || m == "mod",
                        "src/core/{m}.rs uses {dep}, which is above it"
                    );
                }
            }
            for outside in [
                "crate::profiles",
                "crate::cli",
                "crate::tui",
                "crate::analysis",
                "ratatui",
                "crossterm",
                "clap",
                "plotters",
            ] {
                let code = text.split("#[cfg(test)]").next().unwrap_or("");
                assert!(!code.contains(outside), "src/core/{m}.rs uses {outside}");
            }
        }
    }
}
