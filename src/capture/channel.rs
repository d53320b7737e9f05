//! What each column of a capture is: its name, 1-based column, unit and role, and which two
//! channels a single-phase analysis takes.
//!
//! A header such as `CH3 (A)`, `Time (ms)`, `V_L1` or `time/s` is read into a [`Channel`]: the
//! unit in brackets (or after a slash) gives the quantity and its scale to volts, amperes or
//! seconds (`mV` is 1e-3 V, `µs` 1e-6 s); the name gives the role where the unit does not, and a
//! phase where it names one (`Va`, `I_L1`, `U2`). A unit always wins over a name: a `(A)` channel
//! is a current whatever it is called.
//!
//! [`pick_channels`] then chooses the voltage and the current for a single-phase analysis, and
//! never silently: an explicit choice is checked against the channel's own unit and name, and a
//! file whose channels cannot be told apart is refused with a list of them and the options to
//! use. The role model (quantity + phase) is the one a three-phase reading extends.

use super::ChannelSel;
use super::error::{Ambiguity, LoadErrorKind, WrongRole};
use crate::warning::{Trace, Warning};
use std::fmt;

/// What a channel measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Role {
    /// The time base of the rows.
    Time,
    /// A voltage.
    Voltage,
    /// A current.
    Current,
    /// Nothing in the file says (an unnamed channel, a trigger, a marker).
    Unknown,
}

impl Role {
    fn as_str(self) -> &'static str {
        match self {
            Role::Time => "time",
            Role::Voltage => "voltage",
            Role::Current => "current",
            Role::Unknown => "unknown",
        }
    }
}

/// The phase a channel's name gives (`Va`, `V1`, `VL1` are phase a; `In`, `I0` the neutral).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Phase {
    /// Phase a (L1).
    A,
    /// Phase b (L2).
    B,
    /// Phase c (L3).
    C,
    /// Neutral.
    N,
}

/// A unit read from a header.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Unit {
    /// Time, voltage or current.
    #[serde(skip)]
    pub role: Role,
    /// The unit as understood, spelled canonically: `s`, `ms`, `µs`, `ns`, `mV`, `V`, `kV`, `A`...
    pub symbol: String,
    /// Seconds, volts or amperes per unit of the file.
    pub scale: f64,
}

/// One column of a text capture or one channel of a WAV file, as the loader understood it.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    /// The name as in the file (`channel N` for WAV, `column N` without a header).
    pub name: String,
    /// 1-based column (the time column counts) or WAV channel number.
    pub column: usize,
    /// The unit, when the header gives one we understand.
    pub unit: Option<Unit>,
    /// The unit text of the header when we did not understand it (`%`, `W`).
    pub unknown_unit: Option<String>,
    /// What the unit, else the name, says the channel is.
    pub role: Role,
    /// The phase the name gives, if any.
    pub phase: Option<Phase>,
    /// What the cells hold, as far as the first rows show.
    pub content: Content,
}

/// What a column's cells hold in the rows the sniffer looked at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Content {
    /// Numbers (a candidate channel).
    Numbers,
    /// Nothing.
    Blank,
    /// Text or a mix (a flag, a marker).
    Text,
}

impl Channel {
    /// Reads a header cell at 1-based `column`.
    pub fn from_header(name: &str, column: usize, content: Content) -> Self {
        let (base, unit_text) = split_header(name);
        let unit = unit_text.and_then(parse_unit);
        let unknown_unit = match (&unit, unit_text) {
            (None, Some(t)) if !t.trim().is_empty() => Some(t.trim().to_string()),
            _ => None,
        };
        let by_name = name_role(base);
        // A unit decides; a unit we do not know (W, %, VA) makes it no voltage or current.
        let role = match (&unit, &unknown_unit, by_name) {
            (Some(u), _, _) => u.role,
            (None, Some(_), _) => Role::Unknown,
            (None, None, Some((r, _))) => r,
            (None, None, None) => Role::Unknown,
        };
        // A phase is kept only when the name agrees with the unit's quantity.
        let phase = by_name.filter(|(r, _)| *r == role).and_then(|(_, p)| p);
        Channel {
            name: name.to_string(),
            column,
            unit,
            unknown_unit,
            role,
            phase,
            content,
        }
    }

