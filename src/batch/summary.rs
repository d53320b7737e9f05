//! The batch summary: one row per capture, as CSV with a header or as JSON Lines, written and
//! flushed row by row so that an interrupted run leaves a valid file; and reading an earlier
//! summary back for `--resume`.

use serde_json::{Map, Value};
use std::collections::HashMap;
use std::io::{self, BufRead};
use std::path::Path;

/// Summary file formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SummaryFormat {
    /// CSV with a header.
    Csv,
    /// JSON Lines.
    Json,
}

/// How one capture ended: the status words the HTML report shows too.
pub use crate::report::html::Status;

/// One row of the summary.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    /// The capture.
    pub file: String,
    /// ok / warning / error.
    pub status: Status,
    /// The error, or the capture's warnings (not its findings or notes) joined with "; ".
    pub message: String,
    /// Hash of the file's bytes (hex), empty when unreadable.
    pub content_hash: String,
    /// Hash of the settings used (hex).
    pub settings_hash: String,
    /// The settings used, as compact JSON.
    pub settings: String,
    /// The analysis and verdicts as a JSON object (the `analyze` keys, `expected`, `meter`).
    pub result: Option<Value>,
    /// Some verdict was `outside` or `fail`.
    pub verdict_failed: bool,
    /// The file is not a capture at all (text with no table of numbers, like notes): a batch
    /// skips it with a note instead of writing the row.
    pub not_a_capture: bool,
}

/// The columns every CSV summary starts with.
pub const LEAD_COLUMNS: [&str; 6] = [
    "file",
    "status",
    "message",
    "content_hash",
    "settings_hash",
    "settings",
];

/// Columns of the verdicts, after the analysis keys.
pub const VERDICT_COLUMNS: [&str; 18] = [
    "expected.verdict",
    "expected.reason",
    "expected.nominal_phase_deg",
    "expected.band_deg",
    "expected.margin_deg",
    "meter.verdict",
    "meter.reason",
    "meter.failed_checks",
    "meter.wiring_hints",
    "bank.verdict",
    "bank.reason",
    "bank.before_warnings",
    "bank.before",
    "bank.delivered_kvar",
    "bank.delivered_uncertainty_kvar",
    "bank.expected_kvar",
    "bank.ratio",
    "bank.failed_steps",
];

/// 64-bit FNV-1a over 8-byte little-endian words, then the last 0-7 bytes one by one, then the
/// length: a stable content fingerprint for `--resume` (not a cryptographic hash). Fed in pieces
/// of any size it gives the same value as [`fingerprint`] of the whole.
#[derive(Debug, Clone)]
pub struct Fingerprint {
    h: u64,
    carry: Vec<u8>,
    len: u64,
}

const FNV_PRIME: u64 = 0x0000_0100_0000_01b3;

impl Default for Fingerprint {
    fn default() -> Self {
        Fingerprint {
            h: 0xcbf2_9ce4_8422_2325,
            carry: Vec::with_capacity(8),
            len: 0,
        }
    }
}

impl Fingerprint {
    /// Adds bytes.
    pub fn update(&mut self, mut bytes: &[u8]) {
        self.len += bytes.len() as u64;
        while !self.carry.is_empty() && !bytes.is_empty() {
            self.carry.push(bytes[0]);
            bytes = &bytes[1..];
            if self.carry.len() == 8 {
                let mut a = [0u8; 8];
                a.copy_from_slice(&self.carry);
                self.h = (self.h ^ u64::from_le_bytes(a)).wrapping_mul(FNV_PRIME);
                self.carry.clear();
            }
        }
        let words = bytes.chunks_exact(8);
        let tail = words.remainder();
        for w in words {
            let mut a = [0u8; 8];
            a.copy_from_slice(w);
            self.h = (self.h ^ u64::from_le_bytes(a)).wrapping_mul(FNV_PRIME);
        }
        self.carry.extend_from_slice(tail);
    }

