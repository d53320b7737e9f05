//! The 2013 single-file form (`.cff`, IEEE C37.111-2013 / IEC 60255-24:2013): one file of
//! sections, each introduced by a line `--- file type: CFG ---`, `--- file type: INF ---`,
//! `--- file type: HDR ---`, then `--- file type: DAT ASCII ---` or
//! `--- file type: DAT BINARY: <bytes> ---` (from memory of the standard; the data word may
//! also be `BINARY32` or `FLOAT32`, as some recorders write it).
//!
//! The CFG section is parsed as a `.cfg` (its errors name the `.cff` and the `.cff`'s line), the
//! DAT section is read in place as the `.dat` (never copied), the INF and HDR sections are
//! skipped. The CFG section comes first and the DAT section last; INF and HDR, each at most
//! once, may sit between them in either order. A binary DAT section must give its byte count,
//! and a count larger than what follows in the file is refused before anything is read.

use super::cfg::parse_cfg;
use super::dat::DatSource;
use super::{Config, DataFormat};
use crate::capture::LoadError;
use crate::capture::error::LoadErrorKind;
use std::fs::File;
use std::io::{BufRead, BufReader, Read, Seek, SeekFrom};
use std::path::Path;

/// The words a section line begins with (compared without case).
const SECTION: &[u8] = b"--- file type:";

/// Whether the first bytes of a file are a `.cff`'s first section line.
pub(crate) fn looks_like_cff(head: &[u8]) -> bool {
    let head = head.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(head);
    head.len() >= SECTION.len() && head[..SECTION.len()].eq_ignore_ascii_case(SECTION)
}

/// A section line's type: `CFG`, `INF`, `HDR`, or the data with its word and byte count.
#[derive(Debug, PartialEq)]
enum Section {
    Cfg,
    Inf,
    Hdr,
    Dat { word: String, bytes: Option<u64> },
}

impl Section {
    fn name(&self) -> &'static str {
        match self {
            Section::Cfg => "CFG",
            Section::Inf => "INF",
            Section::Hdr => "HDR",
            Section::Dat { .. } => "DAT",
        }
    }
}

/// Reads a section line (`None` when the line is not one); a malformed one is an error message.
fn section(line: &[u8]) -> Option<Result<Section, String>> {
    let line = line
        .strip_prefix(b"\xEF\xBB\xBF")
        .unwrap_or(line)
        .trim_ascii();
    if !looks_like_cff(line) {
        return None;
    }
    let text = String::from_utf8_lossy(&line[SECTION.len()..]).to_string();
    let Some(inner) = text.trim_end().strip_suffix("---") else {
        return Some(Err(format!(
            "section line '{}' does not end with '---'",
            String::from_utf8_lossy(line)
        )));
    };
    let (kind, count) = match inner.split_once(':') {
        Some((k, c)) => (k, Some(c.trim())),
        None => (inner, None),
    };
    let words: Vec<String> = kind
        .split_whitespace()
        .map(|w| w.to_ascii_uppercase())
        .collect();
    let words: Vec<&str> = words.iter().map(String::as_str).collect();
    Some(match words.as_slice() {
        ["CFG"] => Ok(Section::Cfg),
        ["INF"] => Ok(Section::Inf),
        ["HDR"] => Ok(Section::Hdr),
        ["DAT", word @ ("ASCII" | "BINARY" | "BINARY32" | "FLOAT32")] => {
            let bytes = match count {
                None | Some("") => Ok(None),
                Some(c) => c.parse::<u64>().map(Some).map_err(|_| {
                    format!("the data section's byte count is '{c}', expected a whole number")
                }),
            };
            bytes.map(|bytes| Section::Dat {
                word: word.to_string(),
                bytes,
            })
        }
        _ => Err(format!(
            "section type '{}': expected CFG, INF, HDR, DAT ASCII or DAT BINARY",
            kind.trim()
        )),
    })
}

