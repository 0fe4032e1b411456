//! Calendar dates and UTC timestamps without a time-zone database.

use std::fmt;
use std::time::{SystemTime, UNIX_EPOCH};

/// A proleptic Gregorian calendar date.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub struct CivilDate {
    /// Year.
    pub year: i32,
    /// Month 1–12.
    pub month: u32,
    /// Day 1–31.
    pub day: u32,
}

impl CivilDate {
    /// Parses `YYYY-MM-DD`, refusing impossible dates such as 2026-02-30.
    pub fn parse(text: &str) -> Option<CivilDate> {
        let mut parts = text.split('-');
        let (y, m, d) = (parts.next()?, parts.next()?, parts.next()?);
        if parts.next().is_some() || y.len() != 4 || m.len() != 2 || d.len() != 2 {
            return None;
        }
        let date = CivilDate { year: y.parse().ok()?, month: m.parse().ok()?, day: d.parse().ok()? };
        (date.month >= 1 && date.month <= 12 && date.day >= 1 && date.day <= days_in_month(date.year, date.month))
            .then_some(date)
    }

    /// The date `days` days after 1970-01-01.
    pub fn from_days_since_epoch(days: i64) -> CivilDate {
        // Howard Hinnant's civil_from_days algorithm.
        let z = days + 719_468;
        let era = z.div_euclid(146_097);
        let doe = z.rem_euclid(146_097);
        let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
        let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
        let mp = (5 * doy + 2) / 153;
        let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
        let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
        let year = (yoe + era * 400 + i64::from(month <= 2)) as i32;
        CivilDate { year, month, day }
    }
}

fn days_in_month(year: i32, month: u32) -> u32 {
    match month {
        2 if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

impl fmt::Display for CivilDate {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

fn seconds_since_epoch() -> i64 {
    SystemTime::now().duration_since(UNIX_EPOCH).map_or(0, |d| d.as_secs() as i64)
}

/// Today's date in UTC.
pub fn today() -> CivilDate {
    CivilDate::from_days_since_epoch(seconds_since_epoch().div_euclid(86_400))
}

/// The current time as an RFC 3339 UTC timestamp, e.g. `2026-12-02T10:04:05Z`.
pub fn now_rfc3339() -> String {
    let secs = seconds_since_epoch();
    let date = CivilDate::from_days_since_epoch(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    format!("{date}T{:02}:{:02}:{:02}Z", s / 3600, s / 60 % 60, s % 60)
}

/// The current time as an RFC 3339 UTC timestamp with milliseconds, e.g.
/// `2026-12-02T10:04:05.123Z`, for events shorter than a second (a step's start and end).
pub fn now_rfc3339_millis() -> String {
    let millis = SystemTime::now().duration_since(UNIX_EPOCH).map_or(0, |d| d.as_millis() as i64);
    rfc3339_millis(millis)
}

fn rfc3339_millis(millis: i64) -> String {
    let secs = millis.div_euclid(1000);
    let date = CivilDate::from_days_since_epoch(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    format!("{date}T{:02}:{:02}:{:02}.{:03}Z", s / 3600, s / 60 % 60, s % 60, millis.rem_euclid(1000))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_and_checks_dates() {
        assert_eq!(CivilDate::parse("2026-11-30").map(|d| d.to_string()), Some("2026-11-30".into()));
        assert!(CivilDate::parse("2024-02-29").is_some());
        assert!(CivilDate::parse("2026-02-29").is_none());
        assert!(CivilDate::parse("30/11/2026").is_none());
        assert!(CivilDate::parse("2026-13-01").is_none());
    }

    #[test]
    fn converts_days_since_epoch() {
        assert_eq!(CivilDate::from_days_since_epoch(0).to_string(), "1970-01-01");
        // 2026-12-02 is day 20 789 of the Unix epoch (count: 56 years incl. 14 leap days + 335).
        assert_eq!(CivilDate::from_days_since_epoch(20_789).to_string(), "2026-12-02");
        assert_eq!(CivilDate::from_days_since_epoch(-1).to_string(), "1969-12-31");
    }

    #[test]
    fn formats_milliseconds() {
        // Day 20 789 (above) plus 10:04:05.007 (hand-computed: 36 245 s).
        assert_eq!(rfc3339_millis((20_789 * 86_400 + 36_245) * 1000 + 7), "2026-12-02T10:04:05.007Z");
        assert_eq!(rfc3339_millis(-1), "1969-12-31T23:59:59.999Z");
    }
}
