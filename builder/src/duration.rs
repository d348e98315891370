//! Durations written with units in the config (`30s`, `1min`, `4h`).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Deserializer};

/// A non-negative span of time, held in whole microseconds (the timestamp resolution).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Span(i64);

/// Microseconds in one second.
pub const MICROS_PER_SECOND: i64 = 1_000_000;

const UNITS: &[(&str, i64)] = &[
    ("ms", 1_000),
    ("s", MICROS_PER_SECOND),
    ("min", 60 * MICROS_PER_SECOND),
    ("h", 3_600 * MICROS_PER_SECOND),
    ("d", 86_400 * MICROS_PER_SECOND),
];

impl Span {
    /// A span of `micros` microseconds.
    pub const fn from_micros(micros: i64) -> Self {
        Span(micros)
    }

    /// A span of whole seconds.
    pub const fn from_secs(secs: i64) -> Self {
        Span(secs * MICROS_PER_SECOND)
    }

    /// The span in microseconds.
    pub const fn micros(self) -> i64 {
        self.0
    }

    /// The span in seconds.
    pub fn as_secs_f64(self) -> f64 {
        self.0 as f64 / MICROS_PER_SECOND as f64
    }

    /// How many whole `step`s fit in this span (0 for a zero step).
    pub fn whole_steps(self, step: Span) -> i64 {
        if step.0 <= 0 {
            0
        } else {
            self.0 / step.0
        }
    }
}

/// Why a duration text was rejected.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum SpanError {
    /// No number in front of the unit.
    #[error("`{0}` is not a duration: write a number and a unit, e.g. `30s`, `1min`, `4h`")]
    Malformed(String),
    /// A unit we do not know.
    #[error("`{text}` has unknown unit `{unit}`: use one of ms, s, min, h, d")]
    UnknownUnit {
        /// The whole text.
        text: String,
        /// The unit part.
        unit: String,
    },
    /// A negative duration.
    #[error("`{0}` is negative: durations must be zero or more")]
    Negative(String),
    /// Larger than the timestamp range can hold.
    #[error("`{0}` is too long")]
    TooLong(String),
}

impl FromStr for Span {
    type Err = SpanError;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let trimmed = text.trim();
        let split = trimmed
            .find(|c: char| c.is_ascii_alphabetic())
            .ok_or_else(|| SpanError::Malformed(text.to_string()))?;
        let (number, unit) = trimmed.split_at(split);
        let number = number.trim();
        let value: f64 = number
            .parse()
            .map_err(|_| SpanError::Malformed(text.to_string()))?;
        if !value.is_finite() {
            return Err(SpanError::Malformed(text.to_string()));
        }
        if value < 0.0 {
            return Err(SpanError::Negative(text.to_string()));
        }
        let unit = unit.trim();
        let scale = UNITS
            .iter()
            .find(|(name, _)| *name == unit)
            .map(|(_, scale)| *scale)
            .ok_or_else(|| SpanError::UnknownUnit {
                text: text.to_string(),
                unit: unit.to_string(),
            })?;
        let micros = (value * scale as f64).round();
        if micros > i64::MAX as f64 / 4.0 {
            return Err(SpanError::TooLong(text.to_string()));
        }
        Ok(Span(micros as i64))
    }
}

impl fmt::Display for Span {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        // Largest unit that divides the span exactly, so `90s` stays `90s` and `2h` stays `2h`.
        for (name, scale) in UNITS.iter().rev() {
            if self.0 != 0 && self.0 % scale == 0 {
                return write!(f, "{}{}", self.0 / scale, name);
            }
        }
        if self.0 == 0 {
            return write!(f, "0s");
        }
        write!(f, "{}s", self.as_secs_f64())
    }
}

impl<'de> Deserialize<'de> for Span {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let text = String::deserialize(deserializer)?;
        text.parse().map_err(serde::de::Error::custom)
    }
}

impl serde::Serialize for Span {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_each_unit() {
        assert_eq!("30s".parse::<Span>(), Ok(Span::from_secs(30)));
        assert_eq!("1min".parse::<Span>(), Ok(Span::from_secs(60)));
        assert_eq!("4h".parse::<Span>(), Ok(Span::from_secs(4 * 3600)));
        assert_eq!("2d".parse::<Span>(), Ok(Span::from_secs(2 * 86_400)));
        assert_eq!("250ms".parse::<Span>(), Ok(Span::from_micros(250_000)));
        assert_eq!("1.5 min".parse::<Span>(), Ok(Span::from_secs(90)));
    }

    #[test]
    fn rejects_missing_or_unknown_units_and_negatives() {
        assert!(matches!("60".parse::<Span>(), Err(SpanError::Malformed(_))));
        assert!(matches!(
            "5 minutes".parse::<Span>(),
            Err(SpanError::UnknownUnit { .. })
        ));
        assert!(matches!("-1s".parse::<Span>(), Err(SpanError::Negative(_))));
        assert!(matches!(
            "min".parse::<Span>(),
            Err(SpanError::Malformed(_))
        ));
    }

    #[test]
    fn displays_in_the_largest_exact_unit() {
        assert_eq!(Span::from_secs(90).to_string(), "90s");
        assert_eq!(Span::from_secs(7200).to_string(), "2h");
        assert_eq!(Span::from_micros(1500).to_string(), "0.0015s");
        assert_eq!(Span::from_secs(0).to_string(), "0s");
    }
}