    /// A channel that has no header (a WAV channel, a headerless column).
    pub fn unnamed(name: String, column: usize, content: Content) -> Self {
        Channel {
            name,
            column,
            unit: None,
            unknown_unit: None,
            role: Role::Unknown,
            phase: None,
            content,
        }
    }

    /// Factor from the file's unit to volts, amperes or seconds (1 without a unit).
    pub fn scale(&self) -> f64 {
        self.unit.as_ref().map_or(1.0, |u| u.scale)
    }

    /// The unit's symbol, if understood.
    pub fn unit_symbol(&self) -> Option<&str> {
        self.unit.as_ref().map(|u| u.symbol.as_str())
    }

    /// `column 3 'CH2 (V)' (voltage, V)`: how a channel is listed in messages.
    pub fn describe(&self) -> String {
        let mut what = vec![];
        if self.role != Role::Unknown {
            what.push(self.role.as_str().to_string());
        }
        match (&self.unit, &self.unknown_unit) {
            (Some(u), _) => what.push(u.symbol.clone()),
            (None, Some(t)) => what.push(format!("unknown unit '{t}'")),
            (None, None) => what.push("no unit".into()),
        }
        match self.content {
            Content::Numbers => {}
            Content::Blank => what.push("blank".into()),
            Content::Text => what.push("text".into()),
        }
        format!(
            "column {} '{}' ({})",
            self.column,
            self.name,
            what.join(", ")
        )
    }
}

/// Splits a header into its name and unit text: `Time (ms)` -> (`Time`, `ms`), `CH3 [A]` ->
/// (`CH3`, `A`), `time/s` -> (`time`, `s`). The unit is the last bracketed group, or what follows
/// the last slash when that reads as a unit.
pub fn split_header(name: &str) -> (&str, Option<&str>) {
    if let Some(open) = name.find(['(', '[', '{']) {
        let base = name[..open].trim();
        // The last group: from its opening bracket to the matching close (or the end).
        let last_open = name.rfind(['(', '[', '{']).unwrap_or(open);
        let rest = &name[last_open + 1..];
        let close = rest.find([')', ']', '}']).unwrap_or(rest.len());
        return (base, Some(rest[..close].trim()));
    }
    if let Some(slash) = name.rfind('/') {
        let unit = name[slash + 1..].trim();
        if parse_unit(unit).is_some() {
            return (name[..slash].trim(), Some(unit));
        }
    }
    (name.trim(), None)
}

/// Reads a unit: `s`, `ms`, `us`/`µs`/`μs` (micro sign or Greek mu), `ns`, `V`, `mV`, `kV`, `A`,
/// `mA`, `kA`... A trailing `rms` (`Vrms`, `A rms`) is allowed. `None` for anything else.
pub fn parse_unit(text: &str) -> Option<Unit> {
    let mut t = text.trim();
    for suffix in [
        " rms", "rms", " RMS", "RMS", " ac", "ac", " AC", "AC", " dc", "dc", " DC", "DC",
    ] {
        if let Some(s) = t.strip_suffix(suffix) {
            t = s.trim_end();
            break;
        }
    }
    let word = match t.to_lowercase().as_str() {
        "volt" | "volts" => "V",
        "amp" | "amps" | "ampere" | "amperes" => "A",
        "sec" | "second" | "seconds" => "s",
        _ => t,
    };
    let t = word;
    let (role, base, body) = if let Some(p) = t.strip_suffix("sec") {
        (Role::Time, "s", p)
    } else if let Some(p) = t.strip_suffix('s') {
        (Role::Time, "s", p)
    } else if let Some(p) = t.strip_suffix(['V', 'v']) {
        (Role::Voltage, "V", p)
    } else if let Some(p) = t.strip_suffix(['A', 'a']) {
        (Role::Current, "A", p)
    } else {
        return None;
    };
    let (prefix, scale) = match body {
        "" => ("", 1.0),
        "m" => ("m", 1e-3),
        "u" | "\u{b5}" | "\u{3bc}" => ("µ", 1e-6),
        "n" => ("n", 1e-9),
        "k" | "K" if role != Role::Time => ("k", 1e3),
        "M" if role != Role::Time => ("M", 1e6),
        _ => return None,
    };
    Some(Unit {
        role,
        symbol: format!("{prefix}{base}"),
        scale,
    })
}

