//! Timestamp parsing for historian exports.
//!
//! Accepted forms (one rule for every cell, so mixed files still work):
//! - RFC 3339 / ISO 8601 date-times: `2026-03-01T08:15:00Z`, `2026-03-01T08:15:00.25+01:00`,
//!   lower-case `t`/`z`, a space instead of `T`, offsets as `+hh:mm` or `+hhmm` (after a space
//!   too), `UTC` or `GMT` for a zero offset;
//! - the same without an offset (`2026-03-01 08:15:00`): the configured offset for naive times applies;
//! - year-first dates with `/` or `.` (`2026/03/01 08:15`, `2026.3.1`), one or two digits for
//!   month and day;
//! - a date alone (`2026-03-01`): midnight;
//! - ISO 8601's basic format, `20260301T081500Z`, `20260301 0815`, and the all-digit
//!   `202603010815` or `20260301081500` (see [`basic_date`] for when these are not epoch time);
//! - epoch time, with or without a fraction: seconds (`1772352900`, `1772352900.5`), or
//!   milliseconds, microseconds or nanoseconds told apart by size (`1772352900500`);
//! - with [`DateOrder::Dmy`] or [`DateOrder::Mdy`], also dates with the day or the month first,
//!   as spreadsheets and regional settings write them (`01.03.2026 08:15`, `3/1/2026 8:15:00 AM`):
//!   one or two digits for day, month and hour, `.`, `/` or `-` between the date's parts, a
//!   12-hour clock with `AM`/`PM`. Which of `01/03/2026`'s first two numbers is the day cannot be
//!   told from the text, hence the setting.
//!
//! A leap second (`:60`) is read as the first instant of the next minute. Times are held as
//! microseconds since 1970-01-01T00:00:00Z; finer digits are rounded to the microsecond.

use std::fmt;

/// Microseconds since the Unix epoch, UTC.
pub type Micros = i64;

/// How dates that do not start with the year are read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DateOrder {
    /// Year first only (ISO 8601); other dates are errors that name this setting.
    #[default]
    Ymd,
    /// Day, month, year (`31.12.2026`, `31/12/2026`).
    Dmy,
    /// Month, day, year (`12/31/2026`).
    Mdy,
}

/// Why a timestamp cell was rejected.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{text}` is not a timestamp ({reason}); expected RFC 3339 like `2026-03-01T08:15:00Z`, `2026-03-01 08:15:00` or epoch time")]
pub struct TimestampError {
    /// The cell text (shortened when long).
    pub text: String,
    /// What was wrong with it.
    pub reason: &'static str,
}

fn fail(text: &str, reason: &'static str) -> TimestampError {
    let mut shown: String = text.chars().take(40).collect();
    if text.chars().count() > 40 {
        shown.push('…');
    }
    TimestampError {
        text: shown,
        reason,
    }
}

/// Days from 1970-01-01 to the given civil date (proleptic Gregorian); Hinnant's algorithm.
pub fn days_from_civil(year: i64, month: u32, day: u32) -> i64 {
    let y = if month <= 2 { year - 1 } else { year };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let m = month as i64;
    let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + day as i64 - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The civil date (year, month, day) of a day count from 1970-01-01; inverse of [`days_from_civil`].
pub fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

fn days_in_month(year: i64, month: u32) -> u32 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ => {
            let leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
            if leap {
                29
            } else {
                28
            }
        }
    }
}

struct Cursor<'a> {
    bytes: &'a [u8],
    pos: usize,
}

