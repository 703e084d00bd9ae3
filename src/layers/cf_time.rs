//! CF time axes (CF Conventions §4.4): `<unit> since <date>` with the calendars climate models
//! use — standard/gregorian/proleptic_gregorian, noleap/365_day, all_leap/366_day, 360_day —
//! decoded to calendar years.

/// Cumulative days before each month in a 365-day year.
const CUM_NOLEAP: [i64; 12] = [0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334];
/// Cumulative days before each month in a 366-day year.
const CUM_LEAP: [i64; 12] = [0, 31, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335];

/// A calendar of the CF Conventions (§4.4.1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Calendar {
    /// Proleptic Gregorian (also used for `standard`/`gregorian`: dates before 1582 are rare in
    /// projections and would differ by days, not years).
    Gregorian,
    /// Every year 365 days.
    NoLeap,
    /// Every year 366 days.
    AllLeap,
    /// Twelve 30-day months.
    Day360,
}

impl Calendar {
    /// Parses a CF `calendar` attribute (case-insensitive; absent means `standard`).
    pub(crate) fn parse(name: Option<&str>) -> Result<Calendar, String> {
        match name.map(|s| s.trim().to_ascii_lowercase()).as_deref() {
            None | Some("standard") | Some("gregorian") | Some("proleptic_gregorian") => {
                Ok(Calendar::Gregorian)
            }
            Some("noleap") | Some("365_day") => Ok(Calendar::NoLeap),
            Some("all_leap") | Some("366_day") => Ok(Calendar::AllLeap),
            Some("360_day") => Ok(Calendar::Day360),
            Some(other) => Err(format!(
                "calendar `{other}` is not one driftplan reads (standard, gregorian, proleptic_gregorian, noleap, 365_day, all_leap, 366_day, 360_day)"
            )),
        }
    }

    /// Day number of `y-m-d` (day 0 = 0000-01-01 in this calendar).
    fn day_number(self, y: i64, m: i64, d: i64) -> i64 {
        match self {
            Calendar::NoLeap => y * 365 + CUM_NOLEAP[(m - 1) as usize] + d - 1,
            Calendar::AllLeap => y * 366 + CUM_LEAP[(m - 1) as usize] + d - 1,
            Calendar::Day360 => y * 360 + (m - 1) * 30 + d - 1,
            Calendar::Gregorian => days_from_civil(y, m, d) - days_from_civil(0, 1, 1),
        }
    }

    /// The year holding day number `n`.
    fn year_of(self, n: i64) -> i64 {
        match self {
            Calendar::NoLeap => n.div_euclid(365),
            Calendar::AllLeap => n.div_euclid(366),
            Calendar::Day360 => n.div_euclid(360),
            Calendar::Gregorian => civil_from_days(n + days_from_civil(0, 1, 1)).0,
        }
    }
}

/// Days from 1970-01-01 to `y-m-d` in the proleptic Gregorian calendar (H. Hinnant,
/// "chrono-compatible low-level date algorithms", days_from_civil).
fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The inverse of [`days_from_civil`]: `(year, month, day)`.
fn civil_from_days(z: i64) -> (i64, i64, i64) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (
        if m <= 2 {
            yoe + era * 400 + 1
        } else {
            yoe + era * 400
        },
        m,
        d,
    )
}

