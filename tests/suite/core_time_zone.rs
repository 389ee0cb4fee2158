//! Cases that name an IANA time zone: hours across daylight-saving changes, and wall times
//! that do not exist or happen twice.

use ebb::core::casefile::CaseFile;
use ebb::core::report;

fn case(zone: &str, level_times: [&str; 2]) -> String {
    // Levels are exact: 10·e^(-0.1·s) mg/L at s = 3 h and 6 h of real time after the dose.
    format!(
        r#"time_zone = "{zone}"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-27T22:00:00
amount_mg = 100.0
route = "bolus"
[[level]]
time = {}
value = 7.408182206817179
[[level]]
time = {}
value = 5.488116360940264
"#,
        level_times[0], level_times[1]
    )
}

#[test]
fn hours_across_the_spring_change_are_real_hours() {
    // Europe/Paris goes from +01:00 to +02:00 at 01:00 UTC on 28 March 2027 (Directive
    // 2000/84/EC, art. 2): 01:00 to 05:00 local is 3 real hours, not 4.
    let text = case(
        "Europe/Paris",
        ["2027-03-28T01:00:00", "2027-03-28T05:00:00"],
    );
    let c = CaseFile::parse(&text).unwrap().validate().unwrap();
    let r = report::build(&c).unwrap();
    assert!((r.fit.k_per_h - 0.1).abs() < 1e-9, "k = {}", r.fit.k_per_h);
    // V = D / C0 = 100 / 10 (bolus, dose-record volume).
    assert!((r.fit.volume_l.unwrap() - 10.0).abs() < 1e-6);
    // Computed times carry the zone's offset at that instant.
    assert!(r.washout[0].at.iso_minute().ends_with("+02:00"));
    // Without the zone the wall clock says 4 h, and k would be 0.075.
    let naive = text.replace("time_zone = \"Europe/Paris\"\n", "");
    let c = CaseFile::parse(&naive).unwrap().validate().unwrap();
    assert!((report::build(&c).unwrap().fit.k_per_h - 0.075).abs() < 1e-9);
}

#[test]
fn a_wall_time_in_the_spring_gap_names_its_row() {
    let text = case(
        "Europe/Paris",
        ["2027-03-28T02:30:00", "2027-03-28T05:00:00"],
    );
    let e = CaseFile::parse(&text)
        .unwrap()
        .validate()
        .unwrap_err()
        .to_string();
    assert!(
        e.starts_with("level 1: time: 2027-03-28T02:30 does not exist in Europe/Paris"),
        "{e}"
    );
}

#[test]
fn an_unknown_zone_names_the_field() {
    let text = case(
        "Europe/Atlantis",
        ["2027-03-28T01:00:00", "2027-03-28T05:00:00"],
    );
    let e = CaseFile::parse(&text)
        .unwrap()
        .validate()
        .unwrap_err()
        .to_string();
    assert!(
        e.starts_with("time_zone: unknown time zone \"Europe/Atlantis\""),
        "{e}"
    );
}