    /// The fingerprint as 16 hex digits.
    pub fn finish(&self) -> String {
        let mut h = self.h;
        for &b in &self.carry {
            h = (h ^ b as u64).wrapping_mul(FNV_PRIME);
        }
        h = (h ^ self.len).wrapping_mul(FNV_PRIME);
        format!("{h:016x}")
    }
}

/// A path as the summary's `file` cell gives it: as it reads where it is valid UTF-8, an invalid
/// byte as `\xNN` and (outside Windows, where it is the separator) a backslash as `\\`, so two
/// names that differ only in bytes that are not text stay two names (shown alike, one of them was
/// analysed again on every `--resume`).
pub fn path_text(path: &std::path::Path) -> String {
    let mut s = String::new();
    for chunk in path.as_os_str().as_encoded_bytes().utf8_chunks() {
        if cfg!(windows) {
            s.push_str(chunk.valid());
        } else {
            s.push_str(&chunk.valid().replace('\\', "\\\\"));
        }
        for b in chunk.invalid() {
            s.push_str(&format!("\\x{b:02x}"));
        }
    }
    s
}

/// The fingerprint of `bytes` in one go.
pub fn fingerprint(bytes: &[u8]) -> String {
    let mut f = Fingerprint::default();
    f.update(bytes);
    f.finish()
}

impl Row {
    /// The verdicts of the checks that ran, in a few words for a report's summary table:
    /// `model consistent; meter fail (p, q); bank fail (1 step failed)`, with the reason of an
    /// inconclusive one the capture could not support (`bank inconclusive: the captures cannot
    /// support...`); empty when none ran.
    pub fn checks(&self) -> String {
        let Some(r) = &self.result else {
            return String::new();
        };
        let verdict = |k: &str| {
            r.get(k)
                .and_then(|x| x.get("verdict"))
                .and_then(Value::as_str)
        };
        let reason = |k: &str| {
            r.get(k)
                .and_then(|x| x.get("reason"))
                .and_then(Value::as_str)
                .map(|why| format!(": {why}"))
                .unwrap_or_default()
        };
        let mut out = Vec::new();
        if let Some(v) = verdict("expected") {
            out.push(format!("model {v}{}", reason("expected")));
        }
        if let Some(v) = verdict("meter") {
            let failed: Vec<&str> = r["meter"]["failed_checks"]
                .as_array()
                .map(|a| a.iter().filter_map(Value::as_str).collect())
                .unwrap_or_default();
            out.push(if failed.is_empty() {
                format!("meter {v}{}", reason("meter"))
            } else {
                format!("meter {v} ({})", failed.join(", "))
            });
        }
        if let Some(v) = verdict("bank") {
            out.push(match r["bank"]["failed_steps"].as_u64() {
                Some(n) if n > 0 => format!(
                    "bank {v} ({n} step{} failed)",
                    if n == 1 { "" } else { "s" }
                ),
                _ => format!("bank {v}{}", reason("bank")),
            });
        }
        out.join("; ")
    }

    /// The row as one CSV record (no newline handling: the writer adds it) in `columns` order.
    pub fn csv_fields(&self, columns: &[String]) -> Vec<String> {
        let flat: HashMap<String, String> = self
            .result
            .as_ref()
            .map(|v| crate::report::wire::flatten(v).into_iter().collect())
            .unwrap_or_default();
        columns
            .iter()
            .map(|c| match c.as_str() {
                "file" => spreadsheet_safe(&self.file),
                "status" => self.status.as_str().to_string(),
                "message" => spreadsheet_safe(&self.message),
                "content_hash" => self.content_hash.clone(),
                "settings_hash" => self.settings_hash.clone(),
                "settings" => self.settings.clone(),
                other => flat
                    .get(other)
                    .map(|v| spreadsheet_safe(v))
                    .unwrap_or_default(),
            })
            .collect()
    }

