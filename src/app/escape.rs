//! Standard error as a terminal can show it safely: control characters carried by file names or
//! typed text (escape sequences that recolour or retitle a terminal, NUL) are written as visible
//! escapes (`\x1b`, `\x00`, `\u{9b}`); new lines and tabs stay as they are.

use std::io::{self, Write};

/// A writer that escapes control characters before they reach `W`. A C1 control is two bytes
/// in UTF-8 (`0xc2` then `0x80`-`0x9f`); a write ending in `0xc2` holds that byte back until the
/// next write (or a flush) shows what follows, so a control split across two writes is escaped
/// too.
pub struct Escaped<W: Write> {
    inner: W,
    /// A `0xc2` that ended the last write.
    held: bool,
}

impl<W: Write> Escaped<W> {
    /// Escapes what is written before it reaches `inner`.
    pub fn new(inner: W) -> Self {
        Escaped { inner, held: false }
    }

    /// Writes the held `0xc2`, if any, as it is (what followed it was not a C1 control's end).
    fn release(&mut self) -> io::Result<()> {
        if std::mem::take(&mut self.held) {
            self.inner.write_all(&[0xc2])?;
        }
        Ok(())
    }
}

/// `bytes` with every control character but `\n` and `\t` escaped.
pub fn escape_controls(bytes: &[u8]) -> Vec<u8> {
    let mut out = Vec::with_capacity(bytes.len());
    let mut k = 0;
    while k < bytes.len() {
        let b = bytes[k];
        match b {
            b'\n' | b'\t' => out.push(b),
            0..=0x1f | 0x7f => out.extend_from_slice(format!("\\x{b:02x}").as_bytes()),
            // C1 controls, U+0080-U+009F, as UTF-8
            0xc2 if bytes.get(k + 1).is_some_and(|c| (0x80..=0x9f).contains(c)) => {
                out.extend_from_slice(format!("\\u{{{:x}}}", bytes[k + 1]).as_bytes());
                k += 1;
            }
            _ => out.push(b),
        }
        k += 1;
    }
    out
}

impl<W: Write> Write for Escaped<W> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        if buf.is_empty() {
            return Ok(0);
        }
        let mut bytes = Vec::with_capacity(buf.len() + 1);
        if std::mem::take(&mut self.held) {
            bytes.push(0xc2);
        }
        bytes.extend_from_slice(buf);
        if bytes.last() == Some(&0xc2) {
            bytes.pop();
            self.held = true;
        }
        self.inner.write_all(&escape_controls(&bytes))?;
        Ok(buf.len())
    }

    fn flush(&mut self) -> io::Result<()> {
        self.release()?;
        self.inner.flush()
    }
}

impl<W: Write> Drop for Escaped<W> {
    fn drop(&mut self) {
        let _ = self.release();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_are_shown_not_obeyed() {
        let text = "error: \u{1b}[31mred\0.csv\u{9b}2J: bad\n\tnext line, Zähler\n";
        let shown = String::from_utf8(escape_controls(text.as_bytes())).unwrap();
        assert_eq!(
            shown,
            "error: \\x1b[31mred\\x00.csv\\u{9b}2J: bad\n\tnext line, Zähler\n"
        );
    }

    /// U+009B (CSI, as UTF-8 `c2 9b`) split between two writes, as a caller writing bytes in
    /// pieces may split it (the case); the C1 range U+0080-U+009F is the Unicode
    /// standard's (from memory).
    #[test]
    fn a_c1_control_split_across_two_writes_is_escaped() {
        let mut out = Vec::new();
        {
            let mut w = Escaped::new(&mut out);
            w.write_all(b"error: x\xc2").unwrap();
            w.write_all(b"\x9b2J.csv: bad\n").unwrap();
        }
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "error: x\\u{9b}2J.csv: bad\n"
        );
        // a held 0xc2 that begins an ordinary character goes out whole with it; at a flush it
        // goes out as it is
        let mut out = Vec::new();
        let mut w = Escaped::new(&mut out);
        w.write_all(b"Z\xc2").unwrap();
        w.write_all(b"\xa0h\xc2").unwrap();
        w.flush().unwrap();
        drop(w);
        assert_eq!(out, b"Z\xc2\xa0h\xc2");
    }
}
