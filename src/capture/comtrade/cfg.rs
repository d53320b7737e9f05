//! The `.cfg` text: station, channels and their scaling, rates, date-times and data type
//! (IEEE C37.111, from memory of the standard's clauses), parsed with the line of every field.

use super::{AnalogChannel, Config, DataFormat};
use crate::capture::error::LoadErrorKind;
use crate::capture::{LoadError, RecordTimes};
use std::path::Path;

/// The most channels a record may declare (far above any recorder's count).
const MAX_CHANNELS: usize = 100_000;

/// A line-numbered error in the `.cfg` file.
fn cfg_error(cfg: &Path, line: usize, message: String) -> LoadError {
    LoadError::new(cfg, Some(line as u64), LoadErrorKind::BadRecord(message))
}

/// Whether text looks like a `.cfg`: its second line is `TT,##A,##D`.
pub(crate) fn looks_like_cfg(head: &[u8]) -> bool {
    let text = String::from_utf8_lossy(head);
    let Some(second) = text.lines().nth(1) else {
        return false;
    };
    let f: Vec<&str> = second.split(',').map(str::trim).collect();
    f.len() == 3
        && f[0].parse::<u64>().is_ok()
        && f[1]
            .strip_suffix(['A', 'a'])
            .is_some_and(|n| n.parse::<u64>().is_ok())
        && f[2]
            .strip_suffix(['D', 'd'])
            .is_some_and(|n| n.parse::<u64>().is_ok())
}

fn number(field: Option<&str>, what: &str) -> Result<f64, String> {
    let text = field.map(str::trim).unwrap_or("");
    let x: f64 = text
        .parse()
        .map_err(|_| format!("{what} is '{text}', expected a number"))?;
    if x.is_finite() {
        Ok(x)
    } else {
        Err(format!("{what} is '{text}', not a finite number"))
    }
}

fn count(field: Option<&str>, what: &str, max: u64) -> Result<u64, String> {
    let text = field.map(str::trim).unwrap_or("");
    let n: u64 = text
        .parse()
        .map_err(|_| format!("{what} is '{text}', expected a whole number"))?;
    if n > max {
        return Err(format!("{what} is {n}, more than {max}"));
    }
    Ok(n)
}

