//! Numbers and clock times written for people, the same way in every report, note and screen.

use crate::core::clock::ClockTime;

/// A fit method's name in running text: the case-file spelling, with Bayesian capitalised
/// (the JSON keeps the case-file spelling).
pub fn method_word(method: &str) -> &str {
    match method {
        "bayesian" => "Bayesian",
        other => other,
    }
}

/// A number for people: four significant figures, trailing zeros trimmed, never in
/// exponent form for values from 1e-12 to 1e15.
pub fn num(x: f64) -> String {
    if !x.is_finite() {
        return "—".into();
    }
    if x == 0.0 {
        return "0".into();
    }
    let digits = 4i32;
    let mag = x.abs().log10().floor() as i32;
    // Written out as a pharmacist writes it (0.00005265, not 5.265e-5); only figures no
    // bedside value reaches fall back to the exponent form.
    if !(-12..=15).contains(&mag) {
        return format!("{x:.3e}");
    }
    let decimals = (digits - 1 - mag).max(0) as usize;
    let s = format!("{x:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A number from a file as a message quotes it back: as written in plain form when that is
/// short (`0.5`, `-3`, `NaN`), in exponent form when the plain form would run to hundreds of
/// digits (`1e300`, `5e-324`).
pub fn written(x: f64) -> String {
    let plain = x.to_string();
    if plain.len() <= 20 {
        plain
    } else {
        format!("{x:e}")
    }
}

/// A readable stamp, with the year only when it differs from `reference`'s.
pub fn when(s: &ClockTime) -> String {
    s.readable(false)
}

/// `x` with its sign and two decimals ("+0.22", "-0.89"); a value that rounds to zero is
/// "+0.00", never "-0.00".
pub fn signed2(x: f64) -> String {
    let x = if x.abs() < 0.005 { 0.0 } else { x };
    format!("{x:+.2}")
}

#[cfg(test)]
mod signed_tests {
    use super::signed2;

    #[test]
    fn a_value_that_rounds_to_zero_has_no_minus_sign() {
        assert_eq!(signed2(-0.001), "+0.00");
        assert_eq!(signed2(-0.0), "+0.00");
        assert_eq!(signed2(-0.89), "-0.89");
        assert_eq!(signed2(0.224), "+0.22");
    }
}
