//! Character encodings of source files.
//!
//! In: the bytes of a CSV file and the encoding its source declares. Out: UTF-8 bytes
//! for the CSV reader. UTF-8 files are read as they are (rows with invalid UTF-8 are
//! rejected, as before); files in a single-byte legacy encoding, as older CRMs and
//! spreadsheets in Western Europe write them, are decoded byte by byte:
//! - `latin-1` (ISO/IEC 8859-1): byte b is U+00b;
//! - `windows-1252`: Latin-1 except 0x80–0x9F, which hold `€ ‚ ƒ „ … † ‡ ˆ ‰ Š ‹ Œ Ž ‘ ’ “
//!   ” • – — ˜ ™ š › œ ž Ÿ` (WHATWG Encoding Standard, index windows-1252; the five
//!   bytes it leaves to C1 controls, 0x81 0x8D 0x8F 0x90 0x9D, map to U+0081 ... as
//!   there).

use std::io::{self, Read};

/// The encoding of a source file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Encoding {
    /// UTF-8 (with or without byte-order mark).
    #[default]
    Utf8,
    /// ISO/IEC 8859-1.
    Latin1,
    /// Windows code page 1252 (WHATWG `windows-1252`).
    Windows1252,
}

impl Encoding {
    /// The encoding a spec names (`utf-8`, `latin-1`, `windows-1252` and their usual
    /// other spellings), `None` for anything else.
    pub fn from_name(name: &str) -> Option<Encoding> {
        match name.trim().to_ascii_lowercase().as_str() {
            "utf-8" | "utf8" => Some(Encoding::Utf8),
            "latin-1" | "latin1" | "iso-8859-1" | "iso8859-1" => Some(Encoding::Latin1),
            "windows-1252" | "cp1252" => Some(Encoding::Windows1252),
            _ => None,
        }
    }

    /// The names [`Encoding::from_name`] knows, for error messages.
    pub const NAMES: &'static str = "utf-8, latin-1 (iso-8859-1), windows-1252 (cp1252)";

    /// The character byte `b` stands for (single-byte encodings only).
    fn char_of(self, b: u8) -> char {
        /// 0x80–0x9F in windows-1252 (WHATWG index windows-1252).
        const HIGH: [u16; 32] = [
            0x20AC, 0x0081, 0x201A, 0x0192, 0x201E, 0x2026, 0x2020, 0x2021, 0x02C6, 0x2030, 0x0160,
            0x2039, 0x0152, 0x008D, 0x017D, 0x008F, 0x0090, 0x2018, 0x2019, 0x201C, 0x201D, 0x2022,
            0x2013, 0x2014, 0x02DC, 0x2122, 0x0161, 0x203A, 0x0153, 0x009D, 0x017E, 0x0178,
        ];
        match (self, b) {
            (Encoding::Windows1252, 0x80..=0x9F) => {
                char::from_u32(u32::from(HIGH[usize::from(b - 0x80)])).unwrap_or('\u{FFFD}')
            }
            _ => char::from(b),
        }
    }
}

/// A reader that decodes a single-byte encoding into UTF-8.
pub struct Decode<R> {
    inner: R,
    encoding: Encoding,
    raw: Vec<u8>,
    out: Vec<u8>,
    pos: usize,
}

impl<R: Read> Decode<R> {
    /// Decode `inner`, written in `encoding` (not UTF-8: that needs no decoding).
    pub fn new(inner: R, encoding: Encoding) -> Decode<R> {
        Decode {
            inner,
            encoding,
            raw: vec![0; 64 * 1024],
            out: Vec::with_capacity(128 * 1024),
            pos: 0,
        }
    }
}

impl<R: Read> Read for Decode<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.pos == self.out.len() {
            let n = self.inner.read(&mut self.raw)?;
            if n == 0 {
                return Ok(0);
            }
            self.out.clear();
            self.pos = 0;
            // One byte is one character, so no character spans two reads.
            for &b in &self.raw[..n] {
                if b.is_ascii() {
                    self.out.push(b);
                } else {
                    let mut utf8 = [0u8; 4];
                    let c = self.encoding.char_of(b);
                    self.out
                        .extend_from_slice(c.encode_utf8(&mut utf8).as_bytes());
                }
            }
        }
        let k = buf.len().min(self.out.len() - self.pos);
        buf[..k].copy_from_slice(&self.out[self.pos..self.pos + k]);
        self.pos += k;
        Ok(k)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn decode(bytes: &[u8], encoding: Encoding) -> String {
        let mut s = String::new();
        Decode::new(bytes, encoding).read_to_string(&mut s).unwrap();
        s
    }

    #[test]
    fn check_values() {
        // Python 3.11 `bytes(...).decode("latin-1" / "cp1252")` for these bytes.
        assert_eq!(decode(b"M\xfcller", Encoding::Latin1), "Müller");
        assert_eq!(decode(b"Fran\xe7ois \xc6", Encoding::Latin1), "François Æ");
        assert_eq!(
            decode(b"\x80 \x9f \x8a\x9a", Encoding::Windows1252),
            "€ Ÿ Šš"
        );
        assert_eq!(
            decode(b"\x93x\x94 \x96", Encoding::Windows1252),
            "\u{201c}x\u{201d} –"
        );
        assert_eq!(decode(b"\x80", Encoding::Latin1), "\u{80}");
        // Bytes Python's cp1252 leaves undefined: C1 controls, as in WHATWG's index.
        assert_eq!(
            decode(b"\x81\x8d\x8f\x90\x9d", Encoding::Windows1252),
            "\u{81}\u{8d}\u{8f}\u{90}\u{9d}"
        );
        // Same as Latin-1 from 0xA0 on.
        let high: Vec<u8> = (0xA0..=0xFF).collect();
        assert_eq!(
            decode(&high, Encoding::Windows1252),
            decode(&high, Encoding::Latin1)
        );
    }

    #[test]
    fn small_reads_give_the_same_text() {
        let bytes: Vec<u8> = (0u8..=255).cycle().take(200_000).collect();
        let whole = decode(&bytes, Encoding::Windows1252);
        let mut d = Decode::new(bytes.as_slice(), Encoding::Windows1252);
        let mut out = Vec::new();
        let mut buf = [0u8; 3];
        loop {
            let n = d.read(&mut buf).unwrap();
            if n == 0 {
                break;
            }
            out.extend_from_slice(&buf[..n]);
        }
        assert_eq!(String::from_utf8(out).unwrap(), whole);
        assert_eq!(whole.chars().count(), 200_000);
    }

    #[test]
    fn names() {
        assert_eq!(Encoding::from_name("UTF-8"), Some(Encoding::Utf8));
        assert_eq!(Encoding::from_name("cp1252"), Some(Encoding::Windows1252));
        assert_eq!(Encoding::from_name("ISO-8859-1"), Some(Encoding::Latin1));
        assert_eq!(Encoding::from_name("ebcdic"), None);
    }
}
