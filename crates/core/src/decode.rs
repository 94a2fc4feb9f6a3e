//! Bytes to text: the one decoding step every file goes through.
//!
//! Files reach Turnover from spreadsheets and instruments on every system.
//! [`decode_text`] recognises UTF-8 (with or without a byte-order mark),
//! UTF-16 little- and big-endian when they start with a byte-order mark, and
//! falls back to Windows-1252 when the bytes are not valid UTF-8. Line
//! endings become `\n` whether they were `\r\n` or a lone `\r` (old Mac
//! style), so line numbers count as a text editor counts them. Whatever was
//! not read exactly as it stood is said in [`DecodedText::note`].

use serde::Serialize;

/// The encoding a text was read in.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TextEncoding {
    /// UTF-8, with or without a byte-order mark.
    Utf8,
    /// UTF-16, little-endian, announced by the mark `FF FE`.
    Utf16Le,
    /// UTF-16, big-endian, announced by the mark `FE FF`.
    Utf16Be,
    /// Windows-1252 (Western European), read when the bytes are not UTF-8.
    Windows1252,
}

/// A decoded text and how it was read.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DecodedText {
    /// The text, without a byte-order mark, with `\n` line endings.
    pub text: String,
    /// The encoding it was read in.
    pub encoding: TextEncoding,
    /// A sentence for the person when the bytes were not plain UTF-8 (the
    /// encoding used, characters that could not be decoded), else `None`.
    pub note: Option<String>,
}

/// Windows-1252's characters for the bytes 0x80 to 0x9F; `None` for the five
/// bytes the code page leaves undefined. The other bytes are Latin-1, the
/// same number as the Unicode code point. (Code page table as published by
/// the Unicode Consortium, `MAPPINGS/VENDORS/MICSFT/WINDOWS/CP1252.TXT`.)
const CP1252_HIGH: [Option<char>; 32] = [
    Some('€'), None, Some('‚'), Some('ƒ'), Some('„'), Some('…'), Some('†'), Some('‡'),
    Some('ˆ'), Some('‰'), Some('Š'), Some('‹'), Some('Œ'), None, Some('Ž'), None,
    None, Some('‘'), Some('’'), Some('“'), Some('”'), Some('•'), Some('–'), Some('—'),
    Some('˜'), Some('™'), Some('š'), Some('›'), Some('œ'), None, Some('ž'), Some('Ÿ'),
];

/// Decodes a file's bytes (see the module documentation).
pub fn decode_text(bytes: &[u8]) -> DecodedText {
    let (raw, encoding, note) = if let Some(rest) = bytes.strip_prefix(&[0xEF, 0xBB, 0xBF]) {
        utf8_or_fallback(rest)
    } else if let Some(rest) = bytes.strip_prefix(&[0xFF, 0xFE]) {
        let (text, note) = utf16(rest, u16::from_le_bytes);
        (text, TextEncoding::Utf16Le, note)
    } else if let Some(rest) = bytes.strip_prefix(&[0xFE, 0xFF]) {
        let (text, note) = utf16(rest, u16::from_be_bytes);
        (text, TextEncoding::Utf16Be, note)
    } else {
        utf8_or_fallback(bytes)
    };
    DecodedText { text: normalise_line_endings(raw), encoding, note }
}

fn utf8_or_fallback(bytes: &[u8]) -> (String, TextEncoding, Option<String>) {
    match std::str::from_utf8(bytes) {
        Ok(text) => {
            // Text of ASCII characters saved as UTF-16 without a byte-order
            // mark is valid UTF-8 with a NUL beside every character.
            let note = looks_like_utf16(bytes).then(|| {
                "the file is full of NUL bytes, as UTF-16 is without its byte-order mark; it was read as UTF-8 and its cells will not read. Save it as UTF-8 (or UTF-16 with a byte-order mark)".to_string()
            });
            (text.to_string(), TextEncoding::Utf8, note)
        }
        Err(error) => {
            let offset = error.valid_up_to();
            let line = 1 + bytes[..offset].iter().filter(|&&b| b == b'\n').count();
            let mut undefined = 0usize;
            let text: String = bytes
                .iter()
                .map(|&b| match b {
                    0x80..=0x9F => CP1252_HIGH[usize::from(b - 0x80)].unwrap_or_else(|| {
                        undefined += 1;
                        '\u{FFFD}'
                    }),
                    _ => char::from(b),
                })
                .collect();
            let mut note = format!(
                "the file is not UTF-8 (byte {} on line {line} is not valid there); it was read as Windows-1252. If characters such as µ or ° look wrong, save the file as UTF-8",
                offset + 1
            );
            if undefined > 0 {
                note.push_str(&format!(
                    "; {undefined} byte(s) have no meaning in Windows-1252 and were read as the replacement character �"
                ));
            }
            (text, TextEncoding::Windows1252, Some(note))
        }
    }
}