impl Cursor<'_> {
    /// One up to `max` digits.
    fn some_digits(&mut self, max: usize) -> Option<u32> {
        let mut value = 0u32;
        let start = self.pos;
        while let Some(b) = self.peek().filter(u8::is_ascii_digit) {
            if self.pos - start == max {
                return None;
            }
            value = value * 10 + u32::from(b - b'0');
            self.pos += 1;
        }
        (self.pos > start).then_some(value)
    }

    /// `AM` or `PM` (any case) after optional spaces: `Some(true)` for PM.
    fn meridiem(&mut self) -> Option<bool> {
        let rest = self.bytes.get(self.pos..)?;
        let skipped = rest.iter().take_while(|b| **b == b' ').count();
        let word = rest.get(skipped..skipped + 2)?;
        let pm = match [word[0].to_ascii_uppercase(), word[1].to_ascii_uppercase()] {
            [b'A', b'M'] => false,
            [b'P', b'M'] => true,
            _ => return None,
        };
        self.pos += skipped + 2;
        Some(pm)
    }

    /// `UTC` or `GMT` (any case) after optional spaces, as some exports name the zone.
    fn utc_name(&mut self) -> bool {
        let Some(rest) = self.bytes.get(self.pos..) else {
            return false;
        };
        let skipped = rest.iter().take_while(|b| **b == b' ').count();
        let named = rest
            .get(skipped..skipped + 3)
            .is_some_and(|w| w.eq_ignore_ascii_case(b"UTC") || w.eq_ignore_ascii_case(b"GMT"));
        if named {
            self.pos += skipped + 3;
        }
        named
    }

    fn digits(&mut self, count: usize) -> Option<u32> {
        let slice = self.bytes.get(self.pos..self.pos + count)?;
        let mut value = 0u32;
        for &b in slice {
            if !b.is_ascii_digit() {
                return None;
            }
            value = value * 10 + u32::from(b - b'0');
        }
        self.pos += count;
        Some(value)
    }

    fn eat(&mut self, byte: u8) -> bool {
        if self.bytes.get(self.pos) == Some(&byte) {
            self.pos += 1;
            true
        } else {
            false
        }
    }

    fn peek(&self) -> Option<u8> {
        self.bytes.get(self.pos).copied()
    }

    fn done(&self) -> bool {
        self.pos >= self.bytes.len()
    }
}

/// A date that starts with one or two digits and a separator (`01.03.2026`, `3/1/2026`): day
/// or month first, never epoch seconds.
fn day_or_month_first(bytes: &[u8]) -> bool {
    let lead = bytes.iter().take_while(|b| b.is_ascii_digit()).count();
    (1..=2).contains(&lead) && matches!(bytes.get(lead), Some(b'.' | b'/' | b'-'))
}

/// The date of ISO 8601's basic format, `yyyymmdd` followed by `T` or a space and a time
/// (`20260301T081500Z`, `20260301 0815`), or the all-digit date and time that PLC and historian
/// exports write, `yyyymmddhhmm` or `yyyymmddhhmmss`. The all-digit forms are taken only when
/// every field is in range and the year lies in 1900–2199; other numbers stay epoch time (as
/// epoch milliseconds, 12-digit numbers from `190000000000` to `219999999999` fall in 1976; as
/// seconds, 12 and 14 digits lie past the year 5000). A date alone in eight digits stays epoch
/// seconds: a counter of seconds passes through such numbers.
fn basic_date(bytes: &[u8]) -> Option<(i64, u32, u32)> {
    let date = bytes.get(..8)?;
    if !date.iter().all(u8::is_ascii_digit) {
        return None;
    }
    let number = |range: core::ops::Range<usize>| {
        bytes[range]
            .iter()
            .fold(0u32, |n, b| n * 10 + u32::from(b - b'0'))
    };
    let (year, month, day) = (i64::from(number(0..4)), number(4..6), number(6..8));
    match bytes.get(8) {
        Some(b'T' | b't' | b' ') => Some((year, month, day)),
        _ if (bytes.len() == 12 || bytes.len() == 14) && bytes.iter().all(u8::is_ascii_digit) => {
            let second = if bytes.len() == 14 { number(12..14) } else { 0 };
            let plausible = (1900..=2199).contains(&year)
                && (1..=12).contains(&month)
                && (1..=days_in_month(year, month)).contains(&day)
                && number(8..10) <= 23
                && number(10..12) <= 59
                && second <= 59;
            plausible.then_some((year, month, day))
        }
        _ => None,
    }
}