    /// The row as one JSON object: the lead keys, then the result's keys.
    pub fn json(&self) -> Value {
        let mut m = Map::new();
        m.insert("schema".into(), crate::report::SCHEMA.into());
        m.insert("file".into(), self.file.clone().into());
        m.insert("status".into(), self.status.as_str().into());
        m.insert("message".into(), self.message.clone().into());
        m.insert("content_hash".into(), self.content_hash.clone().into());
        m.insert("settings_hash".into(), self.settings_hash.clone().into());
        m.insert(
            "settings".into(),
            serde_json::from_str(&self.settings).unwrap_or(Value::Null),
        );
        if let Some(Value::Object(r)) = &self.result {
            for (k, v) in r {
                // the row's own file and status (a failed check makes an analysed row `error`)
                if k != "file" && k != "status" {
                    m.insert(k.clone(), v.clone());
                }
            }
        }
        Value::Object(m)
    }

    /// The whole line as written to the summary (with its newline).
    pub fn line(&self, format: SummaryFormat, columns: &[String]) -> io::Result<String> {
        match format {
            SummaryFormat::Json => Ok(format!("{}\n", self.json())),
            SummaryFormat::Csv => csv_line(&self.csv_fields(columns)),
        }
    }
}

/// A text cell as a spreadsheet will show it and not run it: text starting with `=`, `+`, `-` or
/// `@` (a formula to a spreadsheet: header text like `=HYPERLINK(...)` reaches the summary) gets
/// a leading `'`, as does text starting with `'` (so [`cell_text`] gives back the text exactly).
/// A number, negative or not, stays a number.
pub fn spreadsheet_safe(cell: &str) -> String {
    let risky = cell.starts_with(['=', '+', '-', '@', '\'']);
    if risky && cell.parse::<f64>().is_err() {
        format!("'{cell}")
    } else {
        cell.to_string()
    }
}

/// The text of a cell [`spreadsheet_safe`] wrote.
pub fn cell_text(cell: &str) -> &str {
    if cell.parse::<f64>().is_err() {
        cell.strip_prefix('\'').unwrap_or(cell)
    } else {
        cell
    }
}

/// One CSV record as a line.
pub fn csv_line<S: AsRef<[u8]>>(fields: &[S]) -> io::Result<String> {
    let mut w = ::csv::Writer::from_writer(Vec::new());
    w.write_record(fields).map_err(io::Error::other)?;
    let bytes = w
        .into_inner()
        .map_err(|e| io::Error::other(e.to_string()))?;
    String::from_utf8(bytes).map_err(io::Error::other)
}

/// A row of an earlier summary, kept as written.
#[derive(Debug, Clone, PartialEq)]
pub struct PastRow {
    /// Content fingerprint when it was written.
    pub content_hash: String,
    /// Settings fingerprint when it was written.
    pub settings_hash: String,
    /// Where the line sits in the summary file, in bytes (its newline included); the file is
    /// only ever cut back to a whole line and appended to, so the place holds for the whole run.
    pub span: std::ops::Range<u64>,
    /// Its status word.
    pub status: String,
    /// Some verdict in it was `outside` or `fail`.
    pub verdict_failed: bool,
}

fn failed_verdict(expected: &str, meter: &str, bank: &str) -> bool {
    expected == "outside" || meter == "fail" || bank == "fail"
}