/// Whether at least a quarter of the bytes are NUL, on one side of the byte
/// pairs: the mark of mostly-ASCII UTF-16 (common practice, no source).
fn looks_like_utf16(bytes: &[u8]) -> bool {
    if bytes.len() < 4 {
        return false;
    }
    let even = bytes.iter().step_by(2).filter(|&&b| b == 0).count();
    let odd = bytes.iter().skip(1).step_by(2).filter(|&&b| b == 0).count();
    even.max(odd) * 4 >= bytes.len()
}

fn utf16(bytes: &[u8], unit: fn([u8; 2]) -> u16) -> (String, Option<String>) {
    let units: Vec<u16> = bytes.chunks_exact(2).map(|pair| unit([pair[0], pair[1]])).collect();
    let mut bad = 0usize;
    let text: String = char::decode_utf16(units)
        .map(|c| {
            c.unwrap_or_else(|_| {
                bad += 1;
                '\u{FFFD}'
            })
        })
        .collect();
    let mut problems = Vec::new();
    if bad > 0 {
        problems.push(format!("{bad} unpaired surrogate(s) were read as the replacement character �"));
    }
    if bytes.len() % 2 == 1 {
        problems.push("the file ends in half a character, which was left out".to_string());
    }
    let note = (!problems.is_empty()).then(|| format!("the UTF-16 file is damaged: {}", problems.join("; ")));
    (text, note)
}

/// `\r\n` and lone `\r` become `\n`; every other character is kept.
fn normalise_line_endings(text: String) -> String {
    if !text.contains('\r') {
        return text;
    }
    let mut out = String::with_capacity(text.len());
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '\r' {
            if chars.peek() == Some(&'\n') {
                chars.next();
            }
            out.push('\n');
        } else {
            out.push(c);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Decodes `bytes` and compares text, encoding and whether a note is
    /// given (and what it starts with).
    fn check(bytes: &[u8], text: &str, encoding: TextEncoding, note_start: Option<&str>) {
        let decoded = decode_text(bytes);
        assert_eq!(decoded.text, text, "text of {bytes:?}");
        assert_eq!(decoded.encoding, encoding, "encoding of {bytes:?}");
        match (note_start, &decoded.note) {
            (None, None) => {}
            (Some(start), Some(note)) => assert!(note.starts_with(start), "note of {bytes:?}: {note}"),
            _ => panic!("note of {bytes:?}: {:?}", decoded.note),
        }
    }

    fn utf16le(text: &str) -> Vec<u8> {
        let mut bytes = vec![0xFF, 0xFE];
        bytes.extend(text.encode_utf16().flat_map(u16::to_le_bytes));
        bytes
    }

    fn utf16be(text: &str) -> Vec<u8> {
        let mut bytes = vec![0xFE, 0xFF];
        bytes.extend(text.encode_utf16().flat_map(u16::to_be_bytes));
        bytes
    }

    /// Byte values from the Unicode Consortium's CP1252 mapping table and
    /// the UTF-8/UTF-16 definitions (RFC 3629, RFC 2781).
    #[test]
    fn encodings_and_line_endings() {
        check(b"S\tv\n1\t2\n", "S\tv\n1\t2\n", TextEncoding::Utf8, None);
        check(b"\xEF\xBB\xBFS (\xC2\xB5M)\r\n1\r\n", "S (µM)\n1\n", TextEncoding::Utf8, None);
        check(b"S\r1\r2\r", "S\n1\n2\n", TextEncoding::Utf8, None);
        check(b"a\r\rb\r\n", "a\n\nb\n", TextEncoding::Utf8, None);
        check(&utf16le("S (µM)\tv\r\n1\t2\r\n"), "S (µM)\tv\n1\t2\n", TextEncoding::Utf16Le, None);
        check(&utf16be("T (°C)\n25\n"), "T (°C)\n25\n", TextEncoding::Utf16Be, None);
        // 0xB5 is µ, 0xB0 is °, 0x80 is € and 0x96 is an en dash in Windows-1252.
        check(b"S (\xB5M)\t\xB0\x80\x96\n", "S (µM)\t°€–\n", TextEncoding::Windows1252, Some("the file is not UTF-8 (byte 4 on line 1"));
        check(b"ok\n\x81", "ok\n\u{FFFD}", TextEncoding::Windows1252, Some("the file is not UTF-8 (byte 4 on line 2"));
        check(&[0xFF, 0xFE, 0x00, 0xD8, 0x41, 0x00], "\u{FFFD}A", TextEncoding::Utf16Le, Some("the UTF-16 file is damaged: 1 unpaired"));
        check(&[0xFE, 0xFF, 0x00, 0x41, 0x00], "A", TextEncoding::Utf16Be, Some("the UTF-16 file is damaged: the file ends in half"));
        check(b"", "", TextEncoding::Utf8, None);
        // UTF-16 without its mark decodes as UTF-8 with NULs, and says so.
        let unmarked: Vec<u8> = "S\tv\n".encode_utf16().flat_map(u16::to_le_bytes).collect();
        check(&unmarked, "S\0\t\0v\0\n\0", TextEncoding::Utf8, Some("the file is full of NUL bytes"));
    }
}
