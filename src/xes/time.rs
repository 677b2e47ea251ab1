//! ISO 8601 date-times as used by XES (`xs:dateTime`), to and from `i64` nanoseconds (UTC).
//!
//! XES stores every `date` attribute (in particular `time:timestamp`) as an XML Schema
//! `xs:dateTime`, a profile of ISO 8601:
//!
//! ```text
//! YYYY-MM-DDTHH:MM:SS[.fffffffff][Z | +HH:MM | -HH:MM | +HHMM | -HHMM | +HH | -HH]
//! ```
//!
//! The reader here accepts exactly that shape, plus a few lenient variants met in practice: a
//! space (or lower-case `t`) instead of `T`, a comma as decimal mark, `z` for `Z`, an offset
//! without colon or without minutes, and `24:00:00` (the end of a day, allowed by XML Schema).
//!
//! * **No offset means UTC.** `xs:dateTime` calls such a value "timezone-less"; tracemill stores
//!   all instants on one UTC axis, so it reads them as UTC rather than guessing a local zone.
//! * Fractions carry at most 9 significant digits (nanoseconds); further digits must be zeros,
//!   so that no instant is silently rounded.
//! * Years are 0001–9999, and the instant must fit the `i64` nanosecond range
//!   (1677-09-21 to 2262-04-11); anything outside is an error.
//! * Leap seconds (`:60`) are refused: the Unix time scale has none.
//!
//! Calendar arithmetic is the proleptic Gregorian calendar of ISO 8601, computed with the
//! closed-form "days from civil" conversion (H. Hinnant, *chrono-Compatible Low-Level Date
//! Algorithms*, 2013): shift the year to start on 1 March so that the leap day is the last day
//! of the shifted year, split years into 400-year eras of 146 097 days, and count days inside
//! the era with `365·y + y/4 − y/100` plus the day of the shifted year `(153·m + 2)/5 + d − 1`.
//!
//! [`format_ns`] writes the canonical form `YYYY-MM-DDTHH:MM:SS[.f]+00:00`, trimming trailing
//! zeros of the fraction (and the fraction itself when it is zero), so that
//! `parse(format(t)) == t` for every `i64`.
//!
//! ```
//! use tracemill::xes::{format_ns, parse_datetime};
//! let t = parse_datetime("2016-02-29T13:45:00.5+01:00").unwrap();
//! assert_eq!(format_ns(t), "2016-02-29T12:45:00.5+00:00");
//! assert_eq!(parse_datetime("1970-01-01T00:00:00Z").unwrap(), 0);
//! ```

use crate::error::{TmError, TmResult};

const NS_PER_SEC: i64 = 1_000_000_000;
const SECS_PER_DAY: i64 = 86_400;

/// Days since 1970-01-01 of the proleptic Gregorian date `y-m-d` (`m` in 1..=12, `d` in 1..=31).
pub fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = (if y >= 0 { y } else { y - 399 }) / 400;
    let yoe = y - era * 400; // [0, 399]
    let mp = i64::from((m + 9) % 12); // March = 0
    let doy = (153 * mp + 2) / 5 + i64::from(d) - 1; // [0, 365]
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy; // [0, 146096]
    era * 146_097 + doe - 719_468
}

/// The proleptic Gregorian date `(year, month, day)` of a day count since 1970-01-01.
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = (if z >= 0 { z } else { z - 146_096 }) / 146_097;
    let doe = z - era * 146_097; // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11]
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = (if mp < 10 { mp + 3 } else { mp - 9 }) as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

fn is_leap(y: i64) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

fn days_in_month(y: i64, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if is_leap(y) => 29,
        _ => 28,
    }
}

/// Parse `n` ASCII digits at `s[at..]`.
fn digits(s: &[u8], at: usize, n: usize) -> Result<u32, &'static str> {
    let mut v = 0u32;
    for i in at..at + n {
        match s.get(i) {
            Some(b) if b.is_ascii_digit() => v = v * 10 + u32::from(b - b'0'),
            _ => return Err("expected a digit"),
        }
    }
    Ok(v)
}