/// Parses the text of a `.cfg` file. Errors carry the 1-based line.
pub fn parse_cfg(text: &str, cfg: &Path) -> Result<Config, LoadError> {
    let lines: Vec<&str> = text.lines().collect();
    let mut at = 0usize;
    let mut next = |what: &str| -> Result<(usize, Vec<&str>), LoadError> {
        let line = lines.get(at).ok_or_else(|| {
            cfg_error(
                cfg,
                at + 1,
                format!("the file ends where {what} was expected"),
            )
        })?;
        at += 1;
        Ok((at, line.split(',').collect()))
    };
    let (_, head) = next("the station line")?;
    let station = head.first().unwrap_or(&"").trim().to_string();
    let device = head.get(1).unwrap_or(&"").trim().to_string();
    let revision = match head.get(2).map(|s| s.trim()) {
        None | Some("") => 1991,
        Some(y) => match y.parse::<u16>() {
            Ok(y @ (1991 | 1999 | 2013)) => y,
            _ => {
                return Err(cfg_error(
                    cfg,
                    1,
                    format!("revision year '{y}': expected 1991, 1999 or 2013"),
                ));
            }
        },
    };
    let (ln, counts) = next("the channel counts")?;
    let bad = |m: String| cfg_error(cfg, ln, m);
    let total = count(
        counts.first().copied(),
        "the channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    let n_analog = count(
        counts.get(1).map(|s| s.trim().trim_end_matches(['A', 'a'])),
        "the analog channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    let n_digital = count(
        counts.get(2).map(|s| s.trim().trim_end_matches(['D', 'd'])),
        "the digital channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    if n_analog + n_digital != total {
        return Err(bad(format!(
            "{total} channels but {n_analog} analog and {n_digital} digital"
        )));
    }
    let mut analog = Vec::new();
    for k in 0..n_analog {
        let (ln, f) = next("an analog channel line")?;
        let bad = |m: String| cfg_error(cfg, ln, format!("analog channel {}: {m}", k + 1));
        if f.len() < 10 {
            return Err(bad(format!("{} fields, expected at least 10", f.len())));
        }
        let field = |i: usize| f.get(i).map(|s| s.trim()).unwrap_or("").to_string();
        let (primary, secondary, secondary_values) = if f.len() >= 13 {
            let p = number(f.get(10).copied(), "the primary factor").map_err(bad)?;
            let s = number(f.get(11).copied(), "the secondary factor").map_err(bad)?;
            if !(p > 0.0 && s > 0.0) {
                return Err(bad(format!(
                    "ratio {p}/{s}: both factors must be above zero"
                )));
            }
            let ps = match field(12).to_ascii_uppercase().as_str() {
                "P" => false,
                "S" => true,
                other => return Err(bad(format!("the P/S flag is '{other}', expected P or S"))),
            };
            (p, s, ps)
        } else {
            (1.0, 1.0, false)
        };
        analog.push(AnalogChannel {
            id: field(1),
            ph: field(2),
            ccbm: field(3),
            units: field(4),
            a: number(f.get(5).copied(), "the multiplier a").map_err(bad)?,
            b: number(f.get(6).copied(), "the offset b").map_err(bad)?,
            skew_s: number(f.get(7).copied(), "the skew")
                .or_else(|e| if field(7).is_empty() { Ok(0.0) } else { Err(e) })
                .map_err(bad)?
                * 1e-6,
            primary,
            secondary,
            secondary_values,
        });
    }
    let mut digital = Vec::new();
    for _ in 0..n_digital {
        let (_, f) = next("a digital channel line")?;
        digital.push(f.get(1).map(|s| s.trim()).unwrap_or("").to_string());
    }
    let (ln, f) = next("the line frequency")?;
    let line_frequency_hz =
        number(f.first().copied(), "the line frequency").map_err(|m| cfg_error(cfg, ln, m))?;
    let (ln, f) = next("the number of sample rates")?;
    let nrates = count(f.first().copied(), "the number of sample rates", 1000)
        .map_err(|m| cfg_error(cfg, ln, m))?;
    let mut rates = Vec::new();
    let mut samples = 0;
    for _ in 0..nrates.max(1) {
        let (ln, f) = next("a sample rate line")?;
        let bad = |m: String| cfg_error(cfg, ln, m);
        let rate = number(f.first().copied(), "the sample rate").map_err(bad)?;
        let end = count(f.get(1).copied(), "the last sample number", u64::MAX).map_err(bad)?;
        if nrates > 0 {
            if !(rate > 0.0) {
                return Err(bad(format!("sample rate {rate} Hz: it must be above zero")));
            }
            if end <= samples {
                return Err(bad(format!(
                    "the last sample number {end} does not follow the previous rate's {samples}"
                )));
            }
            rates.push((rate, end));
        }
        samples = end;
    }
    let (_, f) = next("the start time")?;
    let start = f.join(",").trim().to_string();
    let (_, f) = next("the trigger time")?;
    let trigger = f.join(",").trim().to_string();
    let (ln, f) = next("the data file type")?;
    let format = match f.first().map(|s| s.trim().to_ascii_uppercase()).as_deref() {
        Some("ASCII") => DataFormat::Ascii,
        Some("BINARY") => DataFormat::Binary,
        Some("BINARY32") => DataFormat::Binary32,
        Some("FLOAT32") => DataFormat::Float32,
        other => {
            return Err(cfg_error(
                cfg,
                ln,
                format!(
                    "data file type '{}': expected ASCII, BINARY, BINARY32 or FLOAT32",
                    other.unwrap_or("")
                ),
            ));
        }
    };
    let timemult = match lines.get(at) {
        Some(line) if revision >= 1999 && !line.trim().is_empty() => {
            let t = number(
                Some(line.split(',').next().unwrap_or("")),
                "the time multiplier",
            )
            .map_err(|m| cfg_error(cfg, at + 1, m))?;
            if !(t > 0.0) {
                return Err(cfg_error(
                    cfg,
                    at + 1,
                    format!("time multiplier {t}: it must be above zero"),
                ));
            }
            t
        }
        _ => 1.0,
    };
    Ok(Config {
        station,
        device,
        revision,
        analog,
        digital,
        line_frequency_hz,
        rates,
        samples,
        start,
        trigger,
        format,
        timemult,
    })
}

