//! Typed text to values: numbers, ranges and date-times as a user enters them in a field.

use toml::value::Datetime;

use crate::core::casefile::{from_stamp, to_stamp};
use crate::core::clock::ClockTime;
use crate::tui::strings;

/// A number that must be given (finite).
///
/// # Errors
/// Text that is not a finite number, in words for the message line.
pub fn number(text: &str) -> Result<f64, String> {
    let t = text.trim();
    if t.is_empty() {
        return Err(strings::ENTER_A_NUMBER.into());
    }
    match t.replace(',', ".").parse::<f64>() {
        Ok(x) if x.is_finite() => Ok(x),
        _ => Err(strings::not_a_number(t)),
    }
}

/// A number that may be left empty (`None`).
///
/// # Errors
/// As `number`, for text that is not empty.
pub fn optional_number(text: &str) -> Result<Option<f64>, String> {
    if text.trim().is_empty() {
        Ok(None)
    } else {
        number(text).map(Some)
    }
}

/// A range `low-high` (also `low–high`, `low to high` or `low high`); empty is `None`.
///
/// # Errors
/// Text that is not two numbers.
pub fn optional_range(text: &str) -> Result<Option<[f64; 2]>, String> {
    let t = text.trim();
    if t.is_empty() {
        return Ok(None);
    }
    let spaced = t.replace("to", " ").replace(['–', ';'], " ");
    // A '-' between two numbers separates them (levels are never negative).
    let spaced = spaced.replace('-', " ");
    let parts: Vec<&str> = spaced.split_whitespace().collect();
    match parts.as_slice() {
        [a, b] => Ok(Some([number(a)?, number(b)?])),
        _ => Err(strings::NOT_A_RANGE.into()),
    }
}

/// A date-time typed as `2027-03-02 08:00` or `2027-03-02T08:00` (seconds and a UTC offset
/// such as `+01:00` are allowed too).
///
/// # Errors
/// Text that is not such a date-time, or names a day or hour that does not exist.
pub fn datetime(text: &str) -> Result<Datetime, String> {
    let t = text.trim();
    let bad = || strings::not_a_datetime(t);
    let (date, time) = t
        .split_once(['T', 't', ' '])
        .ok_or_else(|| strings::not_a_datetime(t))?;
    let time = time.trim();
    if date.len() != 10 || time.len() < 5 || !time.is_char_boundary(5) {
        return Err(bad());
    }
    let (hm, rest) = time.split_at(5);
    let full = if rest.starts_with(':') {
        format!("{date}T{hm}{rest}")
    } else {
        format!("{date}T{hm}:00{rest}")
    };
    let shaped = |text: &str, pattern: &str| {
        text.len() == pattern.len()
            && text.chars().zip(pattern.chars()).all(|(c, p)| {
                if p == '9' {
                    c.is_ascii_digit()
                } else {
                    c == p
                }
            })
    };
    let dt: Datetime = full.parse().map_err(|_| {
        if shaped(date, "9999-99-99") && shaped(hm, "99:99") {
            strings::no_such_datetime(t)
        } else {
            bad()
        }
    })?;
    if dt.date.is_none() || dt.time.is_none() {
        return Err(bad());
    }
    // A real calendar day and hour (the TOML parser accepts 31 February).
    to_stamp(&dt, "time").map_err(|_| strings::no_such_datetime(t))?;
    Ok(dt)
}

/// A date-time as shown in a field: `2027-03-02 08:00`, with the offset when it has one.
pub fn show_datetime(dt: &Datetime) -> String {
    match to_stamp(dt, "time") {
        Ok(s) => s.iso_minute().replacen('T', " ", 1),
        Err(_) => dt.to_string(),
    }
}

/// Hours from `a` to `b` on the wall clock (or in UTC when both carry offsets); `None` when
/// either is not a full date-time or they mix local and offset times.
pub fn hours_between(a: &Datetime, b: &Datetime) -> Option<f64> {
    let (a, b) = (to_stamp(a, "time").ok()?, to_stamp(b, "time").ok()?);
    if matches!(a, ClockTime::Offset(_)) != matches!(b, ClockTime::Offset(_)) {
        return None;
    }
    Some((b.axis_time() - a.axis_time()).num_minutes() as f64 / 60.0)
}

/// The date-time `hours` after `dt` (to the minute), keeping its offset if it has one.
pub fn add_hours(dt: &Datetime, hours: f64) -> Option<Datetime> {
    let s = to_stamp(dt, "time").ok()?;
    if !hours.is_finite() || hours.abs() > 1.0e6 {
        return None;
    }
    let d = chrono::Duration::minutes((hours * 60.0).round() as i64);
    let moved = match s {
        ClockTime::Local(t) => ClockTime::Local(t.checked_add_signed(d)?),
        ClockTime::Offset(t) => ClockTime::Offset(t.checked_add_signed(d)?),
    };
    Some(from_stamp(&moved))
}

/// A stamp as a TOML date-time, for new rows made from existing ones.
pub fn stamp_to_datetime(s: &ClockTime) -> Datetime {
    from_stamp(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_datetime_spellings_are_accepted() {
        let a = datetime("2027-03-02 08:00").unwrap();
        let b = datetime("2027-03-02T08:00").unwrap();
        assert_eq!(a, b);
        assert_eq!(a.to_string(), "2027-03-02T08:00:00");
        assert_eq!(show_datetime(&a), "2027-03-02 08:00");
        let c = datetime("2027-03-02 08:00+01:00").unwrap();
        assert_eq!(show_datetime(&c), "2027-03-02 08:00+01:00");
    }

    #[test]
    fn half_typed_and_impossible_datetimes_are_refused() {
        for t in [
            "",
            "2027-03-02",
            "2027-03-02 8",
            "2027-03-02 08:",
            "2027-02-30 08:00",
            "2027-03-02 25:00",
            "tomorrow",
        ] {
            assert!(datetime(t).is_err(), "{t}");
        }
    }

    #[test]
    fn numbers_and_ranges() {
        assert_eq!(number(" 1,5 "), Ok(1.5));
        assert!(number("NaN").is_err());
        assert!(number("inf").is_err());
        assert_eq!(optional_number(""), Ok(None));
        assert_eq!(optional_range("5-10"), Ok(Some([5.0, 10.0])));
        assert_eq!(optional_range("5 – 10"), Ok(Some([5.0, 10.0])));
        assert_eq!(optional_range("400 to 600"), Ok(Some([400.0, 600.0])));
        assert!(optional_range("5").is_err());
        assert_eq!(optional_range(" "), Ok(None));
    }
}
