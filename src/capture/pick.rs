//! Which channels an analysis takes: the voltage and current of a single-phase capture, or the
//! phase set of a three-phase one, and never silently.
//!
//! An explicit choice (`--voltage`, `--current`, `--neutral`, lists for three phases) is checked
//! against the channel's own unit and name; without one, the roles the loader read decide: a
//! complete phase set (`Va Vb Vc` with `Ia Ib Ic`, or line-to-line `Vab Vcb` with `Ia Ic`) is a
//! three-phase capture, one voltage and one current a single-phase one, and anything else is
//! refused with a list of the channels and the options to use.

use super::ChannelSel;
use super::channel::{Channel, Content, Phase, Role};
use super::error::{Ambiguity, LoadErrorKind, WrongRole};
use crate::warning::{Trace, Warning};
use std::fmt;

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
    // None of a kind while every data channel is of the other kind (a record of currents
    // alone): say that, not that the other kind is ambiguous.
    let all_known = data.iter().all(|&k| channels[k].role != Role::Unknown);
    for (what, other, got, cands) in [
        ("voltage", "current", v, &vs),
        ("current", "voltage", i, &is),
    ] {
        if got.is_none() && cands.is_empty() && all_known && data.len() > 1 {
            let list: Vec<&Channel> = data.iter().map(|&k| &channels[k]).collect();
            return Err(LoadErrorKind::Ambiguous(Box::new(Ambiguity {
                what,
                why: format!(
                    "no channel is a {what} by its unit or name (every data channel is a \
                     {other}); an analysis needs a {what} and a {other} of one circuit"
                ),
                channels: listing(&list),
                hint: hint(v.map(|x| x.0), i.map(|x| x.0)),
            })));
        }
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
        .map(|k| left_out(&channels[k]))
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
        ChannelSel::List(items) => {
            return Err(LoadErrorKind::BadChannelSet(format!(
                "--{what} lists {} channels where one is wanted: lists are for three-phase \
                 captures (--system 4-wire or 3-wire)",
                items.len()
            )));
        }
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

/// How the capture's circuit is connected: what its channels measure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum System {
    /// One voltage and one current.
    #[serde(rename = "single-phase")]
    Single,
    /// Three phases and a neutral: phase-to-neutral voltages and the three line currents.
    #[serde(rename = "3-phase 4-wire")]
    FourWire,
    /// Three phases without a neutral: two or three line-to-line voltages and two or three line
    /// currents (a two-element meter's connection).
    #[serde(rename = "3-phase 3-wire")]
    ThreeWire,
}

impl System {
    /// The words used in outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            System::Single => "single-phase",
            System::FourWire => "3-phase 4-wire",
            System::ThreeWire => "3-phase 3-wire",
        }
    }

    /// Reads `single`, `4-wire` or `3-wire` (and a few spellings of each).
    pub fn parse(text: &str) -> Option<Self> {
        let t: String = text
            .trim()
            .to_ascii_lowercase()
            .chars()
            .filter(|c| !matches!(c, ' ' | '_' | '-'))
            .collect();
        Some(match t.as_str() {
            "single" | "singlephase" | "1" | "1phase" | "1p" => System::Single,
            "4wire" | "3phase4wire" | "3p4w" | "star" | "wye" => System::FourWire,
            "3wire" | "3phase3wire" | "3p3w" | "delta" => System::ThreeWire,
            _ => return None,
        })
    }

    /// True for the two three-phase systems.
    pub fn is_three_phase(self) -> bool {
        self != System::Single
    }
}

impl fmt::Display for System {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Where a chosen channel sits in the circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Place {
    /// The one voltage or current of a single-phase capture.
    Single,
    /// A phase-to-neutral voltage or a line current of phase a, b or c (or the neutral current).
    Phase(Phase),
    /// A line-to-line voltage: from the first phase to the second.
    Line(Phase, Phase),
}

/// One chosen channel: its index in the channel list, where it sits, how it was chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Choice {
    /// 0-based index into the file's channels.
    pub index: usize,
    /// Where it sits.
    pub place: Place,
    /// How it was chosen.
    pub by: ChosenBy,
}

/// Every channel an analysis takes, in the order the readers return them: the voltages, the
/// currents, then the neutral current.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelSet {
    /// The connection.
    pub system: System,
    /// Single: one; 4-wire: a, b, c to neutral; 3-wire: two or three line-to-line voltages.
    pub voltages: Vec<Choice>,
    /// Single: one; 4-wire: a, b, c; 3-wire: two (a and c) or three.
    pub currents: Vec<Choice>,
    /// A measured neutral current (4-wire only).
    pub neutral: Option<Choice>,
    /// Notes and warnings about the choice.
    pub warnings: Vec<Warning>,
}