/// Reads `d.m.yyyy` or `m/d/yyyy` (one separator of `.`, `/`, `-`, used twice) as (year, month,
/// day) in `order`.
fn day_month_year(
    c: &mut Cursor<'_>,
    order: DateOrder,
    text: &str,
) -> Result<(i64, u32, u32), TimestampError> {
    let first = c.some_digits(2).ok_or_else(|| fail(text, "bad date"))?;
    let separator = c.peek().unwrap_or(b'.');
    c.pos += 1;
    let second = c.some_digits(2).ok_or_else(|| fail(text, "bad date"))?;
    if !c.eat(separator) {
        return Err(fail(text, "expected the same separator twice in the date"));
    }
    let year = c.digits(4).ok_or_else(|| fail(text, "bad year"))? as i64;
    Ok(match order {
        DateOrder::Mdy => (year, first, second),
        _ => (year, second, first),
    })
}

/// Parses one timestamp cell; `naive_offset_minutes` applies to times written without an
/// offset, `order` to dates that do not start with the year.
pub fn parse_timestamp(
    text: &str,
    naive_offset_minutes: i32,
    order: DateOrder,
) -> Result<Micros, TimestampError> {
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(fail(text, "empty"));
    }
    let bytes = trimmed.as_bytes();
    let mut c = Cursor { bytes, pos: 0 };
    let basic = basic_date(bytes);
    let (year, month, day) = if let Some(date) = basic {
        c.pos = 8;
        date
    } else if day_or_month_first(bytes) {
        if order == DateOrder::Ymd {
            return Err(fail(
                text,
                "day or month first: set `date-order` to `dmy` or `mdy`",
            ));
        }
        day_month_year(&mut c, order, text)?
    } else {
        let looks_epoch = bytes
            .iter()
            .enumerate()
            .all(|(i, &b)| b.is_ascii_digit() || b == b'.' || (i == 0 && b == b'-'));
        // `2026.03.02` is a date, `1772.5` epoch seconds: a date has its separator twice.
        let separator = bytes
            .get(4)
            .copied()
            .filter(|b| matches!(b, b'-' | b'/' | b'.'));
        let date_like = separator.is_some_and(|s| bytes.iter().filter(|&&b| b == s).count() >= 2);
        if looks_epoch && !date_like && separator != Some(b'-') {
            return parse_epoch(trimmed);
        }
        let year = c.digits(4).ok_or_else(|| fail(text, "bad year"))? as i64;
        // ISO 8601 writes `-` and two-digit fields; `/` and `.` (as East Asian and some
        // historian exports write year-first dates) allow one digit.
        let separator = separator.unwrap_or(b'-');
        if !c.eat(separator) {
            return Err(fail(text, "expected `-` after the year"));
        }
        let field = |c: &mut Cursor<'_>| {
            if separator == b'-' {
                c.digits(2)
            } else {
                c.some_digits(2)
            }
        };
        let month = field(&mut c).ok_or_else(|| fail(text, "bad month"))?;
        if !c.eat(separator) {
            return Err(fail(text, "expected the same separator after the month"));
        }
        let day = field(&mut c).ok_or_else(|| fail(text, "bad day"))?;
        (year, month, day)
    };
    if !(1..=12).contains(&month) {
        return Err(fail(text, "month out of range"));
    }
    if day == 0 || day > days_in_month(year, month) {
        return Err(fail(text, "day out of range"));
    }
    let days = days_from_civil(year, month, day);
    if c.done() {
        return Ok(days * 86_400_000_000 - i64::from(naive_offset_minutes) * 60_000_000);
    }
    // The all-digit basic form runs the time straight on from the date.
    let run_on = basic.is_some() && c.peek().is_some_and(|b| b.is_ascii_digit());
    if !(run_on || c.eat(b'T') || c.eat(b't') || c.eat(b' ')) {
        return Err(fail(text, "expected `T` or a space between date and time"));
    }
    let hour = if basic.is_some() {
        c.digits(2)
    } else {
        c.some_digits(2)
    }
    .ok_or_else(|| fail(text, "bad hour"))?;
    // ISO 8601's basic format writes `hhmm[ss]` without colons.
    let extended = c.eat(b':');
    if !extended && basic.is_none() {
        return Err(fail(text, "expected `:` after the hour"));
    }
    let minute = c.digits(2).ok_or_else(|| fail(text, "bad minute"))?;
    let mut second = 0;
    let mut micros = 0i64;
    let has_seconds = if extended {
        c.eat(b':')
    } else {
        c.peek().is_some_and(|b| b.is_ascii_digit())
    };
    if has_seconds {
        second = c.digits(2).ok_or_else(|| fail(text, "bad second"))?;
        if c.eat(b'.') || c.eat(b',') {
            let start = c.pos;
            let mut scale = 100_000i64;
            let mut rest = 0i64;
            while let Some(b) = c.peek().filter(u8::is_ascii_digit) {
                let digit = i64::from(b - b'0');
                if scale >= 1 {
                    micros += digit * scale;
                    scale /= 10;
                } else if scale == 0 && rest == 0 {
                    rest = digit;
                    scale = -1;
                }
                c.pos += 1;
            }
            if c.pos == start {
                return Err(fail(text, "no digits after the decimal point"));
            }
            if rest >= 5 {
                micros += 1;
            }
        }
    }
    let hour = match c.meridiem() {
        None => hour,
        Some(_) if !(1..=12).contains(&hour) => {
            return Err(fail(text, "hour out of range for AM/PM"))
        }
        Some(pm) => hour % 12 + if pm { 12 } else { 0 },
    };
    if hour > 23 || minute > 59 || second > 60 {
        return Err(fail(text, "time of day out of range"));
    }
    // `UTC`/`GMT` may stand for the offset or precede one (`UTC+01:00`); a space may precede
    // the offset.
    let named_utc = c.utc_name();
    if !named_utc {
        c.eat(b' ');
    }
    let offset_minutes: i64 = if c.done() {
        if named_utc {
            0
        } else {
            i64::from(naive_offset_minutes)
        }
    } else if !named_utc && (c.eat(b'Z') || c.eat(b'z')) {
        0
    } else {
        let sign = if c.eat(b'+') {
            1
        } else if c.eat(b'-') {
            -1
        } else {
            return Err(fail(text, "unexpected text after the time"));
        };
        let oh = c.digits(2).ok_or_else(|| fail(text, "bad offset hours"))?;
        c.eat(b':');
        let om = c
            .digits(2)
            .ok_or_else(|| fail(text, "bad offset minutes"))?;
        if oh > 23 || om > 59 {
            return Err(fail(text, "offset out of range"));
        }
        sign * i64::from(oh * 60 + om)
    };
    if !c.done() {
        return Err(fail(text, "unexpected text after the time"));
    }
    let seconds =
        days * 86_400 + i64::from(hour) * 3600 + i64::from(minute) * 60 + i64::from(second)
            - offset_minutes * 60;
    Ok(seconds * 1_000_000 + micros)
}

