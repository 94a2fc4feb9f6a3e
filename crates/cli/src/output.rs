//! Writing to the terminal: one buffered standard output, errors as values.
//!
//! Text meant for a person passes through [`escape_controls`], so a table
//! header or trace name holding terminal escape sequences is shown, not
//! obeyed. JSON is streamed with serde straight into the buffer (no
//! intermediate tree). A write that fails is returned to `main`, which
//! stops quietly on a closed pipe and with a message on any other error.

use serde::Serialize;
use std::borrow::Cow;
use std::io::{self, BufWriter, StdoutLock, Write};

/// Buffered standard output.
pub struct Output {
    out: BufWriter<StdoutLock<'static>>,
}

impl Output {
    /// Locks standard output for the rest of the run.
    pub fn new() -> Output {
        Output { out: BufWriter::with_capacity(64 * 1024, io::stdout().lock()) }
    }

    /// Writes text for a person, with control characters escaped.
    pub fn text(&mut self, text: &str) -> io::Result<()> {
        self.out.write_all(escape_controls(text).as_bytes())
    }

    /// Streams `value` as pretty JSON followed by a newline.
    pub fn json<T: Serialize + ?Sized>(&mut self, value: &T) -> io::Result<()> {
        serde_json::to_writer_pretty(&mut self.out, value).map_err(io::Error::from)?;
        self.out.write_all(b"\n")
    }

    /// Flushes what is buffered.
    pub fn finish(mut self) -> io::Result<()> {
        self.out.flush()
    }
}

/// Writes one line to standard error, control characters escaped. A
/// failure to write a diagnostic is ignored: there is nowhere left to say it.
pub fn warn(line: &str) {
    let _ = writeln!(io::stderr().lock(), "{}", escape_controls(line));
}

/// Replaces control characters other than newline and tab (C0, DEL, C1)
/// and the invisible bidirectional overrides by their `\u{..}` spelling.
pub fn escape_controls(text: &str) -> Cow<'_, str> {
    let unsafe_char = |c: char| {
        (c.is_control() && c != '\n' && c != '\t') || matches!(c, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}')
    };
    if !text.chars().any(unsafe_char) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        if unsafe_char(c) {
            out.extend(c.escape_unicode());
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// A number for a person: `digits` significant figures, exponent form for
/// very large or small magnitudes, and words instead of a non-finite value.
pub fn significant(value: f64, digits: usize) -> String {
    if !value.is_finite() {
        return "not computed".to_string();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..6).contains(&magnitude) {
        return format!("{:.*e}", digits - 1, value);
    }
    let decimals = (digits as i32 - 1 - magnitude).max(0) as usize;
    format!("{value:.decimals$}")
}

/// A number with a fixed count of decimals, or words when it is not finite.
pub fn fixed(value: f64, decimals: usize) -> String {
    if value.is_finite() {
        format!("{value:.decimals$}")
    } else {
        "not computed".to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controls_are_escaped_and_text_kept() {
        let cases = [
            ("A1\tv (µM/min)\n", "A1\tv (µM/min)\n"),
            ("\u{1b}[31mred\u{1b}[0m", "\\u{1b}[31mred\\u{1b}[0m"),
            ("bell\u{7}", "bell\\u{7}"),
            ("c1\u{9b}2J", "c1\\u{9b}2J"),
            ("\u{202E}txt", "\\u{202e}txt"),
        ];
        for (input, expected) in cases {
            assert_eq!(escape_controls(input), expected, "{input:?}");
        }
    }

    #[test]
    fn numbers_for_people() {
        let cases = [
            (f64::NAN, "not computed"),
            (f64::INFINITY, "not computed"),
            (0.0, "0"),
            (1234.5678, "1234.6"),
            (0.000012345, "1.2345e-5"),
            (-2.5, "-2.5000"),
        ];
        for (value, expected) in cases {
            assert_eq!(significant(value, 5), expected, "{value}");
        }
        assert_eq!(fixed(f64::NAN, 3), "not computed");
        assert_eq!(fixed(0.12345, 3), "0.123");
    }
}