/// A `.cfg` date-time, `dd/mm/yyyy,hh:mm:ss.ssssss` (1999 and 2013; the 1991 revision writes
/// `mm/dd/yy`), as days since 1970 and nanoseconds into the day (read as whole numbers, so two
/// date-times subtract exactly). `None` when it is not one.
fn date_time(text: &str, revision: u16) -> Option<(i64, i64)> {
    let (date, time) = text.split_once(',')?;
    let d: Vec<&str> = date.trim().split('/').collect();
    let t: Vec<&str> = time.trim().split(':').collect();
    if d.len() != 3 || t.len() != 3 {
        return None;
    }
    let whole = |s: &str| -> Option<i64> {
        (!s.is_empty() && s.len() <= 9 && s.bytes().all(|b| b.is_ascii_digit()))
            .then(|| s.parse().ok())
            .flatten()
    };
    let (day, month, year) = if revision == 1991 {
        (whole(d[1])?, whole(d[0])?, whole(d[2])?)
    } else {
        (whole(d[0])?, whole(d[1])?, whole(d[2])?)
    };
    // a two-digit year (1991): 1970-2069, the same for both date-times of a record
    let year = if d[2].len() <= 2 {
        if year >= 70 { 1900 + year } else { 2000 + year }
    } else {
        year
    };
    if !(1..=12).contains(&month)
        || !(1..=crate::capture::csv::datetime::days_in_month(year, month)).contains(&day)
    {
        return None;
    }
    let (h, m) = (whole(t[0])?, whole(t[1])?);
    let (sec, frac) = t[2].trim().split_once('.').unwrap_or((t[2].trim(), ""));
    let sec = whole(sec)?;
    let ns = match frac {
        "" => 0,
        f => whole(f)? * 10i64.pow(9 - f.len() as u32),
    };
    if h > 23 || m > 59 || sec > 60 {
        return None;
    }
    let days = crate::capture::csv::datetime::days_from_civil(year, month, day);
    Some((days, (h * 3600 + m * 60 + sec) * 1_000_000_000 + ns))
}