/// Epoch time in the unit its size implies: seconds below 10^11 (which is the year 5138), then
/// milliseconds below 10^14, microseconds below 10^17, else nanoseconds, as time-series databases
/// and message brokers export them. A fraction is allowed in every unit; the time is rounded to
/// the microsecond, half away from zero, from its digits down to the nanosecond.
fn parse_epoch(text: &str) -> Result<Micros, TimestampError> {
    let (whole, frac) = match text.split_once('.') {
        Some((w, f)) => (w, f),
        None => (text, ""),
    };
    if frac.contains('.') || (whole.is_empty() || whole == "-") && frac.is_empty() {
        return Err(fail(text, "malformed epoch time"));
    }
    let negative = whole.starts_with('-');
    let digits = whole.trim_start_matches('-');
    let magnitude: i128 = if digits.is_empty() {
        0
    } else {
        digits
            .parse()
            .map_err(|_| fail(text, "epoch time out of range"))?
    };
    // Nanoseconds per unit.
    let unit: i128 = match magnitude {
        m if m < 100_000_000_000 => 1_000_000_000,
        m if m < 100_000_000_000_000 => 1_000_000,
        m if m < 100_000_000_000_000_000 => 1_000,
        m if m < 10_000_000_000_000_000_000 => 1,
        _ => return Err(fail(text, "epoch time out of range")),
    };
    // The fraction to the nanosecond (finer digits dropped), then rounded to the microsecond,
    // half away from zero.
    let mut nanos = magnitude * unit;
    let mut scale = unit;
    for b in frac.bytes() {
        scale /= 10;
        if scale == 0 {
            break;
        }
        nanos += i128::from(b - b'0') * scale;
    }
    let micros = (nanos + 500) / 1_000;
    let micros = if negative { -micros } else { micros };
    i64::try_from(micros).map_err(|_| fail(text, "epoch time out of range"))
}

