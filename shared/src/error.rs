//! Why a model file was rejected.

use core::fmt;

/// A model file that cannot be used. Every variant has a fixed code (see [`DecodeError::code`]),
/// shared with the C interface.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum DecodeError {
    /// Fewer bytes than a header and trailer.
    Truncated,
    /// Does not start with `RGMX`.
    BadMagic,
    /// A format version this decoder does not read.
    UnsupportedVersion(u16),
    /// The length in the header differs from the bytes given.
    LengthMismatch,
    /// The CRC-32 trailer does not match.
    BadCrc,
    /// The model id does not match the body.
    BadModelId,
    /// A count is zero where it must not be, or above its limit.
    LimitExceeded,
    /// A field holds a value the format does not allow (unknown code, NaN, wrong order …).
    InvalidField,
    /// Bytes left over after the last section, or a section running past the end.
    BadLayout,
    /// A string that is not UTF-8.
    BadString,
}

impl DecodeError {
    /// Fixed integer code (also the C status code, negated).
    pub const fn code(self) -> i32 {
        match self {
            DecodeError::Truncated => 1,
            DecodeError::BadMagic => 2,
            DecodeError::UnsupportedVersion(_) => 3,
            DecodeError::LengthMismatch => 4,
            DecodeError::BadCrc => 5,
            DecodeError::BadModelId => 6,
            DecodeError::LimitExceeded => 7,
            DecodeError::InvalidField => 8,
            DecodeError::BadLayout => 9,
            DecodeError::BadString => 10,
        }
    }
}

impl fmt::Display for DecodeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DecodeError::Truncated => write!(f, "model file is truncated"),
            DecodeError::BadMagic => write!(f, "not a regimix model file (bad magic)"),
            DecodeError::UnsupportedVersion(v) => {
                write!(f, "model format version {v} is not supported")
            }
            DecodeError::LengthMismatch => write!(f, "model file length does not match its header"),
            DecodeError::BadCrc => write!(f, "model file is corrupted (CRC-32 mismatch)"),
            DecodeError::BadModelId => write!(f, "model id does not match the model body"),
            DecodeError::LimitExceeded => write!(f, "model exceeds a size limit"),
            DecodeError::InvalidField => write!(f, "model holds an invalid value"),
            DecodeError::BadLayout => write!(f, "model sections do not fit the file"),
            DecodeError::BadString => write!(f, "model holds a string that is not UTF-8"),
        }
    }
}

impl core::error::Error for DecodeError {}
