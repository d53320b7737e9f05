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
    /// The role in words.
    pub fn as_str(self) -> &'static str {
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
    /// The two phases a line-to-line voltage's name gives (`Vab` is a to b: `Va − Vb`), if any.
    pub line: Option<(Phase, Phase)>,
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
        let tag = by_name.filter(|(r, _)| *r == role).and_then(|(_, p)| p);
        Channel {
            name: name.to_string(),
            column,
            unit,
            unknown_unit,
            role,
            phase: tag.and_then(Tag::phase),
            line: tag.and_then(Tag::line),
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
            line: None,
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

/// What a name says beyond the quantity: one phase, or the two ends of a line-to-line voltage.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Tag {
    Phase(Phase),
    Line(Phase, Phase),
}

impl Tag {
    fn phase(self) -> Option<Phase> {
        match self {
            Tag::Phase(p) => Some(p),
            Tag::Line(..) => None,
        }
    }
    fn line(self) -> Option<(Phase, Phase)> {
        match self {
            Tag::Line(a, b) => Some((a, b)),
            Tag::Phase(_) => None,
        }
    }
}

/// A phase's letter or number: `a`/`1`/`l1`/`r` are phase a...
fn phase_word(s: &str) -> Option<Phase> {
    Some(match s {
        "a" | "1" | "l1" | "r" => Phase::A,
        "b" | "2" | "l2" => Phase::B,
        "c" | "3" | "l3" => Phase::C,
        _ => return None,
    })
}

/// What a (squashed) name says: `Va` -> voltage of phase a, `IL` -> a current, `time` -> time,
/// `Vcb` -> the voltage from c to b.
fn word_role(s: &str) -> Option<(Role, Option<Tag>)> {
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
    let tag = match rest {
        "" | "l" | "load" | "line" | "in" | "out" | "ac" | "supply" | "mains" | "ln" => None,
        "an" | "1n" | "l1n" => Some(Tag::Phase(Phase::A)),
        "bn" | "2n" | "l2n" => Some(Tag::Phase(Phase::B)),
        "cn" | "3n" | "l3n" => Some(Tag::Phase(Phase::C)),
        "n" | "0" | "nn" => Some(Tag::Phase(Phase::N)),
        _ => {
            if let Some(p) = phase_word(rest) {
                Some(Tag::Phase(p))
            } else if role == Role::Voltage {
                // line-to-line voltages: `ab`, `12`, `l1l2`, `cb` (c to b)
                let split = [(1, 1), (2, 2)].into_iter().find_map(|(x, y)| {
                    (rest.len() == x + y)
                        .then(|| Some((phase_word(&rest[..x])?, phase_word(&rest[x..])?)))
                        .flatten()
                });
                match split {
                    Some((a, b)) if a != b => Some(Tag::Line(a, b)),
                    _ => return None,
                }
            } else {
                return None;
            }
        }
    };
    Some((role, tag))
}

/// What a header name (without its unit) says about the channel: the whole name first
/// (`V_L1`), else its words (`CH3 Ia`, `PANEL Va`) when those that mean something agree.
fn name_role(base: &str) -> Option<(Role, Option<Tag>)> {
    if let Some(r) = word_role(&squash(base)) {
        return Some(r);
    }
    let mut found: Option<(Role, Option<Tag>)> = None;
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::capture::pick::{ChosenBy, pick_channels};
    use crate::capture::{ChannelSel, LoadErrorKind};
    use crate::warning::Warning;

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