/// Calendar years of CF time values `values` with `units` (`days since 2000-01-01`,
/// `hours since 1850-1-1 00:00:00`, …; units day(s)/d, hour(s)/h, minute(s)/min,
/// second(s)/s) in `calendar`.
pub(crate) fn years(values: &[f64], units: &str, calendar: Calendar) -> Result<Vec<i32>, String> {
    let bad = || {
        format!("time units `{units}` are not `<days|hours|minutes|seconds> since <yyyy-mm-dd>` (CF Conventions §4.4)")
    };
    let (unit, since) = units.split_once(" since ").ok_or_else(bad)?;
    let per_day = match unit.trim().to_ascii_lowercase().as_str() {
        "days" | "day" | "d" => 1.0,
        "hours" | "hour" | "h" | "hr" => 24.0,
        "minutes" | "minute" | "min" => 1440.0,
        "seconds" | "second" | "s" | "sec" => 86_400.0,
        _ => return Err(bad()),
    };
    let since = since.trim();
    let date = since.split(['T', ' ']).next().unwrap_or("");
    let mut parts = date.split('-');
    let mut num = || -> Result<i64, String> {
        parts
            .next()
            .and_then(|p| p.trim().parse::<i64>().ok())
            .ok_or_else(bad)
    };
    let (y, m, d) = (num()?, num()?, num()?);
    if !(1..=12).contains(&m) || !(1..=31).contains(&d) || (calendar == Calendar::Day360 && d > 30)
    {
        return Err(bad());
    }
    let clock: f64 = since
        .get(date.len()..)
        .map(|rest| rest.trim_start_matches(['T', ' ']))
        .filter(|t| !t.is_empty())
        .map(|t| {
            let mut it = t.split(':').map(|x| x.trim().parse::<f64>().unwrap_or(0.0));
            let (h, mi, s) = (
                it.next().unwrap_or(0.0),
                it.next().unwrap_or(0.0),
                it.next().unwrap_or(0.0),
            );
            (h + mi / 60.0 + s / 3600.0) / 24.0
        })
        .unwrap_or(0.0);
    let base = calendar.day_number(y, m, d) as f64 + clock;
    values
        .iter()
        .map(|&v| {
            if !v.is_finite() {
                return Err(format!("time value {v} is not finite"));
            }
            let n = (base + v / per_day).floor() as i64;
            Ok(calendar.year_of(n) as i32)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gregorian_day_numbers_match_known_dates() {
        // 1970-01-01 is day 0 of the Unix epoch; 2000-03-01 is 11 017 days later (POSIX
        // time 951 868 800 s / 86 400 s, common knowledge, no source needed beyond arithmetic).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        assert_eq!(civil_from_days(11_017), (2000, 3, 1));
        assert_eq!(civil_from_days(-1), (1969, 12, 31));
    }

    #[test]
    fn years_in_each_calendar_by_hand() {
        // Hand computation. noleap, days since 2000-01-01: day 10 950 = 30 × 365 → 2030-01-01;
        // 10 949.9 → still 2029. 360_day: 10 800 = 30 × 360 → 2030. all_leap: 30 × 366 → 2030.
        // Gregorian: 2000-01-01 + 10 958 days = 2030-01-01 (30 × 365 + the 8 leap days of
        // 2000, 2004, …, 2028).
        let y = |v: f64, c| years(&[v], "days since 2000-01-01", c).unwrap()[0];
        assert_eq!(y(10_950.0, Calendar::NoLeap), 2030);
        assert_eq!(y(10_949.9, Calendar::NoLeap), 2029);
        assert_eq!(y(10_800.0, Calendar::Day360), 2030);
        assert_eq!(y(10_799.0, Calendar::Day360), 2029);
        assert_eq!(y(10_980.0, Calendar::AllLeap), 2030);
        assert_eq!(y(10_958.0, Calendar::Gregorian), 2030);
        assert_eq!(y(10_957.0, Calendar::Gregorian), 2029);
        // Hours since 1850-01-01 00:00:00 in noleap: 180 years × 365 × 24 h → 2030.
        let h = years(
            &[180.0 * 365.0 * 24.0 + 12.0],
            "hours since 1850-01-01 00:00:00",
            Calendar::NoLeap,
        );
        assert_eq!(h.unwrap(), vec![2030]);
        assert!(years(&[1.0], "fortnights since 2000-01-01", Calendar::NoLeap).is_err());
        assert!(Calendar::parse(Some("julian_ish")).is_err());
        assert_eq!(Calendar::parse(Some("365_day")).unwrap(), Calendar::NoLeap);
    }
}