/// Checks that an earlier summary can be resumed in `format` with these CSV `columns`: a file of
/// the other format, or a CSV summary with other columns (another version's), is refused, since
/// resuming would have to start it afresh and lose its rows. A missing or empty file is fine.
pub fn check_resumable(
    path: &Path,
    format: SummaryFormat,
    columns: &[String],
) -> Result<(), String> {
    let mut head = Vec::new();
    match std::fs::File::open(path) {
        Ok(f) => {
            use std::io::Read;
            f.take(64 * 1024)
                .read_to_end(&mut head)
                .map_err(|e| format!("{}: cannot read the summary: {e}", path.display()))?;
        }
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(format!("{}: cannot read the summary: {e}", path.display())),
    }
    let Some(&first) = head.iter().find(|b| !b.is_ascii_whitespace()) else {
        return Ok(());
    };
    let found = if first == b'{' {
        SummaryFormat::Json
    } else {
        SummaryFormat::Csv
    };
    let word = |f: SummaryFormat| match f {
        SummaryFormat::Csv => "csv",
        SummaryFormat::Json => "json",
    };
    if found != format {
        return Err(format!(
            "{}: this summary is in --format {}, not {}: resume with --format {}, or write to \
             another --out",
            path.display(),
            word(found),
            word(format),
            word(found)
        ));
    }
    if format == SummaryFormat::Csv {
        let mut rdr = ::csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(head.as_slice());
        let same = rdr
            .headers()
            .map(|h| h.iter().eq(columns.iter().map(String::as_str)))
            .unwrap_or(false);
        if !same {
            return Err(format!(
                "{}: this summary's columns are not this version's: resume it with the version \
                 that wrote it, or write to another --out",
                path.display()
            ));
        }
    }
    Ok(())
}

