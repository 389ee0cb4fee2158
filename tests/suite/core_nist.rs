//! The least-squares core against the NIST StRD "Norris" certified values.
//!
//! Source: NIST Statistical Reference Datasets, Linear Least Squares Regression, "Norris"
//! (data and certified values in tests/data/nist-strd-norris.txt, copied unchanged).

use ebb::core::fit::ols;

/// The (x, y) pairs and the header text holding the certified values.
struct Norris {
    xs: Vec<f64>,
    ys: Vec<f64>,
    header: String,
}

fn norris() -> Norris {
    let text = include_str!("../data/nist-strd-norris.txt");
    let (mut xs, mut ys, mut header) = (Vec::new(), Vec::new(), String::new());
    for line in text.lines().map(str::trim) {
        if let Some(comment) = line.strip_prefix('#') {
            header.push_str(comment);
            header.push('\n');
        } else if !line.is_empty() {
            let mut cols = line.split_whitespace().map(|c| c.parse::<f64>().unwrap());
            ys.push(cols.next().unwrap());
            xs.push(cols.next().unwrap());
        }
    }
    Norris { xs, ys, header }
}

/// The number written after `label` in the header (after an `=` when there is one).
fn certified(header: &str, label: &str) -> f64 {
    let at = header
        .find(label)
        .unwrap_or_else(|| panic!("{label} not in header"));
    let rest = header[at + label.len()..].trim_start();
    let rest = rest.strip_prefix('=').unwrap_or(rest);
    let token = rest
        .split_whitespace()
        .next()
        .unwrap()
        .trim_end_matches(',');
    token.parse().unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn the_data_file_holds_all_36_observations() {
    let d = norris();
    assert_eq!(d.xs.len(), 36);
    assert_eq!(d.ys.len(), 36);
    assert_eq!((d.ys[1], d.xs[1]), (338.8, 337.4));
}

// Certified values: NIST StRD "Norris" (see the data file header), to 1e-9 relative.
#[test]
fn norris_matches_the_certified_values() {
    let d = norris();
    let line = ols(&d.xs, &d.ys).expect("Norris has distinct x");
    let cases = [
        ("intercept", line.intercept, -0.262323073774029),
        ("slope", line.slope, 1.00211681802045),
        ("se intercept", line.se_intercept, 0.232818234301152),
        ("se slope", line.se_slope, 0.429796848199937E-03),
        ("residual sd", line.residual_sd, 0.884796396144373),
        ("r squared", line.r_squared, 0.999993745883712),
    ];
    for (name, got, want) in cases {
        assert!(
            rel(got, want) < 1e-9,
            "{name}: got {got:.15e}, certified {want:.15e}"
        );
    }
    assert_eq!(line.n, 36);
}

#[test]
fn the_header_states_the_same_certified_values_the_test_uses() {
    // Guards against the test's constants drifting from the copied file.
    let h = norris().header;
    assert_eq!(certified(&h, "beta0 ="), -0.262323073774029);
    assert_eq!(certified(&h, "beta1 ="), 1.00211681802045);
    assert_eq!(
        certified(&h, "residual standard deviation"),
        0.884796396144373
    );
    assert_eq!(certified(&h, "R-squared"), 0.999993745883712);
    let se = |after: &str| {
        certified(
            &h[h.find(after).unwrap()..],
            "standard deviation of estimate",
        )
    };
    assert_eq!(se("beta0 ="), 0.232818234301152);
    assert_eq!(se("beta1 ="), 0.429796848199937E-03);
}