fn expect(s: &[u8], at: usize, what: &[u8], msg: &'static str) -> Result<(), &'static str> {
    match s.get(at) {
        Some(b) if what.contains(b) => Ok(()),
        _ => Err(msg),
    }
}

/// Parse an `xs:dateTime` given as bytes; the error is a short reason. Used by the XES reader.
pub(crate) fn parse_datetime_bytes(s: &[u8]) -> Result<i64, &'static str> {
    let s = s.trim_ascii();
    if s.len() < 19 {
        return Err("too short for YYYY-MM-DDTHH:MM:SS");
    }
    let year = i64::from(digits(s, 0, 4).map_err(|_| "the year must have 4 digits")?);
    expect(s, 4, b"-", "expected '-' after the year")?;
    let month = digits(s, 5, 2).map_err(|_| "the month must have 2 digits")?;
    expect(s, 7, b"-", "expected '-' after the month")?;
    let day = digits(s, 8, 2).map_err(|_| "the day must have 2 digits")?;
    expect(s, 10, b"Tt ", "expected 'T' between date and time")?;
    let hour = digits(s, 11, 2).map_err(|_| "the hour must have 2 digits")?;
    expect(s, 13, b":", "expected ':' after the hour")?;
    let minute = digits(s, 14, 2).map_err(|_| "the minutes must have 2 digits")?;
    expect(s, 16, b":", "expected ':' after the minutes")?;
    let second = digits(s, 17, 2).map_err(|_| "the seconds must have 2 digits")?;
    if year == 0 {
        return Err("year 0000 is outside 0001-9999");
    }
    if !(1..=12).contains(&month) {
        return Err("month outside 01-12");
    }
    if day == 0 || day > days_in_month(year, month) {
        return Err("day outside the month");
    }
    if minute > 59 {
        return Err("minutes outside 00-59");
    }
    if second > 59 {
        return Err("seconds outside 00-59 (leap seconds are not representable)");
    }
    let mut i = 19;
    let mut frac: i64 = 0;
    if matches!(s.get(i), Some(b'.' | b',')) {
        i += 1;
        let start = i;
        while let Some(b) = s.get(i).filter(|b| b.is_ascii_digit()) {
            let k = i - start;
            if k < 9 {
                frac = frac * 10 + i64::from(b - b'0');
            } else if *b != b'0' {
                return Err("more than 9 significant fraction digits (below a nanosecond)");
            }
            i += 1;
        }
        let n = i - start;
        if n == 0 {
            return Err("expected digits after the decimal mark");
        }
        for _ in n..9 {
            frac *= 10;
        }
    }
    if hour > 24 || (hour == 24 && (minute != 0 || second != 0 || frac != 0)) {
        return Err("hour outside 00-23");
    }
    let mut offset: i64 = 0;
    match s.get(i) {
        None => {}
        Some(b'Z' | b'z') => i += 1,
        Some(&sign @ (b'+' | b'-')) => {
            let oh = digits(s, i + 1, 2).map_err(|_| "the offset hour must have 2 digits")?;
            i += 3;
            let mut om = 0;
            if s.get(i) == Some(&b':') {
                om = digits(s, i + 1, 2).map_err(|_| "the offset minutes must have 2 digits")?;
                i += 3;
            } else if s.get(i).is_some_and(u8::is_ascii_digit) {
                om = digits(s, i, 2).map_err(|_| "the offset minutes must have 2 digits")?;
                i += 2;
            }
            if oh > 23 || om > 59 {
                return Err("offset outside -23:59..+23:59");
            }
            offset = i64::from(oh * 3600 + om * 60);
            if sign == b'-' {
                offset = -offset;
            }
        }
        Some(_) => {
            return Err("unexpected text after the seconds (expected '.', 'Z' or an offset)")
        }
    }
    if i != s.len() {
        return Err("unexpected text after the time-zone offset");
    }
    let days = days_from_civil(year, month, day);
    let secs = days * SECS_PER_DAY + i64::from(hour * 3600 + minute * 60 + second) - offset;
    // In i128 so that the last second before i64::MIN (negative seconds, positive fraction)
    // is not an intermediate overflow.
    let ns = i128::from(secs) * i128::from(NS_PER_SEC) + i128::from(frac);
    i64::try_from(ns)
        .map_err(|_| "outside the representable range 1677-09-21..2262-04-11 (i64 nanoseconds)")
}

