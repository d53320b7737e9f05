//! Date-time cells of a data logger's time column: ISO 8601 dates and times as loggers write
//! them (`2020-02-24 18:15:21.499998208`, `2020-02-24T18:15:21.5Z`, `2020-02-24T18:15:21+01:00`),
//! read to whole nanoseconds so that differences stay exact however far the date is from 1970.

/// Nanoseconds since 1970-01-01 00:00:00 UTC of a date-time cell: `YYYY-MM-DD`, a space or `T`,
/// `hh:mm:ss`, an optional fraction of up to nine digits (more are cut), and an optional zone
/// (`Z`, `+hh:mm`, `-hhmm`). A cell without a zone is taken as UTC: only the differences between
/// rows matter. `None` for anything else, including impossible dates.
pub(crate) fn parse_datetime(cell: &[u8]) -> Option<i128> {
    let s = cell.trim_ascii();
    let s = match (s.first(), s.last()) {
        (Some(b'"'), Some(b'"')) if s.len() >= 2 => &s[1..s.len() - 1],
        _ => s,
    };
    if s.len() < 19 {
        return None;
    }
    let num = |a: usize, b: usize| -> Option<i64> {
        s[a..b].iter().try_fold(0i64, |n, &c| {
            c.is_ascii_digit().then(|| n * 10 + i64::from(c - b'0'))
        })
    };
    let at = |k: usize, c: &[u8]| c.contains(&s[k]);
    if !(at(4, b"-") && at(7, b"-") && at(10, b" Tt") && at(13, b":") && at(16, b":")) {
        return None;
    }
    let (y, m, d) = (num(0, 4)?, num(5, 7)?, num(8, 10)?);
    let (hh, mm, ss) = (num(11, 13)?, num(14, 16)?, num(17, 19)?);
    if !(1..=12).contains(&m) || d < 1 || d > days_in_month(y, m) || hh > 23 || mm > 59 || ss > 60 {
        return None;
    }
    let mut p = 19;
    let mut frac_ns = 0i64;
    if matches!(s.get(p), Some(b'.' | b',')) {
        p += 1;
        let start = p;
        while let Some(c) = s.get(p).filter(|c| c.is_ascii_digit()) {
            if p - start < 9 {
                frac_ns = frac_ns * 10 + i64::from(c - b'0');
            }
            p += 1;
        }
        let n = p - start;
        if n == 0 {
            return None;
        }
        frac_ns *= 10i64.pow(9u32.saturating_sub(n as u32));
    }
    let offset_s = match &s[p..] {
        [] | [b'Z' | b'z'] => 0,
        [sign @ (b'+' | b'-'), rest @ ..] => {
            let digits: Vec<u8> = rest.iter().copied().filter(|c| *c != b':').collect();
            if digits.len() != 4 || !digits.iter().all(u8::is_ascii_digit) {
                return None;
            }
            let v = |k: usize| i64::from(digits[k] - b'0');
            let (oh, om) = (v(0) * 10 + v(1), v(2) * 10 + v(3));
            if oh > 23 || om > 59 {
                return None;
            }
            let o = oh * 3600 + om * 60;
            if *sign == b'-' { -o } else { o }
        }
        _ => return None,
    };
    let secs = days_from_civil(y, m, d) * 86_400 + hh * 3600 + mm * 60 + ss - offset_s;
    Some(i128::from(secs) * 1_000_000_000 + i128::from(frac_ns))
}

/// The number of fraction digits a date-time cell is written with (its resolution is
/// 10^-digits s); `None` when it is not a date-time.
pub(crate) fn fraction_digits(cell: &[u8]) -> Option<i32> {
    parse_datetime(cell)?;
    let s = cell.trim_ascii();
    let after = s.get(19..)?;
    if !matches!(after.first(), Some(b'.' | b',')) {
        return Some(0);
    }
    Some(after[1..].iter().take_while(|c| c.is_ascii_digit()).count() as i32)
}

fn is_leap(y: i64) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

pub(crate) fn days_in_month(y: i64, m: i64) -> i64 {
    match m {
        2 if is_leap(y) => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

/// Days from 1970-01-01 to a date of the proleptic Gregorian calendar (the civil-from-days
/// inverse in Howard Hinnant's public-domain date algorithms, from memory).
pub(crate) fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
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

    const NS: i128 = 1_000_000_000;

    #[test]
    fn dates_count_from_1970_as_pythons_datetime_does() {
        // Python 3: int(datetime(2020, 2, 24, 18, 15, 21, tzinfo=timezone.utc).timestamp())
        // = 1582568121; (2024, 2, 29, 23, 59, 59) = 1709251199; (1999, 12, 31) = 946598400
        assert_eq!(
            parse_datetime(b"2020-02-24 18:15:21.499998208"),
            Some(1_582_568_121 * NS + 499_998_208)
        );
        assert_eq!(
            parse_datetime(b"2024-02-29T23:59:59Z"),
            Some(1_709_251_199 * NS)
        );
        assert_eq!(
            parse_datetime(b"1999-12-31 00:00:00"),
            Some(946_598_400 * NS)
        );
        // a zone moves the instant: 19:15:21+01:00 is 18:15:21Z
        assert_eq!(
            parse_datetime(b"2020-02-24T19:15:21.5+01:00"),
            Some(1_582_568_121 * NS + 500_000_000)
        );
        assert_eq!(
            parse_datetime(b"2020-02-24T17:15:21.5-0100"),
            Some(1_582_568_121 * NS + 500_000_000)
        );
    }

    #[test]
    fn what_is_not_a_date_time_is_refused() {
        for bad in [
            "2020-02-30 00:00:00",
            "2021-02-29 00:00:00",
            "2020-13-01 00:00:00",
            "2020-02-24 24:00:00",
            "2020-02-24 18:15",
            "2020-02-24 18:15:21.",
            "2020-02-24 18:15:21 junk",
            "0.000125",
            "18:15:21.5",
        ] {
            assert_eq!(parse_datetime(bad.as_bytes()), None, "{bad}");
        }
        assert_eq!(fraction_digits(b"2020-02-24 18:15:21.499998208"), Some(9));
        assert_eq!(fraction_digits(b"2020-02-24 18:15:21"), Some(0));
    }
}
