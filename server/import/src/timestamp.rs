//! Times written as text in a run export: a date and clock time (`2024-03-01 10:15:00`,
//! `2024-03-01T10:15:00`, `01.03.2024 10:15:00`, seconds optional) or an elapsed time
//! (`H:MM:SS`, `HH:MM`, any number of hours). Read as seconds; the table turns a column of
//! them into hours since its first row.

/// A time cell, in seconds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TimeCell {
    /// Seconds since 1970-01-01 00:00 (the clock's own time zone; only differences are used).
    DateTime(f64),
    /// Seconds since the start of whatever the export counts from.
    Elapsed(f64),
}

/// The time in `field`, or `None` when it is not written in one of the accepted forms.
pub fn parse_time_cell(field: &str) -> Option<TimeCell> {
    let s = field.trim();
    let s = s
        .strip_prefix('"')
        .and_then(|x| x.strip_suffix('"'))
        .unwrap_or(s)
        .trim();
    if s.is_empty() || s.len() > 40 || !s.is_ascii() {
        return None;
    }
    if let Some((date, clock)) = s.split_once([' ', 'T']) {
        let days = civil_days(date)?;
        let secs = clock_seconds(clock.trim(), 2)?;
        if secs >= 86_400.0 {
            return None;
        }
        return Some(TimeCell::DateTime(days as f64 * 86_400.0 + secs));
    }
    clock_seconds(s, 6).map(TimeCell::Elapsed)
}

/// A units-row cell that says how times are written ("hh:mm:ss", "[dd.mm.yyyy hh:mm]").
pub fn is_format_hint(cell: &str) -> bool {
    let c = cell.trim().to_lowercase();
    c.contains(':') && c.chars().all(|ch| "ymdhs:.-/ t[]()".contains(ch))
}

/// `H:MM` or `H:MM:SS` (seconds may carry a fraction after `.` or `,`), with at most
/// `max_hour_digits` hour digits.
fn clock_seconds(s: &str, max_hour_digits: usize) -> Option<f64> {
    let mut parts = s.split(':');
    let hours = parts.next()?;
    let minutes = parts.next()?;
    let seconds = parts.next();
    if parts.next().is_some() || hours.len() > max_hour_digits {
        return None;
    }
    let h = digits(hours)?;
    let m = digits(minutes).filter(|&m| minutes.len() == 2 && m < 60)?;
    let sec = match seconds {
        None => 0.0,
        Some(sec) => {
            let (whole, frac) = sec.split_once(['.', ',']).unwrap_or((sec, ""));
            if whole.len() != 2 || frac.len() > 9 || !frac.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            let whole = digits(whole).filter(|&w| w < 60)?;
            let frac = if frac.is_empty() {
                0.0
            } else {
                format!("0.{frac}").parse::<f64>().ok()?
            };
            f64::from(whole) + frac
        }
    };
    Some(f64::from(h) * 3600.0 + f64::from(m) * 60.0 + sec)
}

/// Days since 1970-01-01 of `YYYY-MM-DD` or `DD.MM.YYYY`, when it is a real date.
fn civil_days(date: &str) -> Option<i64> {
    let b = date.as_bytes();
    if b.len() != 10 {
        return None;
    }
    let part = |from: usize, to: usize| date.get(from..to).and_then(digits);
    let (y, m, d) = if b[4] == b'-' && b[7] == b'-' {
        (part(0, 4)?, part(5, 7)?, part(8, 10)?)
    } else if b[2] == b'.' && b[5] == b'.' {
        (part(6, 10)?, part(3, 5)?, part(0, 2)?)
    } else {
        return None;
    };
    if !(1..=12).contains(&m) || d == 0 || d > days_in_month(y, m) {
        return None;
    }
    Some(days_from_civil(i64::from(y), i64::from(m), i64::from(d)))
}

fn digits(s: &str) -> Option<u32> {
    if s.is_empty() || !s.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    s.parse().ok()
}

fn days_in_month(y: u32, m: u32) -> u32 {
    match m {
        2 if (y.is_multiple_of(4) && !y.is_multiple_of(100)) || y.is_multiple_of(400) => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

/// Days since 1970-01-01 in the proleptic Gregorian calendar (the era-based day count,
/// common practice, no source needed beyond the calendar's rules).
fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

#[cfg(test)]
mod tests {
    use super::*;

    fn secs(s: &str) -> Option<f64> {
        match parse_time_cell(s)? {
            TimeCell::DateTime(t) | TimeCell::Elapsed(t) => Some(t),
        }
    }

    #[test]
    fn the_three_date_time_forms_agree() {
        // 2024-03-01 is day 19 783 since 1970-01-01 (calendar arithmetic).
        let t = 19_783.0 * 86_400.0 + 10.0 * 3600.0 + 15.0 * 60.0;
        assert_eq!(secs("2024-03-01 10:15:00"), Some(t));
        assert_eq!(secs("2024-03-01T10:15:00"), Some(t));
        assert_eq!(secs("01.03.2024 10:15:00"), Some(t));
        assert_eq!(secs("\"2024-03-01 10:15\""), Some(t));
        assert_eq!(
            parse_time_cell("1970-01-01 00:00:01"),
            Some(TimeCell::DateTime(1.0))
        );
        // A leap day, and the day after the end of February in a common year.
        assert!(secs("29.02.2024 00:00:00").is_some());
        assert_eq!(secs("29.02.2023 00:00:00"), None);
    }

    #[test]
    fn elapsed_times_may_run_past_a_day() {
        assert_eq!(parse_time_cell("1:30:15"), Some(TimeCell::Elapsed(5415.0)));
        assert_eq!(parse_time_cell("36:05"), Some(TimeCell::Elapsed(129_900.0)));
        assert_eq!(secs("0:00:01.5"), Some(1.5));
    }

    #[test]
    fn format_hints_are_told_from_names() {
        assert!(is_format_hint("hh:mm:ss"));
        assert!(is_format_hint("[DD.MM.YYYY hh:mm]"));
        assert!(!is_format_hint("Time"));
        assert!(!is_format_hint("hh"));
    }

    #[test]
    fn near_misses_are_not_times() {
        for bad in [
            "",
            "12",
            "1:5",
            "1:60",
            "1:30:61",
            "2024-13-01 00:00",
            "2024-02-30 00:00",
            "24.12.2024",
            "2024-03-01 24:00",
            "1.5",
            "a:bc",
            "1:30:00:00",
            "−1:30",
        ] {
            assert_eq!(parse_time_cell(bad), None, "{bad}");
        }
    }
}