impl ChannelSet {
    /// The channel indices to read, in order: voltages, currents, neutral.
    pub fn wanted(&self) -> Vec<usize> {
        self.voltages
            .iter()
            .chain(&self.currents)
            .chain(&self.neutral)
            .map(|c| c.index)
            .collect()
    }
}

/// What the command line (or a settings file) says about the channels.
#[derive(Debug, Clone, Copy, Default)]
pub struct Selection<'a> {
    /// `--voltage`: one channel or a list.
    pub voltage: Option<&'a ChannelSel>,
    /// `--current`: one channel or a list.
    pub current: Option<&'a ChannelSel>,
    /// `--neutral`.
    pub neutral: Option<&'a ChannelSel>,
    /// `--system`.
    pub system: Option<System>,
    /// `--force-channels`.
    pub force: bool,
}

const PHASES: [Phase; 3] = [Phase::A, Phase::B, Phase::C];

fn phase_letter(p: Phase) -> &'static str {
    match p {
        Phase::A => "a",
        Phase::B => "b",
        Phase::C => "c",
        Phase::N => "n",
    }
}

/// Chooses the channels of a capture: a three-phase set when the options or the file's names
/// say so, else one voltage and one current ([`pick_channels`]).
pub(crate) fn pick_set(
    channels: &[Channel],
    sel: Selection<'_>,
) -> Result<ChannelSet, LoadErrorKind> {
    let listed = |s: Option<&ChannelSel>| s.map_or(0, |s| s.items().len());
    let (nv, ni) = (listed(sel.voltage), listed(sel.current));
    let system = match sel.system {
        Some(s) => s,
        None if nv >= 2 || ni >= 2 => {
            if nv == 2 || ni == 2 || lines_chosen(channels, sel.voltage) {
                System::ThreeWire
            } else {
                System::FourWire
            }
        }
        None if sel.voltage.is_some() || sel.current.is_some() => System::Single,
        None => detect(channels),
    };
    if system == System::Single {
        if nv > 1 || ni > 1 || sel.neutral.is_some() {
            return Err(LoadErrorKind::BadChannelSet(
                "a single-phase capture takes one --voltage and one --current (and no \
                 --neutral); lists are for --system 4-wire or 3-wire"
                    .into(),
            ));
        }
        let p = pick_channels(channels, sel.voltage, sel.current, sel.force)?;
        return Ok(ChannelSet {
            system,
            voltages: vec![Choice {
                index: p.voltage,
                place: Place::Single,
                by: p.voltage_by,
            }],
            currents: vec![Choice {
                index: p.current,
                place: Place::Single,
                by: p.current_by,
            }],
            neutral: None,
            warnings: p.warnings,
        });
    }
    pick_three_phase(channels, sel, system)
}

/// True when the listed voltages' names say line-to-line.
fn lines_chosen(channels: &[Channel], voltage: Option<&ChannelSel>) -> bool {
    let Some(v) = voltage else { return false };
    v.items()
        .iter()
        .any(|s| locate(channels, s).is_some_and(|k| channels[k].line.is_some()))
}

/// The system the channels' names describe: a complete phase-to-neutral set with three currents
/// is 4-wire, two or three line-to-line voltages with the currents of a and c (at least) 3-wire;
/// anything else is taken as single-phase (whose picking refuses what it cannot tell apart).
fn detect(channels: &[Channel]) -> System {
    let data = |role: Role| {
        channels
            .iter()
            .filter(move |c| c.role == role && c.content == Content::Numbers)
    };
    let one_each = |role: Role, phases: &[Phase]| {
        phases
            .iter()
            .all(|&p| data(role).filter(|c| c.phase == Some(p)).count() == 1)
    };
    let lines = data(Role::Voltage).filter(|c| c.line.is_some()).count();
    if one_each(Role::Voltage, &PHASES) && one_each(Role::Current, &PHASES) {
        System::FourWire
    } else if (2..=3).contains(&lines)
        && data(Role::Voltage).all(|c| c.line.is_some())
        && one_each(Role::Current, &[Phase::A, Phase::C])
    {
        System::ThreeWire
    } else {
        System::Single
    }
}

/// Finds a channel by number or name, without checks.
fn locate(channels: &[Channel], sel: &ChannelSel) -> Option<usize> {
    match sel {
        ChannelSel::Index(n) => (*n >= 1 && *n <= channels.len()).then(|| n - 1),
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
        }
        ChannelSel::List(_) => None,
    }
}