/// Parse an `xs:dateTime` (ISO 8601) into nanoseconds since the Unix epoch, UTC.
///
/// See the module documentation for the accepted forms; a value without offset is UTC.
///
/// # Errors
/// [`TmError::Timestamp`] naming the value and what was expected.
pub fn parse_datetime(s: &str) -> TmResult<i64> {
    parse_datetime_bytes(s.as_bytes()).map_err(|why| TmError::Timestamp {
        column: None,
        row: None,
        line: None,
        message: format!(
            "'{s}' is not an xs:dateTime ({why}); expected e.g. 2016-02-29T13:45:00.123+01:00"
        ),
    })
}

fn push2(out: &mut Vec<u8>, v: u32) {
    out.push(b'0' + (v / 10) as u8);
    out.push(b'0' + (v % 10) as u8);
}

/// Append the canonical form of `ns` (see [`format_ns`]) to `out`, without allocating.
pub(crate) fn format_ns_into(out: &mut Vec<u8>, ns: i64) {
    let secs = ns.div_euclid(NS_PER_SEC);
    let frac = ns.rem_euclid(NS_PER_SEC);
    let days = secs.div_euclid(SECS_PER_DAY);
    let sod = secs.rem_euclid(SECS_PER_DAY) as u32;
    let (y, m, d) = civil_from_days(days);
    // The i64 range is 1677..2262, always four digits.
    let y = y as u32;
    push2(out, y / 100);
    push2(out, y % 100);
    out.push(b'-');
    push2(out, m);
    out.push(b'-');
    push2(out, d);
    out.push(b'T');
    push2(out, sod / 3600);
    out.push(b':');
    push2(out, sod / 60 % 60);
    out.push(b':');
    push2(out, sod % 60);
    if frac != 0 {
        out.push(b'.');
        let mut f = frac;
        let mut n = 9;
        while f % 10 == 0 {
            f /= 10;
            n -= 1;
        }
        let mut tmp = [b'0'; 9];
        for slot in tmp[..n].iter_mut().rev() {
            *slot = b'0' + (f % 10) as u8;
            f /= 10;
        }
        out.extend_from_slice(&tmp[..n]);
    }
    out.extend_from_slice(b"+00:00");
}

/// Format nanoseconds since the epoch as `YYYY-MM-DDTHH:MM:SS[.fffffffff]+00:00` (UTC).
///
/// Trailing zeros of the fraction are trimmed and a zero fraction is omitted; up to nine digits
/// are kept, so [`parse_datetime`] gives back exactly `ns`.
pub fn format_ns(ns: i64) -> String {
    let mut out = Vec::with_capacity(35);
    format_ns_into(&mut out, ns);
    // Only ASCII digits and punctuation were written.
    String::from_utf8_lossy(&out).into_owned()
}

#[cfg(test)]
mod tests {
    use super::*;

    const S: i64 = NS_PER_SEC;

