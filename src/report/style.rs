//! Colour for the words a reader scans a table for: verdicts and statuses. The table writers
//! always mark them with ANSI styles (anstyle); the stream they are written to
//! ([`anstream::AutoStream`], set up in `main.rs` from `--color`) keeps or strips the codes:
//! stripped when the output is not a terminal, when `NO_COLOR` is set, or with `--color never`.
//! JSON, CSV and HTML never carry them.

use anstyle::{AnsiColor, Style};

/// How a word reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tone {
    /// All is well: pass, consistent, ok.
    Good,
    /// Look again: inconclusive, warning.
    Doubt,
    /// Act: fail, outside, weak.
    Bad,
}

impl Tone {
    /// The tone of a verdict or status word (any case); `None` for words that carry none.
    pub fn of(word: &str) -> Option<Tone> {
        match word.trim().to_ascii_lowercase().as_str() {
            "pass" | "consistent" | "ok" | "within" => Some(Tone::Good),
            "inconclusive" | "warning" => Some(Tone::Doubt),
            "fail" | "outside" | "weak" | "beyond" => Some(Tone::Bad),
            _ => None,
        }
    }

    fn style(self) -> Style {
        let colour = match self {
            Tone::Good => AnsiColor::Green,
            Tone::Doubt => AnsiColor::Yellow,
            Tone::Bad => AnsiColor::Red,
        };
        Style::new().bold().fg_color(Some(colour.into()))
    }
}

/// `text` marked in the tone of `word` (the word itself when `text` is a padded or upper-case
/// form of it); unmarked when the word carries no tone.
pub fn toned(word: &str, text: &str) -> String {
    match Tone::of(word) {
        Some(t) => {
            let s = t.style();
            format!("{s}{text}{s:#}")
        }
        None => text.to_string(),
    }
}

/// A verdict or status word in its tone.
pub fn word(w: &str) -> String {
    toned(w, w)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn verdicts_get_their_tone_and_other_words_stay_plain() {
        assert_eq!(word("PASS"), "\u{1b}[1m\u{1b}[32mPASS\u{1b}[0m");
        assert!(word("inconclusive").contains("\u{1b}[33m"));
        assert!(word("FAIL").contains("\u{1b}[31m"));
        assert_eq!(word("n/a"), "n/a");
        // padding stays outside the codes' width reckoning: pad first, then tone
        assert!(toned("fail", "fail   ").ends_with("fail   \u{1b}[0m"));
    }
}
