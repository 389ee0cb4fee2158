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

#[test]
fn a_phenytoin_plot_draws_the_integrated_course_the_plan_and_the_deciding_level() {
    let text =
        std::fs::read_to_string("tests/cases/valid/phenytoin_one_level_albumin.toml").unwrap();
    let svg = svg_of(&text);
    let doc = roxmltree::Document::parse(&svg).expect("the SVG parses as XML");
    let t = texts(&doc);
    for label in [
        LEGEND[0],
        LEGEND[1],
        plot::LEGEND_DECIDING,
        plot::LEGEND_BAND,
    ] {
        assert!(t.iter().any(|x| x == label), "legend {label}: {t:?}");
    }
    // No first-order fitted line, and the saturable caution at the foot.
    assert!(!t.iter().any(|x| x == LEGEND[2]), "{t:?}");
    assert!(
        t.iter()
            .any(|x| x.contains("one-compartment saturable (Michaelis-Menten)")),
        "{t:?}"
    );
    assert!(
        t.iter()
            .any(|x| x.contains("saturable elimination: Vmax 366.8 mg/day, Km 6.071 mg/L")),
        "{t:?}"
    );
    // One level, drawn as its albumin-adjusted value (plus the legend's circle): 6 mg/L at
    // albumin 3 g/dL is 6/(0.2·3 + 0.1) = 8.571 mg/L (Sheiner-Tozer, as in methods-saturable).
    let circles: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle"))
        .collect();
    assert_eq!(circles.len(), 1 + 1);
    // The course over 28 daily doses has a rise at each: a long polyline of the record.
    let longest = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .filter_map(|n| n.attribute("points"))
        .map(|p| p.split_whitespace().count())
        .max()
        .unwrap_or(0);
    assert!(longest > 300, "{longest}");

    // Without a weight there is no volume and no course: a clear error, no picture.
    let file = CaseFile::parse(&text.replace("weight_kg = 60.0\n", "")).unwrap();
    let e = plot::plot_svg(&ebb::cli::analyse_parsed(&file, None).unwrap(), "case.toml")
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("case.toml: patient.weight_kg: needed to draw"),
        "{e}"
    );
}

#[test]
fn the_saturable_chart_course_rises_by_dose_over_volume_at_each_plan_dose() {
    // Self-consistency of the sampled course: continuous into the plan, and at each plan
    // dose (instant, by mouth) a rise of dose x salt factor x F / V.
    let text =
        std::fs::read_to_string("tests/cases/valid/phenytoin_one_level_albumin.toml").unwrap();
    let file = CaseFile::parse(&text).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let (case, s) = (a.case.as_ref().unwrap(), a.saturable.as_ref().unwrap());
    let r = &s.report;
    let span = ebb::core::saturable_report::chart_span(case, r);
    let ebb::core::saturable_report::ChartCourse { record, plan, band } =
        ebb::core::saturable_report::chart_course(case, r, span, 50);
    // The band holds the course at every time.
    let [lo, hi] = band.unwrap();
    let all: Vec<(f64, f64)> = record.iter().chain(&plan).copied().collect();
    for (t, c) in &all {
        let i = lo.iter().position(|p| p.0 == *t).unwrap();
        assert!(lo[i].1 <= *c + 1e-9 && *c <= hi[i].1 + 1e-9, "{t}");
    }
    // Near Vmax the band widens: by the plan's end its top is over twice its bottom.
    let last = lo.len() - 1;
    assert!(
        hi[last].1 > 2.0 * lo[last].1,
        "{:?} {:?}",
        lo[last],
        hi[last]
    );
    let pl = case.plan.as_ref().unwrap();
    let (tr, cr) = *record.last().unwrap();
    let (tp, cp) = plan[0];
    assert_eq!(tr, pl.start_t);
    assert_eq!(tp, pl.start_t);
    assert!((cr - cp).abs() < 1e-8, "{cr} {cp}");
    let rise = 400.0 * 0.92 * 0.86 / r.volume_l.unwrap();
    let at = |t: f64| plan.iter().find(|p| p.0 == t).unwrap().1;
    for n in 0..5 {
        let t = pl.start_t + 24.0 * f64::from(n);
        let jump = at(t + 1e-6) - at(t);
        assert!((jump - rise).abs() < 1e-4, "{n}: {jump} vs {rise}");
    }
}

#[test]
fn a_two_compartment_fit_draws_its_model_without_a_straight_fitted_line() {
    // The two-compartment model's curve is the fit: a straight line with the terminal slope
    // through the fitted levels would not be it.
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/cases/valid/vancomycin_two_compartment.toml"
    ))
    .unwrap();
    let svg = svg_of(&text);
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let t = texts(&doc);
    assert!(t.iter().any(|x| x == LEGEND[0]), "{t:?}");
    assert!(!t.iter().any(|x| x == LEGEND[2]), "{t:?}");
    assert!(svg.contains("two-compartment kinetics"));
}