/// Reads an earlier summary for `--resume`: rows by file. A file that is missing, empty, of the
/// other format or with other columns gives nothing to reuse. A last line cut short is dropped.
pub fn read_past(
    path: &Path,
    format: SummaryFormat,
    columns: &[String],
) -> HashMap<String, PastRow> {
    let mut out = HashMap::new();
    let Ok(file) = std::fs::File::open(path) else {
        return out;
    };
    match format {
        SummaryFormat::Json => {
            let mut r = io::BufReader::new(file);
            let (mut line, mut at) = (String::new(), 0u64);
            loop {
                line.clear();
                let Ok(read @ 1..) = r.read_line(&mut line) else {
                    break;
                };
                let span = at..at + read as u64;
                at = span.end;
                let Ok(Value::Object(m)) = serde_json::from_str::<Value>(line.trim_end()) else {
                    continue;
                };
                let get = |k: &str| m.get(k).and_then(Value::as_str).unwrap_or("").to_string();
                let verdict = |k: &str| {
                    m.get(k)
                        .and_then(|o| o.get("verdict"))
                        .and_then(Value::as_str)
                        .unwrap_or("")
                        .to_string()
                };
                out.insert(
                    get("file"),
                    PastRow {
                        content_hash: get("content_hash"),
                        settings_hash: get("settings_hash"),
                        span,
                        status: get("status"),
                        verdict_failed: failed_verdict(
                            &verdict("expected"),
                            &verdict("meter"),
                            &verdict("bank"),
                        ),
                    },
                );
            }
        }
        SummaryFormat::Csv => {
            let mut rdr = ::csv::ReaderBuilder::new()
                .has_headers(true)
                .from_reader(io::BufReader::new(file));
            let header_ok = rdr
                .headers()
                .map(|h| h.iter().eq(columns.iter().map(String::as_str)))
                .unwrap_or(false);
            if !header_ok {
                return out;
            }
            let col = |name: &str| columns.iter().position(|c| c == name);
            let (ev, mv, bv) = (
                col("expected.verdict"),
                col("meter.verdict"),
                col("bank.verdict"),
            );
            let mut rec = ::csv::StringRecord::new();
            loop {
                let start = rdr.position().byte();
                let Ok(true) = rdr.read_record(&mut rec) else {
                    break;
                };
                let span = start..rdr.position().byte();
                if rec.len() != columns.len() {
                    continue;
                }
                out.insert(
                    cell_text(&rec[0]).to_string(),
                    PastRow {
                        content_hash: rec[3].to_string(),
                        settings_hash: rec[4].to_string(),
                        span,
                        status: rec[1].to_string(),
                        verdict_failed: failed_verdict(
                            ev.and_then(|k| rec.get(k)).unwrap_or(""),
                            mv.and_then(|k| rec.get(k)).unwrap_or(""),
                            bv.and_then(|k| rec.get(k)).unwrap_or(""),
                        ),
                    },
                );
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Header text reached the summary verbatim: `=HYPERLINK(...)` ran as a formula.
    #[test]
    fn text_cells_are_kept_from_running_as_formulas_and_numbers_stay_numbers() {
        for (cell, safe) in [
            ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"),
            ("+cmd", "'+cmd"),
            ("-x", "'-x"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("'quoted", "''quoted"),
            ("-12.5", "-12.5"),
            ("+3e2", "+3e2"),
            ("ok", "ok"),
            ("", ""),
        ] {
            assert_eq!(spreadsheet_safe(cell), safe);
            assert_eq!(cell_text(&spreadsheet_safe(cell)), cell);
        }
    }

    #[cfg(unix)]
    #[test]
    fn names_that_differ_in_bytes_that_are_not_text_stay_apart() {
        use std::os::unix::ffi::OsStrExt;
        let name = |b: &[u8]| path_text(std::path::Path::new(std::ffi::OsStr::from_bytes(b)));
        assert_eq!(name(b"site/a\xff.csv"), "site/a\\xff.csv");
        assert_ne!(name(b"a\xff.csv"), name(b"a\xfe.csv"));
        // the text of an escape is not the escaped byte
        assert_ne!(name(b"a\\xff.csv"), name(b"a\xff.csv"));
        assert_eq!(name("Zähler 3.csv".as_bytes()), "Zähler 3.csv");
    }

    #[test]
    fn fingerprints_are_stable_and_tell_contents_apart() {
        // fixed value: the fingerprint must never change between versions, or --resume
        // would redo every file (FNV-1a offset basis times the prime: the empty input)
        assert_eq!(
            fingerprint(b""),
            format!("{:016x}", 0xcbf2_9ce4_8422_2325u64.wrapping_mul(FNV_PRIME))
        );
        assert_ne!(fingerprint(b"1,2,3\n"), fingerprint(b"1,2,4\n"));
        assert_ne!(fingerprint(b"abcdefgh"), fingerprint(b"abcdefg"));
        assert_ne!(fingerprint(b"\0"), fingerprint(b""));
        // pieces of any size give the same fingerprint as the whole
        let data: Vec<u8> = (0..1000u32).map(|k| (k * 31 % 251) as u8).collect();
        for cut in [1, 3, 7, 8, 9, 64, 999] {
            let mut f = Fingerprint::default();
            for piece in data.chunks(cut) {
                f.update(piece);
            }
            assert_eq!(f.finish(), fingerprint(&data), "pieces of {cut}");
        }
    }

    #[test]
    fn csv_rows_round_trip_through_a_past_summary() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("s.csv");
        let columns: Vec<String> = LEAD_COLUMNS.iter().map(|s| s.to_string()).collect();
        let row = Row {
            file: "site/a \"quoted\", name.csv".into(),
            status: Status::Error,
            message: "line 3: bad, very bad".into(),
            content_hash: "00ff".into(),
            settings_hash: "aa".into(),
            settings: "{\"v_scale\":100}".into(),
            result: None,
            verdict_failed: false,
            not_a_capture: false,
        };
        let text = format!(
            "{}{}",
            csv_line(&columns).unwrap(),
            row.line(SummaryFormat::Csv, &columns).unwrap()
        );
        std::fs::write(&path, &text).unwrap();
        let past = read_past(&path, SummaryFormat::Csv, &columns);
        let p = &past["site/a \"quoted\", name.csv"];
        let span = p.span.start as usize..p.span.end as usize;
        assert_eq!(text[span], row.line(SummaryFormat::Csv, &columns).unwrap());
        assert_eq!(
            (p.content_hash.as_str(), p.settings_hash.as_str()),
            ("00ff", "aa")
        );
    }
}