/// Lowercase with spaces, `_`, `-` and `.` removed: `V_L1` -> `vl1`, `X-axis` -> `xaxis`.
fn squash(s: &str) -> String {
    s.chars()
        .filter(|c| !matches!(c, ' ' | '_' | '-' | '.'))
        .flat_map(char::to_lowercase)
        .collect()
}

/// Names of a time column (lowercase, squashed): English, German, French, Spanish, Italian, and
/// the x axis of a plot export.
const TIME_WORDS: &[&str] = &[
    "time",
    "t",
    "zeit",
    "temps",
    "tiempo",
    "tempo",
    "xaxis",
    "x",
    "s",
    "sec",
    "secs",
    "second",
    "seconds",
    "timestamp",
];
/// Time names that say the unit themselves: read as seconds without a note.
pub(crate) const SECONDS_WORDS: &[&str] = &["s", "sec", "secs", "second", "seconds"];
/// Time names that are the common spelling of "time" in a language: read as seconds (SI), the
/// convention the README documents. Other time names without a unit get a note.
pub(crate) const PLAIN_TIME_WORDS: &[&str] = &["time", "t", "zeit", "temps", "tiempo", "tempo"];
const VOLTAGE_WORDS: &[&str] = &[
    "voltage", "volt", "volts", "spannung", "tension", "tensione", "vac", "vrms", "urms",
];
const CURRENT_WORDS: &[&str] = &[
    "current",
    "amp",
    "amps",
    "ampere",
    "amperes",
    "strom",
    "courant",
    "corriente",
    "corrente",
    "iac",
    "irms",
];

/// What a (squashed) name says: `Va` -> voltage of phase a, `IL` -> a current, `time` -> time.
fn word_role(s: &str) -> Option<(Role, Option<Phase>)> {
    if TIME_WORDS.contains(&s) || s.starts_with("time") {
        return Some((Role::Time, None));
    }
    if VOLTAGE_WORDS.contains(&s) || s.starts_with("voltage") {
        return Some((Role::Voltage, None));
    }
    if CURRENT_WORDS.contains(&s) || s.starts_with("current") {
        return Some((Role::Current, None));
    }
    let (role, rest) = match s.as_bytes().first() {
        Some(b'v' | b'u') => (Role::Voltage, &s[1..]),
        Some(b'i') => (Role::Current, &s[1..]),
        _ => return None,
    };
    let phase = match rest {
        "" | "l" | "load" | "line" | "in" | "out" | "ac" | "supply" | "mains" | "ln" => None,
        "a" | "1" | "l1" | "an" | "1n" | "l1n" | "r" => Some(Phase::A),
        "b" | "2" | "l2" | "bn" | "2n" | "l2n" => Some(Phase::B),
        "c" | "3" | "l3" | "cn" | "3n" | "l3n" => Some(Phase::C),
        "n" | "0" | "nn" => Some(Phase::N),
        // line-to-line voltages: a voltage of no single phase
        "ab" | "bc" | "ca" | "ba" | "cb" | "12" | "23" | "31" | "21" | "32" | "13" | "l1l2"
        | "l2l3" | "l3l1"
            if role == Role::Voltage =>
        {
            None
        }
        _ => return None,
    };
    Some((role, phase))
}