fn three_phase_hint(channels: &[Channel], system: System) -> String {
    let counts = if channels.iter().any(|c| c.role == Role::Time) {
        "names, or numbers counting the file's columns with the time column"
    } else {
        "names, or numbers counting the file's columns or WAV channels from 1"
    };
    match system {
        System::ThreeWire => format!(
            "--system 3-wire --voltage Vab,Vcb --current Ia,Ic ({counts}; line-to-line voltages \
             in the order ab, cb unless their names say otherwise)"
        ),
        _ => format!(
            "--system 4-wire --voltage Va,Vb,Vc --current Ia,Ib,Ic ({counts}, in phase order a, \
             b, c)"
        ),
    }
}

/// Picks a three-phase set: listed channels in phase order, or the channels whose names carry
/// the phases; an incomplete or doubled set is refused with the list of channels.
fn pick_three_phase(
    channels: &[Channel],
    sel: Selection<'_>,
    system: System,
) -> Result<ChannelSet, LoadErrorKind> {
    let mut warnings = Vec::new();
    let data: Vec<usize> = (0..channels.len())
        .filter(|&k| channels[k].role != Role::Time && channels[k].content == Content::Numbers)
        .collect();
    let refuse = |why: String| {
        let list: Vec<&Channel> = data.iter().map(|&k| &channels[k]).collect();
        LoadErrorKind::Ambiguous(Box::new(Ambiguity {
            what: "three-phase channel set",
            why,
            channels: listing(&list),
            hint: three_phase_hint(channels, system),
        }))
    };
    // the places channels take, by position in a list when the names do not say
    let voltage_places: Vec<Place> = match system {
        System::FourWire => PHASES.iter().map(|&p| Place::Phase(p)).collect(),
        _ => vec![
            Place::Line(Phase::A, Phase::B),
            Place::Line(Phase::C, Phase::B),
            Place::Line(Phase::C, Phase::A),
        ],
    };
    let by_name = |role: Role, place: Place| -> Vec<usize> {
        data.iter()
            .copied()
            .filter(|&k| {
                let c = &channels[k];
                c.role == role
                    && match place {
                        Place::Phase(p) => c.phase == Some(p),
                        Place::Line(a, b) => c.line == Some((a, b)) || c.line == Some((b, a)),
                        Place::Single => false,
                    }
            })
            .collect()
    };
    let listed = |s: Option<&ChannelSel>,
                  trace: Trace,
                  warnings: &mut Vec<Warning>|
     -> Result<Option<Vec<usize>>, LoadErrorKind> {
        s.map(|s| {
            s.items()
                .iter()
                .map(|x| find(channels, x, trace, sel.force, warnings))
                .collect()
        })
        .transpose()
    };
    // voltages
    let voltages: Vec<Choice> = match listed(sel.voltage, Trace::Voltage, &mut warnings)? {
        Some(ks) => {
            let fits = match system {
                System::FourWire => ks.len() == 3,
                _ => ks.len() == 2 || ks.len() == 3,
            };
            if !fits {
                return Err(refuse(format!(
                    "--voltage lists {} channels; a {system} capture takes {}",
                    ks.len(),
                    if system == System::FourWire {
                        "three (a, b, c to neutral)"
                    } else {
                        "two or three line-to-line voltages"
                    }
                )));
            }
            let two = ks.len() == 2;
            ks.iter()
                .enumerate()
                .map(|(n, &k)| {
                    let place = match (system, channels[k].line) {
                        (System::ThreeWire, Some((a, b))) => Place::Line(a, b),
                        (System::ThreeWire, None) if two && n == 1 => voltage_places[1],
                        (System::ThreeWire, None) if !two && n == 1 => {
                            Place::Line(Phase::B, Phase::C)
                        }
                        _ => voltage_places[n],
                    };
                    Choice {
                        index: k,
                        place,
                        by: ChosenBy::Option,
                    }
                })
                .collect()
        }
        None => {
            let wanted: Vec<Place> = match system {
                System::FourWire => voltage_places.clone(),
                _ => {
                    // the line-to-line voltages present, in the order ab, bc/cb, ca
                    let present: Vec<Place> = [
                        Place::Line(Phase::A, Phase::B),
                        Place::Line(Phase::B, Phase::C),
                        Place::Line(Phase::C, Phase::A),
                    ]
                    .into_iter()
                    .filter(|&p| !by_name(Role::Voltage, p).is_empty())
                    .collect();
                    if present.len() < 2 {
                        return Err(refuse(
                            "fewer than two line-to-line voltages are named (Vab, Vbc, Vcb, \
                             Vca...)"
                                .into(),
                        ));
                    }
                    present
                }
            };
            let mut out = Vec::new();
            for place in wanted {
                let found = by_name(Role::Voltage, place);
                if found.len() != 1 {
                    return Err(refuse(format!(
                        "{} voltage channels are named for {}",
                        found.len(),
                        place_words(place)
                    )));
                }
                let k = found[0];
                out.push(Choice {
                    index: k,
                    place: match channels[k].line {
                        Some((a, b)) => Place::Line(a, b),
                        None => place,
                    },
                    by: by_of(&channels[k]),
                });
            }
            out
        }
    };
    // currents
    let current_places = |n: usize| -> Vec<Place> {
        if system == System::ThreeWire && n == 2 {
            vec![Place::Phase(Phase::A), Place::Phase(Phase::C)]
        } else {
            PHASES.iter().map(|&p| Place::Phase(p)).collect()
        }
    };
    let currents: Vec<Choice> = match listed(sel.current, Trace::Current, &mut warnings)? {
        Some(ks) => {
            let fits = match system {
                System::FourWire => ks.len() == 3,
                _ => ks.len() == 2 || ks.len() == 3,
            };
            if !fits {
                return Err(refuse(format!(
                    "--current lists {} channels; a {system} capture takes {}",
                    ks.len(),
                    if system == System::FourWire {
                        "three (a, b, c)"
                    } else {
                        "two (a and c) or three"
                    }
                )));
            }
            let places = current_places(ks.len());
            ks.iter()
                .zip(places)
                .map(|(&k, place)| Choice {
                    index: k,
                    place: match (ks.len(), channels[k].phase) {
                        (2, Some(p)) if p != Phase::N => Place::Phase(p),
                        _ => place,
                    },
                    by: ChosenBy::Option,
                })
                .collect()
        }
        None => {
            let mut out = Vec::new();
            for p in PHASES {
                let found = by_name(Role::Current, Place::Phase(p));
                match found.len() {
                    1 => out.push(Choice {
                        index: found[0],
                        place: Place::Phase(p),
                        by: by_of(&channels[found[0]]),
                    }),
                    0 if system == System::ThreeWire && p == Phase::B => {}
                    n => {
                        return Err(refuse(format!(
                            "{n} current channels are named for phase {}",
                            phase_letter(p)
                        )));
                    }
                }
            }
            out
        }
    };
    // the neutral current: named, or the one channel named `In`/`I0` in a 4-wire file
    let neutral = match sel.neutral {
        Some(s) if system == System::ThreeWire => {
            return Err(refuse(format!(
                "--neutral {s} was given for a 3-wire capture, which has no neutral"
            )));
        }
        Some(s) => Some(Choice {
            index: find(channels, s, Trace::Current, sel.force, &mut warnings)?,
            place: Place::Phase(Phase::N),
            by: ChosenBy::Option,
        }),
        None if system == System::FourWire => {
            let found = by_name(Role::Current, Place::Phase(Phase::N));
            (found.len() == 1).then(|| Choice {
                index: found[0],
                place: Place::Phase(Phase::N),
                by: by_of(&channels[found[0]]),
            })
        }
        None => None,
    };
    let used: Vec<usize> = voltages
        .iter()
        .chain(&currents)
        .chain(&neutral)
        .map(|c| c.index)
        .collect();
    for (n, k) in used.iter().enumerate() {
        if used[..n].contains(k) {
            return Err(LoadErrorKind::SameChannel {
                index: channels[*k].column,
            });
        }
    }
    let time = channels.iter().position(|c| c.role == Role::Time);
    let left: Vec<String> = (0..channels.len())
        .filter(|k| !used.contains(k) && Some(*k) != time)
        .map(|k| left_out(&channels[k]))
        .collect();
    if !left.is_empty() {
        warnings.push(Warning::ColumnsIgnored { columns: left });
    }
    Ok(ChannelSet {
        system,
        voltages,
        currents,
        neutral,
        warnings,
    })
}