/// A timestamp written back as RFC 3339 in UTC (`2026-03-01T08:15:00Z`, fraction only when needed).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Rfc3339(pub Micros);

impl fmt::Display for Rfc3339 {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let micros = self.0.rem_euclid(1_000_000);
        let secs = self.0.div_euclid(1_000_000);
        let days = secs.div_euclid(86_400);
        let tod = secs.rem_euclid(86_400);
        let (y, m, d) = civil_from_days(days);
        write!(
            f,
            "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}",
            tod / 3600,
            (tod / 60) % 60,
            tod % 60
        )?;
        if micros != 0 {
            let mut frac = format!("{micros:06}");
            while frac.ends_with('0') {
                frac.pop();
            }
            write!(f, ".{frac}")?;
        }
        write!(f, "Z")
    }
}

/// Parses an offset for naive times: `+01:00`, `-05:30`, `Z` or `UTC`; result in minutes east of UTC.
pub fn parse_offset(text: &str) -> Option<i32> {
    let t = text.trim();
    if t.eq_ignore_ascii_case("z") || t.eq_ignore_ascii_case("utc") {
        return Some(0);
    }
    let (sign, rest) = match t.as_bytes().first()? {
        b'+' => (1, &t[1..]),
        b'-' => (-1, &t[1..]),
        _ => return None,
    };
    let (h, m) = rest
        .split_once(':')
        .unwrap_or((rest.get(..2)?, rest.get(2..)?));
    let h: i32 = h.parse().ok()?;
    let m: i32 = m.parse().ok()?;
    if h > 23 || m > 59 || h < 0 || m < 0 {
        return None;
    }
    Some(sign * (h * 60 + m))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn utc(text: &str) -> Micros {
        parse_timestamp(text, 0, DateOrder::Ymd).expect(text)
    }

    /// The examples of RFC 3339 section 5.8 ("Examples"), with their instants worked out by hand
    /// from the text of that section.
    #[test]
    fn rfc3339_section_5_8_examples() {
        // "1985-04-12T23:20:50.52Z": 20 minutes and 50.52 seconds after 23:00 UTC, 12 April 1985.
        assert_eq!(utc("1985-04-12T23:20:50.52Z"), 482_196_050_520_000);
        // "1996-12-19T16:39:57-08:00" is "equivalent to 1996-12-20T00:39:57Z".
        assert_eq!(
            utc("1996-12-19T16:39:57-08:00"),
            utc("1996-12-20T00:39:57Z")
        );
        assert_eq!(utc("1996-12-20T00:39:57Z"), 851_042_397_000_000);
        // "1990-12-31T23:59:60Z" is the leap second at the end of 1990; "1990-12-31T15:59:60-08:00"
        // is the same leap second in Pacific Standard Time.
        assert_eq!(utc("1990-12-31T23:59:60Z"), utc("1991-01-01T00:00:00Z"));
        assert_eq!(
            utc("1990-12-31T15:59:60-08:00"),
            utc("1990-12-31T23:59:60Z")
        );
        // "1937-01-01T12:00:27.87+00:20": Netherlands time, 20 minutes ahead of UTC.
        assert_eq!(
            utc("1937-01-01T12:00:27.87+00:20"),
            utc("1937-01-01T11:40:27.87Z")
        );
        assert_eq!(utc("1937-01-01T11:40:27.87Z"), -1_041_337_172_130_000);
    }

    #[test]
    fn naive_forms_and_epoch_seconds() {
        let t = utc("2026-03-01T08:15:00Z");
        assert_eq!(utc("2026-03-01 08:15:00"), t);
        assert_eq!(utc("2026-03-01t08:15:00z"), t);
        assert_eq!(utc("2026-03-01T08:15"), t);
        assert_eq!(
            parse_timestamp("2026-03-01 09:15:00", 60, DateOrder::Ymd),
            Ok(t)
        );
        assert_eq!(utc("2026-03-01T09:15:00+0100"), t);
        assert_eq!(utc(&(t / 1_000_000).to_string()), t);
        assert_eq!(utc("1772352900.5"), utc("2026-03-01T08:15:00.5Z"));
        // Milliseconds, microseconds and nanoseconds, told apart by size.
        let half = utc("2026-03-01T08:15:00.5Z");
        for text in ["1772352900500", "1772352900500000", "1772352900500000000"] {
            assert_eq!(utc(text), half, "{text}");
        }
        assert_eq!(utc("1772352900500.25"), half + 250);
        assert_eq!(utc("1772352900500000499"), half);
        assert_eq!(utc("1772352900500000500"), half + 1);
        assert_eq!(utc("99999999999"), 99_999_999_999_000_000); // the year 5138, in seconds
        assert_eq!(utc("100000000000"), 100_000_000_000_000); // 1973, in milliseconds
        assert_eq!(utc("-1.0000005"), -1_000_001);
        assert!(parse_timestamp("10000000000000000000", 0, DateOrder::Ymd).is_err());
        assert_eq!(utc("2026-03-01"), utc("2026-03-01T00:00:00Z"));
        // Year first with `/` or `.`, one-digit fields allowed there; `1772.5` stays epoch time.
        assert_eq!(utc("2026/03/01 08:15:00"), t);
        assert_eq!(utc("2026/3/1 8:15"), t);
        assert_eq!(utc("2026.03.01 08:15"), t);
        assert_eq!(utc("2026.03.01"), utc("2026-03-01"));
        assert_eq!(utc("1772.5"), 1_772_500_000);
        // The zone named, or the offset after a space.
        assert_eq!(
            parse_timestamp("2026-03-01 08:15:00 UTC", 60, DateOrder::Ymd),
            Ok(t)
        );
        assert_eq!(utc("2026-03-01 08:15 gmt"), t);
        assert_eq!(utc("2026-03-01 09:15:00 UTC+01:00"), t);
        assert_eq!(utc("2026-03-01 09:15:00 +01:00"), t);
        assert_eq!(utc("2026-03-01 08:15:00 Z"), t);
        assert!(parse_timestamp("2026-03-01 08:15:00 CET", 0, DateOrder::Ymd).is_err());
        assert!(parse_timestamp("2026-03-01 08:15:00 UTCZ", 0, DateOrder::Ymd).is_err());
        assert!(parse_timestamp("2026/03-01 08:15", 0, DateOrder::Ymd).is_err());
        assert!(parse_timestamp("2026-3-01 08:15", 0, DateOrder::Ymd).is_err());
    }

    #[test]
    fn basic_format_and_all_digit_dates() {
        // ISO 8601-1:2019 §5.4.2 writes the basic format without separators (`20260301T081500`).
        let t = utc("2026-03-01T08:15:00Z");
        assert_eq!(utc("20260301T081500Z"), t);
        assert_eq!(utc("20260301T0815Z"), t);
        assert_eq!(utc("20260301t081500z"), t);
        assert_eq!(utc("20260301T091500+0100"), t);
        assert_eq!(utc("20260301 081500"), t);
        assert_eq!(utc("20260301 08:15:00"), t);
        assert_eq!(utc("20260301T081500.5Z"), t + 500_000);
        assert_eq!(
            parse_timestamp("20260301T091500", 60, DateOrder::Ymd),
            Ok(t)
        );
        // All digits: date and time run together.
        assert_eq!(utc("202603010815"), t);
        assert_eq!(utc("20260301081500"), t);
        assert_eq!(utc("20260301081530"), t + 30_000_000);
        // Out-of-range fields or years leave them epoch time (milliseconds at 12 to 14 digits).
        assert_eq!(utc("202613010815"), 202_613_010_815_000); // month 13
        assert_eq!(utc("202602300815"), 202_602_300_815_000); // 30 February
        assert_eq!(utc("202603012415"), 202_603_012_415_000); // hour 24
        assert_eq!(utc("946684800000"), utc("2000-01-01T00:00:00Z")); // "year 9466"
        assert_eq!(utc("22000301081500"), 22_000_301_081_500_000); // the year 2200
                                                                   // Eight digits alone stay epoch seconds; 13 digits stay milliseconds.
        assert_eq!(utc("20260301"), 20_260_301_000_000);
        assert_eq!(utc("1772352900500"), t + 500_000);
        for bad in [
            "20260301T08",
            "20260301T0815:00",
            "20260301T081",
            "20260332T0815",
        ] {
            assert!(
                parse_timestamp(bad, 0, DateOrder::Ymd).is_err(),
                "{bad} should be rejected"
            );
        }
    }

    #[test]
    fn rejects_bad_dates_and_text() {
        for bad in [
            "2026-02-30 00:00:00",
            "2026-13-01 00:00:00",
            "2026-03-01 24:00:00",
            "2026-03-01 13:15:00 PM",
            "2026-03-01 00:15:00 AM",
            "01/03/2026 08:15",
            "Bad",
            "",
            "1.2.3",
            "2026-03-01T08:15:00+25:00",
        ] {
            assert!(
                parse_timestamp(bad, 0, DateOrder::Ymd).is_err(),
                "{bad} accepted"
            );
        }
        let err = parse_timestamp("01.03.2026 08:15", 0, DateOrder::Ymd).expect_err("dmy");
        assert!(err.to_string().contains("set `date-order`"), "{err}");
        for bad in [
            "1.3.26 08:15",
            "01.03/2026",
            "32.01.2026",
            "29.02.2026",
            "001.03.2026",
            "1.3.2026 8",
        ] {
            assert!(
                parse_timestamp(bad, 0, DateOrder::Dmy).is_err(),
                "{bad} accepted"
            );
        }
    }

    /// Day-first and month-first dates and the 12-hour clock, checked against the same instant
    /// in ISO form. 12 AM is midnight and 12 PM noon (the 12-hour convention).
    #[test]
    fn day_and_month_first_dates() {
        let dmy = |text: &str| parse_timestamp(text, 0, DateOrder::Dmy).expect(text);
        let mdy = |text: &str| parse_timestamp(text, 0, DateOrder::Mdy).expect(text);
        let t = utc("2026-03-01T08:15:00Z");
        assert_eq!(dmy("01.03.2026 08:15:00"), t);
        assert_eq!(dmy("1.3.2026 8:15"), t);
        assert_eq!(dmy("01/03/2026 08:15"), t);
        assert_eq!(dmy("01-03-2026T08:15:00Z"), t);
        assert_eq!(mdy("3/1/2026 8:15:00 AM"), t);
        assert_eq!(mdy("03/01/2026 08:15 am"), t);
        assert_eq!(mdy("3/1/2026 8:15:00.5PM"), utc("2026-03-01T20:15:00.5Z"));
        assert_eq!(mdy("3/1/2026 12:05 AM"), utc("2026-03-01T00:05:00Z"));
        assert_eq!(mdy("3/1/2026 12:05 PM"), utc("2026-03-01T12:05:00Z"));
        assert_eq!(dmy("31.12.2026"), utc("2026-12-31"));
        assert_eq!(mdy("12/31/2026"), utc("2026-12-31"));
        assert_eq!(
            parse_timestamp("01.03.2026 09:15", 60, DateOrder::Dmy),
            Ok(t)
        );
        // Year-first dates and epoch seconds read the same whatever the order.
        assert_eq!(dmy("2026-03-01T08:15:00Z"), t);
        assert_eq!(mdy(&(t / 1_000_000).to_string()), t);
    }

    #[test]
    fn civil_conversions_round_trip() {
        for days in (-800_000..800_000).step_by(997) {
            let (y, m, d) = civil_from_days(days);
            assert_eq!(days_from_civil(y, m, d), days);
        }
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
    }

    #[test]
    fn formats_back_to_rfc3339() {
        assert_eq!(
            Rfc3339(utc("1985-04-12T23:20:50.52Z")).to_string(),
            "1985-04-12T23:20:50.52Z"
        );
        assert_eq!(
            Rfc3339(utc("2026-03-01T08:15:00Z")).to_string(),
            "2026-03-01T08:15:00Z"
        );
        assert_eq!(Rfc3339(-1).to_string(), "1969-12-31T23:59:59.999999Z");
    }

    #[test]
    fn offsets() {
        assert_eq!(parse_offset("+01:00"), Some(60));
        assert_eq!(parse_offset("-0530"), Some(-330));
        assert_eq!(parse_offset("UTC"), Some(0));
        assert_eq!(parse_offset("01:00"), None);
    }
}