/// What a header name (without its unit) says about the channel: the whole name first
/// (`V_L1`), else its words (`CH3 Ia`, `PANEL Va`) when those that mean something agree.
fn name_role(base: &str) -> Option<(Role, Option<Phase>)> {
    if let Some(r) = word_role(&squash(base)) {
        return Some(r);
    }
    let mut found: Option<(Role, Option<Phase>)> = None;
    for word in base
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
    {
        let w = word.to_lowercase();
        let numbered = |p: &str| {
            w.strip_prefix(p)
                .is_some_and(|d| d.bytes().all(|b| b.is_ascii_digit()))
        };
        if numbered("ch") || numbered("channel") || numbered("col") || numbered("column") {
            continue;
        }
        if let Some((r, p)) = word_role(&w) {
            match &mut found {
                None => found = Some((r, p)),
                Some((fr, fp)) if *fr == r => *fp = fp.or(p),
                Some(_) => return None, // words disagree
            }
        }
    }
    found
}

/// How a channel came to be chosen; shown in every output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum ChosenBy {
    /// `--voltage` / `--current`.
    #[serde(rename = "option")]
    Option,
    /// Its unit.
    #[serde(rename = "unit")]
    Unit,
    /// Its name.
    #[serde(rename = "name")]
    Name,
    /// Its phase matches the other channel's (`Va` with `Ia`).
    #[serde(rename = "phase")]
    Phase,
    /// The file has exactly two data channels and nothing tells them apart: first voltage,
    /// second current.
    #[serde(rename = "column order")]
    Order,
}

impl ChosenBy {
    /// The words used in the table and report.
    pub fn as_str(self) -> &'static str {
        match self {
            ChosenBy::Option => "option",
            ChosenBy::Unit => "unit",
            ChosenBy::Name => "name",
            ChosenBy::Phase => "phase",
            ChosenBy::Order => "column order",
        }
    }
}