fn place_words(p: Place) -> String {
    match p {
        Place::Single => "the circuit".into(),
        Place::Phase(p) => format!("phase {}", phase_letter(p)),
        Place::Line(a, b) => format!("{}-{}", phase_letter(a), phase_letter(b)),
    }
}

fn left_out(c: &Channel) -> String {
    match c.content {
        Content::Numbers => format!("'{}' (column {})", c.name, c.column),
        Content::Blank => format!("'{}' (column {}, blank)", c.name, c.column),
        Content::Text => format!("'{}' (column {}, not numbers)", c.name, c.column),
    }
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

    fn names_of(ch: &[Channel], set: &ChannelSet) -> Vec<String> {
        set.wanted().iter().map(|&k| ch[k].name.clone()).collect()
    }

    #[test]
    fn phase_sets_are_recognised_in_the_spellings_exports_use() {
        // the list: Va/V1/VL1/Ua/U1, Ia/I1/IL1, In/I0/IN, prefixes and suffixes
        for (names, system) in [
            (
                vec!["t", "Va", "Vb", "Vc", "Ia", "Ib", "Ic"],
                System::FourWire,
            ),
            (
                vec!["t", "VL1", "VL2", "VL3", "IL1", "IL2", "IL3", "IN"],
                System::FourWire,
            ),
            (
                vec!["t", "U1", "U2", "U3", "I1", "I2", "I3", "I0"],
                System::FourWire,
            ),
            (
                vec![
                    "time (s)",
                    "PANEL_Va_V",
                    "PANEL_Vb_V",
                    "PANEL_Vc_V",
                    "CH3 Ia [A]",
                    "CH4 Ib [A]",
                    "CH5 Ic [A]",
                ],
                System::FourWire,
            ),
            (vec!["t", "Vab", "Vcb", "Ia", "Ic"], System::ThreeWire),
            (
                vec!["t", "V12", "V23", "V31", "I1", "I2", "I3"],
                System::ThreeWire,
            ),
            (vec!["t", "Vba", "Vbc", "Ia", "Ic"], System::ThreeWire),
        ] {
            let ch = header(&names);
            let set = pick_set(&ch, Selection::default()).unwrap_or_else(|e| {
                panic!("{names:?}: {e}");
            });
            assert_eq!(set.system, system, "{names:?}");
            let got = names_of(&ch, &set);
            // every data channel but the time column is used, voltages first in phase order
            assert_eq!(got.len(), names.len() - 1, "{names:?}: {got:?}");
            assert_eq!(got[0], names[1], "{names:?}");
        }
        // the line voltages keep their direction: Vba is b to a
        let ch = header(&["t", "Vba", "Vbc", "Ia", "Ic"]);
        let set = pick_set(&ch, Selection::default()).unwrap();
        assert_eq!(set.voltages[0].place, Place::Line(Phase::B, Phase::A));
        assert_eq!(set.currents[1].place, Place::Phase(Phase::C));
    }

    #[test]
    fn a_phase_set_with_extra_channels_uses_the_set_and_names_the_rest() {
        let ch = header(&["t", "Va", "Vb", "Vc", "Ia", "Ib", "Ic", "trigger", "Tcase"]);
        let set = pick_set(&ch, Selection::default()).unwrap();
        assert_eq!(set.system, System::FourWire);
        assert!(matches!(
            &set.warnings[..],
            [Warning::ColumnsIgnored { columns }] if columns.len() == 2
        ));
    }

    #[test]
    fn doubled_phases_are_refused_with_the_list() {
        let ch = header(&["t", "Va", "Vb", "Vc", "Ia", "Ib", "Ic", "Ia2"]);
        // `Ia2` is no phase name: ignored. Two channels named for phase a are not.
        assert!(pick_set(&ch, Selection::default()).is_ok());
        let ch = header(&["t", "Va", "Vb", "Vc", "Ia", "Ib", "Ic", "I_L1"]);
        let sel = Selection {
            system: Some(System::FourWire),
            ..Default::default()
        };
        let e = pick_set(&ch, sel).unwrap_err().to_string();
        assert!(
            e.contains("2 current channels are named for phase a"),
            "{e}"
        );
        assert!(e.contains("--voltage Va,Vb,Vc --current Ia,Ib,Ic"), "{e}");
    }

    #[test]
    fn lists_are_for_three_phases_and_a_neutral_has_no_place_in_three_wire() {
        let ch = header(&["t", "A", "B", "C", "D"]);
        let list = ChannelSel::parse("2,3");
        let one = ChannelSel::Index(4);
        let sel = Selection {
            voltage: Some(&list),
            current: Some(&one),
            system: Some(System::Single),
            ..Default::default()
        };
        assert!(pick_set(&ch, sel).is_err());
        let ch = header(&["t", "Vab", "Vcb", "Ia", "Ic", "In"]);
        let n = ChannelSel::parse("In");
        let sel = Selection {
            neutral: Some(&n),
            ..Default::default()
        };
        let e = pick_set(&ch, sel).unwrap_err().to_string();
        assert!(e.contains("3-wire capture, which has no neutral"), "{e}");
    }
}
