//! Provenance of a report from plain inputs: the SHA-256 fingerprint of the
//! stage file's bytes and the calendar date of a moment given in seconds
//! since the Unix epoch. The caller reads the file and the clock; these
//! functions only compute, so they are the same on every run.

use sha2::{Digest, Sha256};

/// SHA-256 (FIPS 180-4) of `bytes`, as 64 lowercase hex digits.
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|x| format!("{x:02x}"))
        .collect()
}

/// The UTC calendar date (proleptic Gregorian) of `unix_secs` seconds after
/// 1970-01-01T00:00:00Z, as `YYYY-MM-DD`.
pub fn date_utc(unix_secs: u64) -> String {
    let days = (unix_secs / 86_400) as i64;
    // days since 1970-01-01 to a civil date (the proleptic Gregorian
    // algorithm published by H. Hinnant, "chrono-Compatible Low-Level Date Algorithms")
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + if m <= 2 { 1 } else { 0 };
    format!("{y:04}-{m:02}-{d:02}")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The one-block message "abc" and the empty message: the example
    /// digests of FIPS 180-4 (NIST's SHA-256 examples).
    #[test]
    fn sha256_of_the_standard_examples() {
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }

    /// Dates checked against Python's `datetime.datetime.fromtimestamp(s,
    /// datetime.timezone.utc)`: the epoch, the last second of a day, leap
    /// days of a century year divisible by 400 and of an ordinary leap year,
    /// and the day after 28 February in a century year that is not a leap year.
    #[test]
    fn dates_of_known_moments() {
        assert_eq!(date_utc(0), "1970-01-01");
        assert_eq!(date_utc(86_399), "1970-01-01");
        assert_eq!(date_utc(951_782_400), "2000-02-29");
        assert_eq!(date_utc(1_709_164_800), "2024-02-29");
        assert_eq!(date_utc(4_107_542_400), "2100-03-01");
    }
}