/// The configuration of a `.cff` and where its samples are.
pub(super) fn split(path: &Path) -> Result<(Config, DatSource), LoadError> {
    let io = |e| LoadError::new(path, None, LoadErrorKind::Io(e));
    let at = |line: u64, m: String| LoadError::new(path, Some(line), LoadErrorKind::BadRecord(m));
    let file = File::open(path).map_err(io)?;
    let size = file.metadata().map_err(io)?.len();
    let mut reader = BufReader::new(file);
    let mut line = Vec::new();
    let mut offset = 0u64;
    let mut number = 0u64;
    let mut seen: Vec<&'static str> = Vec::new();
    let mut current: Option<Section> = None;
    let mut cfg_text = String::new();
    let mut cfg_first = 0u64;
    let (word, bytes, marker) = loop {
        line.clear();
        let got = reader.read_until(b'\n', &mut line).map_err(io)? as u64;
        if got == 0 {
            return Err(LoadError::new(
                path,
                None,
                LoadErrorKind::BadRecord(
                    "no data section: a single-file record needs a DAT section ('--- file type: \
                     DAT ASCII ---' or '--- file type: DAT BINARY: <bytes> ---') after its CFG \
                     section"
                        .into(),
                ),
            ));
        }
        offset += got;
        number += 1;
        match section(&line) {
            Some(Err(m)) => return Err(at(number, m)),
            Some(Ok(s)) => {
                if seen.is_empty() && s != Section::Cfg {
                    return Err(at(
                        number,
                        format!(
                            "the {} section comes before the CFG section: the CFG section must \
                             come first",
                            s.name()
                        ),
                    ));
                }
                if seen.contains(&s.name()) {
                    return Err(at(number, format!("a second {} section", s.name())));
                }
                seen.push(s.name());
                if let Section::Dat { word, bytes } = s {
                    break (word, bytes, number);
                }
                if s == Section::Cfg {
                    cfg_first = number + 1;
                }
                current = Some(s);
            }
            None => match current {
                Some(Section::Cfg) => cfg_text.push_str(&String::from_utf8_lossy(&line)),
                Some(_) => {}
                None if line.trim_ascii().is_empty() => {}
                None => {
                    return Err(at(
                        number,
                        "text before the first section: a single-file record starts with the \
                         line '--- file type: CFG ---'"
                            .into(),
                    ));
                }
            },
        }
    };
    let config = parse_cfg(&cfg_text, path).map_err(|mut e| {
        // lines of the CFG section, counted in the whole file
        e.line = e.line.map(|l| l + cfg_first - 1);
        e
    })?;
    let ascii = word == "ASCII";
    let matches = match config.format {
        DataFormat::Ascii => ascii,
        DataFormat::Binary => word == "BINARY",
        format => word == "BINARY" || word == format.name(),
    };
    if !matches {
        return Err(at(
            marker,
            format!(
                "the data section is {word}, but the CFG section's data file type is {}",
                config.format.name()
            ),
        ));
    }
    let rest = size.saturating_sub(offset);
    let len = if ascii {
        rest
    } else {
        let Some(bytes) = bytes else {
            return Err(at(
                marker,
                format!(
                    "the {word} data section gives no byte count: expected \
                     '--- file type: DAT {word}: <bytes> ---'"
                ),
            ));
        };
        if bytes > rest {
            return Err(at(
                marker,
                format!(
                    "the data section claims {bytes} bytes, but only {rest} follow in the \
                     file: it is cut short or its count is wrong"
                ),
            ));
        }
        // nothing but line ends may follow the data: the DAT section is the last
        let mut tail = reader;
        tail.seek(SeekFrom::Start(offset + bytes)).map_err(io)?;
        let mut buf = [0u8; 4096];
        let mut after = 0u64;
        let mut text = false;
        loop {
            let n = tail.read(&mut buf).map_err(io)?;
            if n == 0 {
                break;
            }
            after += n as u64;
            text |= buf[..n].iter().any(|b| !b.is_ascii_whitespace());
        }
        if text {
            return Err(at(
                marker,
                format!(
                    "{after} bytes follow the {bytes} bytes of the data section: the DAT \
                     section must be the last, and its byte count must be the data's size"
                ),
            ));
        }
        bytes
    };
    Ok((
        config,
        DatSource {
            path: path.to_path_buf(),
            offset,
            len,
            lines_before: marker,
            in_cff: true,
        },
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn section_lines_are_read_without_case_or_extra_spaces() {
        assert_eq!(
            section(b"--- file type: CFG ---\r\n"),
            Some(Ok(Section::Cfg))
        );
        assert_eq!(section(b"--- File Type:  hdr ---"), Some(Ok(Section::Hdr)));
        assert_eq!(
            section(b"--- file type: DAT BINARY: 1200 ---\r\n"),
            Some(Ok(Section::Dat {
                word: "BINARY".into(),
                bytes: Some(1200)
            }))
        );
        assert_eq!(
            section(b"--- file type: DAT ASCII ---"),
            Some(Ok(Section::Dat {
                word: "ASCII".into(),
                bytes: None
            }))
        );
        assert_eq!(section(b"1,IA,A,,A,1,0,0,0,0,1,1,P"), None);
        assert!(matches!(section(b"--- file type: XML ---"), Some(Err(_))));
        assert!(matches!(
            section(b"--- file type: DAT BINARY: lots ---"),
            Some(Err(_))
        ));
        assert!(matches!(section(b"--- file type: CFG"), Some(Err(_))));
    }
}
