//! Standard error as a terminal can show it safely: control characters carried by file names or
//! typed text (escape sequences that recolour or retitle a terminal, NUL) are written as visible
//! escapes (`\x1b`, `\x00`, `\u{9b}`); new lines and tabs stay as they are.

use std::io::{self, Write};

/// A writer that escapes control characters before they reach `W`.
pub struct Escaped<W: Write>(pub W);

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
        self.0.write_all(&escape_controls(buf))?;
        Ok(buf.len())
    }

    fn flush(&mut self) -> io::Result<()> {
        self.0.flush()
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
}