impl fmt::Display for ChosenBy {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The two channels a single-phase analysis uses (0-based indices into the channel list), how
/// each was chosen, and the notes the choice leaves.
#[derive(Debug, Clone, PartialEq)]
pub struct Picked {
    /// Index of the voltage channel.
    pub voltage: usize,
    /// Index of the current channel.
    pub current: usize,
    /// How the voltage was chosen.
    pub voltage_by: ChosenBy,
    /// How the current was chosen.
    pub current_by: ChosenBy,
    /// Notes and warnings about the choice (channels assumed, forced, columns left out).
    pub warnings: Vec<Warning>,
}

fn by_of(c: &Channel) -> ChosenBy {
    if c.unit.is_some() {
        ChosenBy::Unit
    } else {
        ChosenBy::Name
    }
}

fn listing(channels: &[&Channel]) -> String {
    channels
        .iter()
        .map(|c| c.describe())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Chooses the voltage and current channels among `channels` (every column of the file, the time
/// column included, as [`Channel::from_header`] read them).
///
/// Explicit choices are found by 1-based column or name and checked: the time column is never a
/// channel, and a channel whose unit or name says the other quantity is refused unless `force`.
/// Otherwise the channel's role decides; several candidates are told apart by phase (`Va` goes
/// with `Ia`); a file of exactly two data channels that nothing tells apart is read first =
/// voltage, second = current, with a note. Anything else is refused, listing the channels.
pub(crate) fn pick_channels(
    channels: &[Channel],
    voltage: Option<&ChannelSel>,
    current: Option<&ChannelSel>,
    force: bool,
) -> Result<Picked, LoadErrorKind> {
    let data: Vec<usize> = (0..channels.len())
        .filter(|&k| channels[k].role != Role::Time && channels[k].content == Content::Numbers)
        .collect();
    let mut warnings = Vec::new();
    let v_sel = voltage
        .map(|s| find(channels, s, Trace::Voltage, force, &mut warnings))
        .transpose()?;
    let i_sel = current
        .map(|s| find(channels, s, Trace::Current, force, &mut warnings))
        .transpose()?;
    let hint = |v: Option<usize>, i: Option<usize>| {
        let num = |k: Option<usize>, fallback: &str| {
            k.map_or(fallback.to_string(), |k| channels[k].column.to_string())
        };
        let counts = if channels.iter().any(|c| c.role == Role::Time) {
            "numbers count the file's columns, the time column too"
        } else {
            "numbers count the file's columns or WAV channels from 1"
        };
        format!(
            "--voltage {} --current {} ({counts})",
            num(v, "N"),
            num(i, "N")
        )
    };
    let with_role = |role: Role, not: Option<usize>| -> Vec<usize> {
        data.iter()
            .copied()
            .filter(|&k| channels[k].role == role && Some(k) != not)
            .collect()
    };
    // Candidates by role, each alone or told apart by phase.
    let mut v = v_sel.map(|k| (k, ChosenBy::Option));
    let mut i = i_sel.map(|k| (k, ChosenBy::Option));
    let vs = with_role(Role::Voltage, i.map(|x| x.0));
    let is = with_role(Role::Current, v.map(|x| x.0));
    if v.is_none() && vs.len() == 1 {
        v = Some((vs[0], by_of(&channels[vs[0]])));
    }
    if i.is_none() && is.len() == 1 {
        i = Some((is[0], by_of(&channels[is[0]])));
    }
    let same_phase = |cands: &[usize], other: Option<(usize, ChosenBy)>| -> Option<usize> {
        let p = channels[other?.0].phase?;
        let m: Vec<usize> = cands
            .iter()
            .copied()
            .filter(|&k| channels[k].phase == Some(p))
            .collect();
        (m.len() == 1).then(|| m[0])
    };
    if v.is_none() && vs.len() > 1 {
        v = same_phase(&vs, i).map(|k| (k, ChosenBy::Phase));
    }
    if i.is_none() && is.len() > 1 {
        i = same_phase(&is, v).map(|k| (k, ChosenBy::Phase));
    }
    // Several of a kind and nothing to choose by: refuse, listing them.
    for (what, got, cands) in [("voltage", v, &vs), ("current", i, &is)] {
        if got.is_none() && cands.len() > 1 {
            let list: Vec<&Channel> = cands.iter().map(|&k| &channels[k]).collect();
            return Err(LoadErrorKind::Ambiguous(Box::new(Ambiguity {
                what,
                why: format!("{} channels are {what}s", cands.len()),
                channels: listing(&list),
                hint: hint(
                    v.map(|x| x.0).or((what == "voltage").then_some(cands[0])),
                    i.map(|x| x.0).or((what == "current").then_some(cands[0])),
                ),
            })));
        }
    }
    // What is left: data channels nothing says anything about.
    let unknown: Vec<usize> = data
        .iter()
        .copied()
        .filter(|&k| channels[k].role == Role::Unknown && channels[k].unknown_unit.is_none())
        .filter(|&k| Some(k) != v.map(|x| x.0) && Some(k) != i.map(|x| x.0))
        .collect();
    // A file of exactly two data channels, the missing ones among them and unnamed: take them
    // in column order, with a note.
    if data.len() == 2 && (v.is_none() || i.is_none()) {
        let mut rest = unknown.iter().copied();
        let mut assumed = Vec::new();
        for (slot, trace) in [(&mut v, Trace::Voltage), (&mut i, Trace::Current)] {
            if slot.is_none()
                && let Some(k) = rest.next()
            {
                *slot = Some((k, ChosenBy::Order));
                let c = &channels[k];
                assumed.push(format!("'{}' (column {}) as the {trace}", c.name, c.column));
            }
        }
        if !assumed.is_empty() {
            warnings.push(Warning::ChannelAssumed { channels: assumed });
        }
    }
    let (Some((vk, vby)), Some((ik, iby))) = (v, i) else {
        let what = match (v, i) {
            (None, None) => "voltage and the current",
            (None, Some(_)) => "voltage",
            _ => "current",
        };
        if data.len() < 2 {
            return Err(LoadErrorKind::OneChannel);
        }
        let list: Vec<&Channel> = data.iter().map(|&k| &channels[k]).collect();
        return Err(LoadErrorKind::Ambiguous(Box::new(Ambiguity {
            what,
            why: "no name or unit says which channel it is".into(),
            channels: listing(&list),
            hint: hint(v.map(|x| x.0), i.map(|x| x.0)),
        })));
    };
    if vk == ik {
        return Err(LoadErrorKind::SameChannel {
            index: channels[vk].column,
        });
    }
    // Every other column is left out, with a note naming them (the time column is not).
    let time = channels.iter().position(|c| c.role == Role::Time);
    let left: Vec<String> = (0..channels.len())
        .filter(|&k| k != vk && k != ik && Some(k) != time)
        .map(|k| {
            let c = &channels[k];
            match c.content {
                Content::Numbers => format!("'{}' (column {})", c.name, c.column),
                Content::Blank => format!("'{}' (column {}, blank)", c.name, c.column),
                Content::Text => format!("'{}' (column {}, not numbers)", c.name, c.column),
            }
        })
        .collect();
    if !left.is_empty() {
        warnings.push(Warning::ColumnsIgnored { columns: left });
    }
    Ok(Picked {
        voltage: vk,
        current: ik,
        voltage_by: vby,
        current_by: iby,
        warnings,
    })
}

/// Finds an explicitly chosen channel and checks it may serve as `trace`.
fn find(
    channels: &[Channel],
    sel: &ChannelSel,
    trace: Trace,
    force: bool,
    warnings: &mut Vec<Warning>,
) -> Result<usize, LoadErrorKind> {
    let what = match trace {
        Trace::Voltage => "voltage",
        Trace::Current => "current",
    };
    let names = || channels.iter().map(|c| c.name.clone()).collect::<Vec<_>>();
    let k = match sel {
        ChannelSel::Index(n) => {
            if *n == 0 || *n > channels.len() {
                return Err(LoadErrorKind::NoSuchChannel {
                    what,
                    sel: sel.clone(),
                    available: names(),
                });
            }
            n - 1
        }
        ChannelSel::Name(want) => {
            let w = want.to_lowercase();
            let wb = super::base_name(want);
            channels
                .iter()
                .position(|c| c.name.to_lowercase() == w)
                .or_else(|| {
                    channels
                        .iter()
                        .position(|c| super::base_name(&c.name) == wb)
                })
                .ok_or_else(|| LoadErrorKind::NoSuchChannel {
                    what,
                    sel: sel.clone(),
                    available: names(),
                })?
        }
    };
    let c = &channels[k];
    if c.role == Role::Time {
        return Err(LoadErrorKind::TimeColumnSelected {
            what,
            index: c.column,
        });
    }
    let other = match trace {
        Trace::Voltage => Role::Current,
        Trace::Current => Role::Voltage,
    };
    if c.role == other {
        let by = match &c.unit {
            Some(u) => format!("its unit ({})", u.symbol),
            None => "its name".to_string(),
        };
        if !force {
            return Err(LoadErrorKind::WrongRole(Box::new(WrongRole {
                what,
                channel: c.describe(),
                is: other.as_str(),
                by,
            })));
        }
        warnings.push(Warning::ChannelForced {
            trace,
            channel: format!("'{}' (column {})", c.name, c.column),
            is: format!("a {} by {by}", other.as_str()),
        });
    }
    Ok(k)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn header(names: &[&str]) -> Vec<Channel> {
        names
            .iter()
            .enumerate()
            .map(|(k, n)| Channel::from_header(n, k + 1, Content::Numbers))
            .collect()
    }

    fn pick(names: &[&str]) -> Result<(String, String), String> {
        let ch = header(names);
        pick_channels(&ch, None, None, false)
            .map(|p| (ch[p.voltage].name.clone(), ch[p.current].name.clone()))
            .map_err(|e| e.to_string())
    }

    #[test]
    fn units_are_read_with_their_prefixes() {
        // SI prefixes (common practice): m = 1e-3, µ = 1e-6, n = 1e-9, k = 1e3.
        for (text, symbol, scale, role) in [
            ("s", "s", 1.0, Role::Time),
            ("ms", "ms", 1e-3, Role::Time),
            ("us", "µs", 1e-6, Role::Time),
            ("\u{b5}s", "µs", 1e-6, Role::Time),
            ("\u{3bc}s", "µs", 1e-6, Role::Time),
            ("ns", "ns", 1e-9, Role::Time),
            ("V", "V", 1.0, Role::Voltage),
            ("mV", "mV", 1e-3, Role::Voltage),
            ("kV", "kV", 1e3, Role::Voltage),
            ("A", "A", 1.0, Role::Current),
            ("mA", "mA", 1e-3, Role::Current),
            ("kA", "kA", 1e3, Role::Current),
            ("V rms", "V", 1.0, Role::Voltage),
        ] {
            let u = parse_unit(text).unwrap_or_else(|| panic!("{text}"));
            assert_eq!(
                (u.symbol.as_str(), u.scale, u.role),
                (symbol, scale, role),
                "{text}"
            );
        }
        for text in ["W", "%", "Hz", "ks", "xV", ""] {
            assert_eq!(parse_unit(text), None, "{text}");
        }
    }

    #[test]
    fn headers_split_into_name_and_unit() {
        assert_eq!(split_header("Time (ms)"), ("Time", Some("ms")));
        assert_eq!(split_header("CH3(A)"), ("CH3", Some("A")));
        assert_eq!(split_header("I [mA]"), ("I", Some("mA")));
        assert_eq!(split_header("time/s"), ("time", Some("s")));
        assert_eq!(split_header("Time [s]"), ("Time", Some("s")));
        assert_eq!(split_header("V_L1"), ("V_L1", None));
        assert_eq!(split_header("ratio V/I"), ("ratio V/I", None));
    }

    #[test]
    fn names_give_roles_and_phases() {
        let role = |n: &str| {
            let c = Channel::from_header(n, 1, Content::Numbers);
            (c.role, c.phase)
        };
        for n in [
            "Time",
            "Zeit",
            "Temps",
            "Tiempo",
            "t",
            "X-axis",
            "time/s",
            "Time (ms)",
        ] {
            assert_eq!(role(n), (Role::Time, None), "{n}");
        }
        for n in ["U", "Voltage", "Vload", "CH1 (V)", "Spannung [V]"] {
            assert_eq!(role(n).0, Role::Voltage, "{n}");
        }
        for n in ["Va", "V_L1", "UL1", "U1", "VAN", "PANEL_Va_V"] {
            assert_eq!(role(n), (Role::Voltage, Some(Phase::A)), "{n}");
        }
        for n in ["Ia", "I_L1", "IL1", "CH3 Ia [A]"] {
            assert_eq!(role(n), (Role::Current, Some(Phase::A)), "{n}");
        }
        for n in ["IL", "Iload", "I", "Current", "CH3 (A)", "Strom"] {
            assert_eq!(role(n).0, Role::Current, "{n}");
        }
        assert_eq!(role("In"), (Role::Current, Some(Phase::N)));
        for n in ["CH1", "Trigger", "Marker", "Flag", "index", "Power (W)"] {
            assert_eq!(role(n).0, Role::Unknown, "{n}");
        }
        // A unit wins over a name: an (A) channel is a current.
        assert_eq!(role("V (A)").0, Role::Current);
    }

    #[test]
    fn an_amperes_channel_among_volts_channels_is_the_current_and_the_voltages_are_refused() {
        // The header of issue 10 item 2: three channels in volts, one in amperes.
        let e = pick(&["TIME", "CH1(V)", "CH2(V)", "CH3(A)", "CH4(V)"]).unwrap_err();
        assert!(e.contains("3 channels are voltages"), "{e}");
        assert!(e.contains("column 2 'CH1(V)' (voltage, V)"), "{e}");
        assert!(e.contains("column 5 'CH4(V)'"), "{e}");
        assert!(e.contains("--voltage 2 --current 4"), "{e}");
        let ch = header(&["TIME", "CH1(V)", "CH2(V)", "CH3(A)", "CH4(V)"]);
        let p = pick_channels(&ch, Some(&ChannelSel::Index(2)), None, false).unwrap();
        assert_eq!((p.voltage, p.current), (1, 3));
        assert_eq!(
            (p.voltage_by, p.current_by),
            (ChosenBy::Option, ChosenBy::Unit)
        );
    }

    #[test]
    fn named_channels_are_found_among_others() {
        assert_eq!(
            pick(&["Time", "Trigger", "Va", "Ia"]).unwrap(),
            ("Va".into(), "Ia".into())
        );
        assert_eq!(
            pick(&["Time", "V_L1", "Marker", "I_L1"]).unwrap(),
            ("V_L1".into(), "I_L1".into())
        );
        assert_eq!(
            pick(&["Time", "U", "Trigger", "IL"]).unwrap(),
            ("U".into(), "IL".into())
        );
        assert_eq!(
            pick(&["Time", "Iload", "UL1"]).unwrap(),
            ("UL1".into(), "Iload".into())
        );
        // Several voltages: the one of the current's phase.
        assert_eq!(
            pick(&["Time", "Vb", "Va", "Ia"]).unwrap(),
            ("Va".into(), "Ia".into())
        );
    }

    #[test]
    fn channels_nothing_tells_apart_are_refused_beyond_two() {
        let e = pick(&["CH1", "CH2", "CH3"]).unwrap_err();
        assert!(e.contains("no name or unit says"), "{e}");
        assert!(e.contains("column 1 'CH1' (no unit)"), "{e}");
        // Two unnamed channels: first voltage, second current, with a note.
        let ch = header(&["t", "CH1", "CH2"]);
        let p = pick_channels(&ch, None, None, false).unwrap();
        assert_eq!(
            (p.voltage, p.current, p.current_by),
            (1, 2, ChosenBy::Order)
        );
        assert_eq!(p.warnings.len(), 1, "{:?}", p.warnings);
        let note = p.warnings[0].to_string();
        assert!(
            note.contains("'CH1' (column 2) as the voltage and 'CH2' (column 3) as the current"),
            "{note}"
        );
        // One named, one not: the other is taken, and said.
        let ch = header(&["t", "U", "X1"]);
        let p = pick_channels(&ch, None, None, false).unwrap();
        assert_eq!((p.voltage, p.current), (1, 2));
        assert_eq!(
            (p.voltage_by, p.current_by),
            (ChosenBy::Name, ChosenBy::Order)
        );
    }

    #[test]
    fn a_voltage_chosen_as_the_current_is_refused_unless_forced() {
        let ch = header(&["TIME", "CH1(V)", "CH2(V)", "CH3(A)"]);
        let e = pick_channels(
            &ch,
            Some(&ChannelSel::Index(2)),
            Some(&ChannelSel::Index(3)),
            false,
        )
        .unwrap_err();
        let e = e.to_string();
        assert!(
            e.contains("column 3 'CH2(V)'") && e.contains("--force-channels"),
            "{e}"
        );
        let p = pick_channels(
            &ch,
            Some(&ChannelSel::Index(2)),
            Some(&ChannelSel::Index(3)),
            true,
        )
        .unwrap();
        assert_eq!(p.current, 2);
        assert!(matches!(p.warnings[0], Warning::ChannelForced { .. }));
        // The time column is never a channel, forced or not.
        let e = pick_channels(&ch, Some(&ChannelSel::Index(1)), None, true).unwrap_err();
        assert!(matches!(
            e,
            LoadErrorKind::TimeColumnSelected { index: 1, .. }
        ));
    }

    #[test]
    fn left_out_columns_are_named_in_a_note() {
        let mut ch = header(&["Time", "Voltage (V)", "Current (A)", "Trigger", "Spare"]);
        ch[4].content = Content::Blank;
        let p = pick_channels(&ch, None, None, false).unwrap();
        let Warning::ColumnsIgnored { columns } = &p.warnings[0] else {
            panic!("{:?}", p.warnings)
        };
        assert_eq!(
            columns,
            &[
                "'Trigger' (column 4)".to_string(),
                "'Spare' (column 5, blank)".to_string()
            ]
        );
    }
}
