//! The SVG plot parses as XML and holds the expected elements.

use ebb::cli::plot::{self, LEGEND};
use ebb::core::casefile::CaseFile;

fn svg_of(text: &str) -> String {
    let file = CaseFile::parse(text).unwrap();
    plot::plot_svg(&ebb::cli::analyse_parsed(&file, None).unwrap(), "case.toml").unwrap()
}

fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(|t| t.trim().to_string()))
        .collect()
}

#[test]
fn demo_plot_has_every_series_and_marker() {
    let svg = svg_of(ebb::demo::DEMO_CASE);
    let doc = roxmltree::Document::parse(&svg).expect("the SVG parses as XML");
    let root = doc.root_element();
    assert!(root.has_tag_name("svg"));
    assert_eq!(root.attribute("width"), Some("960"));
    let t = texts(&doc);
    for label in [LEGEND[0], LEGEND[1], LEGEND[2], LEGEND[3], LEGEND[4]] {
        assert!(t.iter().any(|x| x == label), "legend {label}: {t:?}");
    }
    // The demo's threshold is 1 mg/L and it has a procedure time.
    assert!(t.iter().any(|x| x == "threshold (1 mg/L)"), "{t:?}");
    assert!(t.iter().any(|x| x == "procedure"));
    assert!(t.iter().any(|x| x == "level (mg/L, log scale)"));
    assert!(
        t.iter().any(|x| x.contains("02 Mar")),
        "clock-time axis labels"
    );
    // Three levels in the fit drawn as filled circles (plus one in the legend); the pre-dose
    // level out of the fit as a cross (two lines each).
    let circles = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle"))
        .count();
    assert_eq!(circles, 3 + 1);
    // The model is one polyline with many points.
    let longest = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .filter_map(|n| n.attribute("points"))
        .map(|p| p.split_whitespace().count())
        .max()
        .unwrap_or(0);
    assert!(longest > 500, "{longest}");
}

#[test]
fn without_amounts_there_is_no_plan_curve() {
    let text = ebb::demo::DEMO_CASE.replace("amount_mg = 140.0\n", "");
    let svg = svg_of(&text);
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let t = texts(&doc);
    assert!(!t.iter().any(|x| x == LEGEND[1]), "{t:?}");
    assert!(t.iter().any(|x| x == LEGEND[2]));
}

#[test]
fn a_case_that_cannot_be_fitted_is_an_error_not_a_picture() {
    let text = r#"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 100.0
route = "bolus"
[[level]]
time = 2027-03-02T10:00:00
value = 4.0
"#;
    let file = CaseFile::parse(text).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let e = plot::plot_svg(&a, "case.toml").unwrap_err().to_string();
    assert!(e.contains("level"), "{e}");
}