/// The start and trigger times of a record, and the trigger's offset from the first sample.
pub fn record_times(cfg: &Config) -> RecordTimes {
    let offset = match (
        date_time(&cfg.start, cfg.revision),
        date_time(&cfg.trigger, cfg.revision),
    ) {
        (Some((d0, n0)), Some((d1, n1))) => {
            Some(((d1 - d0) as f64 * 86_400e9 + (n1 - n0) as f64) / 1e9)
        }
        _ => None,
    };
    let stated = |s: &str| (!s.trim().is_empty()).then(|| s.trim().to_string());
    RecordTimes {
        start: stated(&cfg.start),
        trigger: stated(&cfg.trigger),
        trigger_offset_s: offset,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const CFG: &str = "Quarry Road substation,feeder relay 7,1999
2,2A,0D
1,IA,A,Feeder 3,A,0.0125,0,0,-32767,32767,400,5,S
2,VA,A,Feeder 3,kV,0.001,0,0,-32767,32767,11000,110,P
50
1
1000,2000
01/03/2026,10:15:00.000000
01/03/2026,10:15:00.500000
BINARY
1
";

    #[test]
    fn scaling_follows_the_standard_from_raw_to_primary() {
        // IEEE C37.111 value = a·x + b, times primary/secondary for a channel flagged S
        // [standard, from memory]; references §10 [computed]: raw 12 345, a = 0.0125, CT 400/5,
        // secondary values -> 12 345 × 0.0125 × 80 = 12 345 A primary
        let cfg = parse_cfg(CFG, Path::new("relay.cfg")).unwrap();
        let ia = &cfg.analog[0];
        assert_eq!(ia.value(12_345.0, false), 12_345.0);
        assert_eq!(ia.value(12_345.0, true), 12_345.0 * 0.0125);
        // a channel already in primary values gives secondary by the inverse ratio
        let va = &cfg.analog[1];
        assert!((va.value(6_350.0, false) - 6.35).abs() < 1e-12);
        assert!((va.value(6_350.0, true) - 6.35 * 110.0 / 11_000.0).abs() < 1e-12);
        assert_eq!(cfg.samples, 2000);
        assert_eq!(cfg.rates, vec![(1000.0, 2000)]);
        assert_eq!(cfg.format, DataFormat::Binary);
        assert_eq!(cfg.revision, 1999);
    }

    #[test]
    fn the_trigger_is_placed_from_the_two_date_times() {
        let cfg = parse_cfg(CFG, Path::new("relay.cfg")).unwrap();
        let t = record_times(&cfg);
        assert_eq!(t.start.as_deref(), Some("01/03/2026,10:15:00.000000"));
        assert_eq!(t.trigger.as_deref(), Some("01/03/2026,10:15:00.500000"));
        assert_eq!(t.trigger_offset_s, Some(0.5));
        // across midnight at the end of February in a leap year (29/02/2028 exists)
        let over = CFG
            .replace("01/03/2026,10:15:00.000000", "29/02/2028,23:59:59.900000")
            .replace("01/03/2026,10:15:00.500000", "01/03/2028,00:00:00.150000");
        let t = record_times(&parse_cfg(&over, Path::new("r.cfg")).unwrap());
        assert_eq!(t.trigger_offset_s, Some(0.25));
        // the 1991 revision writes the month first and a two-digit year
        let old = CFG
            .replace(",1999\n", "\n")
            .replace("01/03/2026,10:15:00.000000", "12/31/99,23:59:59.000000")
            .replace("01/03/2026,10:15:00.500000", "01/01/00,00:00:01.000000");
        let cfg = parse_cfg(&old, Path::new("r.cfg")).unwrap();
        assert_eq!(cfg.revision, 1991);
        assert_eq!(record_times(&cfg).trigger_offset_s, Some(2.0));
        // a date that does not exist is no date: the offset is unknown, the text kept
        let bad = CFG.replace("01/03/2026,10:15:00.500000", "31/02/2026,10:15:00.5");
        let t = record_times(&parse_cfg(&bad, Path::new("r.cfg")).unwrap());
        assert_eq!(t.trigger_offset_s, None);
        assert_eq!(t.trigger.as_deref(), Some("31/02/2026,10:15:00.5"));
    }

    #[test]
    fn the_configuration_is_recognised_by_its_second_line() {
        assert!(looks_like_cfg(CFG.as_bytes()));
        assert!(!looks_like_cfg(b"time,v,i\n0,1,2\n"));
        assert!(!looks_like_cfg(b"one line only"));
    }

    #[test]
    fn malformed_lines_are_named_by_number() {
        let at = |text: &str| parse_cfg(text, Path::new("r.cfg")).unwrap_err().to_string();
        let e = at(&CFG.replace("0.0125", "x"));
        assert_eq!(
            e,
            "r.cfg: line 3: analog channel 1: the multiplier a is 'x', expected a number"
        );
        let e = at(&CFG.replace("2,2A,0D", "3,2A,0D"));
        assert!(
            e.starts_with("r.cfg: line 2: 3 channels but 2 analog"),
            "{e}"
        );
        let e = at(&CFG.replace("BINARY", "PACKED"));
        assert!(
            e.starts_with("r.cfg: line 10: data file type 'PACKED'"),
            "{e}"
        );
        let e = at(&CFG.replace(",S\n", ",Q\n"));
        assert!(e.contains("line 3") && e.contains("P/S flag is 'Q'"), "{e}");
        let e = at("only a station line\n");
        assert!(
            e.starts_with("r.cfg: line 2: the file ends where the channel counts"),
            "{e}"
        );
        let e = at(&CFG.replace("2,2A,0D", "4000000000,4000000000A,0D"));
        assert!(e.contains("line 2") && e.contains("more than"), "{e}");
    }
}