    fn p(s: &str) -> i64 {
        parse_datetime(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    // Epoch values below are facts of the proleptic Gregorian calendar and of Unix time
    // (common practice, quoted from memory and cross-checked against each other here:
    // 946684800 = 10957 days * 86400; 10957 = 30 years * 365 + 7 leap days 1972..1996).
    #[test]
    fn known_epoch_values() {
        assert_eq!(p("1970-01-01T00:00:00Z"), 0);
        assert_eq!(p("2000-01-01T00:00:00Z"), 946_684_800 * S);
        assert_eq!(p("2000-01-01T00:00:00"), 946_684_800 * S); // no offset = UTC
        assert_eq!(p("2001-09-09T01:46:40Z"), 1_000_000_000 * S);
        assert_eq!(p("2038-01-19T03:14:07Z"), 2_147_483_647 * S);
        assert_eq!(p("1969-12-31T23:59:59Z"), -S);
        assert_eq!(p("1900-01-01T00:00:00Z"), -2_208_988_800 * S);
        // 2016 is a leap year: 2016-02-29 exists and 2016-03-01 is one day later.
        assert_eq!(p("2016-02-29T00:00:00Z"), 1_456_704_000 * S);
        assert_eq!(
            p("2016-03-01T00:00:00Z") - p("2016-02-29T00:00:00Z"),
            86_400 * S
        );
        // 2000 is a leap year (divisible by 400), 1900 and 2100 are not.
        assert!(parse_datetime("2000-02-29T00:00:00Z").is_ok());
        assert!(parse_datetime("1900-02-29T00:00:00Z").is_err());
        assert!(parse_datetime("2100-02-29T00:00:00Z").is_err());
        assert!(parse_datetime("2015-02-29T00:00:00Z").is_err());
        // The i64 nanosecond range ends at 2262-04-11T23:47:16.854775807Z.
        assert_eq!(p("2262-04-11T23:47:16.854775807Z"), i64::MAX);
        assert_eq!(p("1677-09-21T00:12:43.145224192Z"), i64::MIN);
    }

    #[test]
    fn offsets_fractions_and_variants() {
        let base = p("2016-02-29T12:45:00Z");
        assert_eq!(p("2016-02-29T13:45:00+01:00"), base);
        assert_eq!(p("2016-02-29T13:45:00+0100"), base);
        assert_eq!(p("2016-02-29T13:45:00+01"), base);
        assert_eq!(p("2016-02-29T07:15:00-05:30"), base);
        assert_eq!(p("2016-02-29 12:45:00"), base);
        assert_eq!(p("2016-02-29t12:45:00z"), base);
        assert_eq!(p(" 2016-02-29T12:45:00Z "), base);
        assert_eq!(p("2016-02-29T12:45:00.5Z"), base + S / 2);
        assert_eq!(p("2016-02-29T12:45:00,5Z"), base + S / 2);
        assert_eq!(p("2016-02-29T12:45:00.000000001Z"), base + 1);
        assert_eq!(p("2016-02-29T12:45:00.123456789000Z"), base + 123_456_789);
        assert_eq!(p("2016-02-29T24:00:00Z"), p("2016-03-01T00:00:00Z"));
        // An offset can move the date across midnight and a year boundary.
        assert_eq!(p("2000-01-01T00:30:00+01:00"), p("1999-12-31T23:30:00Z"));
    }

    #[test]
    fn rejects_bad_values() {
        for bad in [
            "",
            "2016-02-29",
            "16-02-29T12:00:00Z",
            "2016-13-01T00:00:00Z",
            "2016-00-01T00:00:00Z",
            "2016-04-31T00:00:00Z",
            "2016-02-29T25:00:00Z",
            "2016-02-29T24:00:01Z",
            "2016-02-29T12:60:00Z",
            "2016-12-31T23:59:60Z",
            "2016-02-29T12:00:00.Z",
            "2016-02-29T12:00:00.1234567891Z",
            "2016-02-29T12:00:00+24:00",
            "2016-02-29T12:00:00+01:0",
            "2016-02-29T12:00:00Zjunk",
            "2016-02-29X12:00:00Z",
            "0000-01-01T00:00:00Z",
            "1000-01-01T00:00:00Z",
            "9999-12-31T23:59:59Z",
            "２０16-02-29T12:00:00Z",
        ] {
            let r = parse_datetime(bad);
            assert!(matches!(r, Err(TmError::Timestamp { .. })), "{bad}: {r:?}");
        }
        let msg = parse_datetime("2016-02-30T00:00:00Z")
            .unwrap_err()
            .to_string();
        assert!(
            msg.contains("2016-02-30") && msg.contains("day outside"),
            "{msg}"
        );
    }

    #[test]
    fn civil_round_trip_over_the_range() {
        for z in (-120_000..120_000).step_by(7) {
            let (y, m, d) = civil_from_days(z);
            assert!(d >= 1 && d <= days_in_month(y, m));
            assert_eq!(days_from_civil(y, m, d), z);
        }
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(days_from_civil(1, 1, 1), -719_162);
        assert_eq!(days_from_civil(9999, 12, 31), 2_932_896);
    }

    #[test]
    fn format_is_canonical_and_lossless() {
        assert_eq!(format_ns(0), "1970-01-01T00:00:00+00:00");
        assert_eq!(format_ns(-1), "1969-12-31T23:59:59.999999999+00:00");
        assert_eq!(
            format_ns(946_684_800 * S + 120_000_000),
            "2000-01-01T00:00:00.12+00:00"
        );
        assert_eq!(format_ns(i64::MAX), "2262-04-11T23:47:16.854775807+00:00");
        assert_eq!(format_ns(i64::MIN), "1677-09-21T00:12:43.145224192+00:00");
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..20_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let t = x as i64;
            // Vary the number of fraction digits too.
            for t in [t, t / 1000 * 1000, t / S * S] {
                assert_eq!(p(&format_ns(t)), t, "{}", format_ns(t));
            }
        }
    }
}
