//! Opening a text export whatever its Unicode encoding form: UTF-8 as is, UTF-16 (which Windows
//! tools write as "Unicode text", marked by a byte-order mark) decoded to UTF-8 while streaming;
//! and reading a field that is not UTF-8 as Windows-1252, the single-byte code page of Western
//! European Windows installations and of their spreadsheet and historian-client CSV exports
//! (`°C` in a unit header, `Störung` as a quality marker).

use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

/// Opens `path` for reading as UTF-8: a UTF-16 byte-order mark (`FF FE` little-endian, `FE FF`
/// big-endian) selects decoding; anything else is passed through (a UTF-8 byte-order mark
/// included, which the header reader strips).
pub fn open_text(path: &Path) -> io::Result<Box<dyn Read>> {
    let mut file = File::open(path)?;
    let mut head = [0u8; 2];
    let mut got = 0;
    while got < head.len() {
        match file.read(&mut head[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(match head[..got] {
        [0xFF, 0xFE] => Box::new(Utf16Reader::new(file, true)),
        [0xFE, 0xFF] => Box::new(Utf16Reader::new(file, false)),
        _ => Box::new(io::Cursor::new(head).take(got as u64).chain(file)),
    })
}

/// Characters of bytes 0x80–0x9F in Windows-1252, as the WHATWG Encoding Standard's
/// `index-windows-1252` maps them (the five bytes the code page leaves unassigned map to the C1
/// control of the same number). Bytes below 0x80 are ASCII and 0xA0–0xFF are U+00A0–U+00FF.
const WINDOWS_1252_HIGH: [char; 32] = [
    '\u{20AC}', '\u{0081}', '\u{201A}', '\u{0192}', '\u{201E}', '\u{2026}', '\u{2020}', '\u{2021}',
    '\u{02C6}', '\u{2030}', '\u{0160}', '\u{2039}', '\u{0152}', '\u{008D}', '\u{017D}', '\u{008F}',
    '\u{0090}', '\u{2018}', '\u{2019}', '\u{201C}', '\u{201D}', '\u{2022}', '\u{2013}', '\u{2014}',
    '\u{02DC}', '\u{2122}', '\u{0161}', '\u{203A}', '\u{0153}', '\u{009D}', '\u{017E}', '\u{0178}',
];

/// Decodes `bytes` as Windows-1252: every byte is one character, so nothing is lost or refused.
/// Used for fields that are not UTF-8 (see the module note).
pub fn windows_1252(bytes: &[u8]) -> String {
    bytes
        .iter()
        .map(|&b| match b {
            0x80..=0x9F => WINDOWS_1252_HIGH[usize::from(b - 0x80)],
            _ => char::from(b),
        })
        .collect()
}

/// Decodes UTF-16 code units from `inner` into UTF-8. Unpaired surrogates and a trailing odd
/// byte become U+FFFD, which the CSV reader then sees as ordinary text.
pub struct Utf16Reader<R> {
    inner: R,
    little_endian: bool,
    /// Raw bytes read but not yet decoded: at most an odd byte and a high surrogate.
    carry: Vec<u8>,
    /// Decoded UTF-8 not yet handed out, from `at` on.
    out: Vec<u8>,
    at: usize,
    done: bool,
}

impl<R: Read> Utf16Reader<R> {
    /// Decodes `inner` (positioned after the byte-order mark).
    pub fn new(inner: R, little_endian: bool) -> Self {
        Utf16Reader {
            inner,
            little_endian,
            carry: Vec::new(),
            out: Vec::new(),
            at: 0,
            done: false,
        }
    }

    /// Decodes the next chunk into `out`; false at the end of the input.
    fn refill(&mut self) -> io::Result<bool> {
        self.out.clear();
        self.at = 0;
        while self.out.is_empty() {
            if self.done {
                return Ok(false);
            }
            let mut raw = std::mem::take(&mut self.carry);
            let start = raw.len();
            raw.resize(start + (1 << 15), 0);
            let n = loop {
                match self.inner.read(&mut raw[start..]) {
                    Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                    other => break other?,
                }
            };
            raw.truncate(start + n);
            self.done = n == 0;
            let units: Vec<u16> = raw
                .chunks_exact(2)
                .map(|b| {
                    let pair = [b[0], b[1]];
                    if self.little_endian {
                        u16::from_le_bytes(pair)
                    } else {
                        u16::from_be_bytes(pair)
                    }
                })
                .collect();
            // Keep an odd byte, and a high surrogate whose partner may come with the next read.
            let mut keep = raw.len() % 2;
            let mut units = &units[..];
            if !self.done {
                if let Some((&last, rest)) = units.split_last() {
                    if (0xD800..0xDC00).contains(&last) {
                        units = rest;
                        keep += 2;
                    }
                }
            }
            self.carry = raw[raw.len() - keep..].to_vec();
            let mut buf = [0u8; 4];
            for c in char::decode_utf16(units.iter().copied()) {
                let c = c.unwrap_or(char::REPLACEMENT_CHARACTER);
                self.out
                    .extend_from_slice(c.encode_utf8(&mut buf).as_bytes());
            }
            if self.done && !self.carry.is_empty() {
                // An odd byte at the very end: not a whole code unit.
                self.carry.clear();
                self.out.extend_from_slice(
                    char::REPLACEMENT_CHARACTER.encode_utf8(&mut buf).as_bytes(),
                );
            }
        }
        Ok(true)
    }
}

impl<R: Read> Read for Utf16Reader<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.at == self.out.len() && !self.refill()? {
            return Ok(0);
        }
        let n = buf.len().min(self.out.len() - self.at);
        buf[..n].copy_from_slice(&self.out[self.at..self.at + n]);
        self.at += n;
        Ok(n)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hands out one byte per read, so every code unit and surrogate pair straddles reads.
    struct Trickle<'a>(&'a [u8]);
    impl Read for Trickle<'_> {
        fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
            match (self.0.split_first(), buf.first_mut()) {
                (Some((&b, rest)), Some(slot)) => {
                    *slot = b;
                    self.0 = rest;
                    Ok(1)
                }
                _ => Ok(0),
            }
        }
    }

    fn decode(bytes: &[u8], little_endian: bool) -> String {
        let mut s = String::new();
        Utf16Reader::new(Trickle(bytes), little_endian)
            .read_to_string(&mut s)
            .expect("decodes");
        s
    }

    // The reference encoder is the standard library's `str::encode_utf16`.
    const TEXT: &str = "time;T \u{b0}C;\u{1d465}\n2026-03-02 00:00:00;1,5;x\n";

    #[test]
    fn utf16_in_either_byte_order_decodes_to_the_same_text() {
        let le: Vec<u8> = TEXT.encode_utf16().flat_map(u16::to_le_bytes).collect();
        let be: Vec<u8> = TEXT.encode_utf16().flat_map(u16::to_be_bytes).collect();
        assert_eq!(decode(&le, true), TEXT);
        assert_eq!(decode(&be, false), TEXT);
    }

    #[test]
    fn broken_units_become_replacement_characters() {
        // A lone high surrogate, then "a", then one stray byte.
        let bytes = [0x00, 0xD8, b'a', 0x00, 0x41];
        assert_eq!(decode(&bytes, true), "\u{fffd}a\u{fffd}");
    }

    #[test]
    fn the_byte_order_mark_selects_the_decoding() {
        let dir = tempfile::tempdir().expect("tempdir");
        let cases: [(&str, Vec<u8>); 4] = [
            (
                "le.csv",
                [0xFF, 0xFE]
                    .into_iter()
                    .chain(TEXT.encode_utf16().flat_map(u16::to_le_bytes))
                    .collect(),
            ),
            (
                "be.csv",
                [0xFE, 0xFF]
                    .into_iter()
                    .chain(TEXT.encode_utf16().flat_map(u16::to_be_bytes))
                    .collect(),
            ),
            ("utf8.csv", TEXT.as_bytes().to_vec()),
            ("one.csv", b"x".to_vec()),
        ];
        for (name, bytes) in cases {
            let path = dir.path().join(name);
            std::fs::write(&path, &bytes).expect("write");
            let mut s = String::new();
            open_text(&path)
                .expect("opens")
                .read_to_string(&mut s)
                .expect("reads");
            let expected = if name == "one.csv" { "x" } else { TEXT };
            assert_eq!(s, expected, "{name}");
        }
    }

    /// Every byte against encoding_rs 0.8 (the WHATWG Encoding Standard's decoder, as browsers
    /// use it): `windows-1252` there is the same mapping as `index-windows-1252`.
    #[test]
    fn windows_1252_matches_the_whatwg_decoder() {
        let all: Vec<u8> = (0..=255).collect();
        let (reference, had_errors) = encoding_rs::WINDOWS_1252.decode_without_bom_handling(&all);
        assert!(!had_errors);
        assert_eq!(windows_1252(&all), reference);
        assert_eq!(windows_1252(b"\xb0C \x80"), "\u{b0}C \u{20ac}");
    }
}
