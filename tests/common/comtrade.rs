//! A COMTRADE (IEEE C37.111-1999) writer of our own for the tests: `.cfg` text and `.dat` samples
//! in each data format, as the standard lays them out (from memory).

use std::path::{Path, PathBuf};

/// One analog channel of a record to write.
pub struct Chan {
    pub id: &'static str,
    pub ph: &'static str,
    pub units: &'static str,
    pub a: f64,
    pub b: f64,
    pub skew_us: f64,
    pub ratio: (f64, f64, char),
    pub raw: Vec<f64>,
}

#[derive(Clone, Copy, PartialEq, Debug)]
pub enum Fmt {
    Ascii,
    Binary,
    Binary32,
    Float32,
}

impl Fmt {
    pub fn name(self) -> &'static str {
        match self {
            Fmt::Ascii => "ASCII",
            Fmt::Binary => "BINARY",
            Fmt::Binary32 => "BINARY32",
            Fmt::Float32 => "FLOAT32",
        }
    }
}

/// Writes `name.cfg` and `name.dat` (1999 revision, one rate, triggered 0.1 s after the first
/// sample) and returns the cfg's path.
pub fn write_record(dir: &Path, name: &str, chans: &[Chan], rate: f64, fmt: Fmt) -> PathBuf {
    write_record_at(
        dir,
        name,
        chans,
        rate,
        fmt,
        ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000"),
    )
}

/// [`write_record`] with the start and trigger date-times as given.
pub fn write_record_at(
    dir: &Path,
    name: &str,
    chans: &[Chan],
    rate: f64,
    fmt: Fmt,
    times: (&str, &str),
) -> PathBuf {
    let n = chans[0].raw.len();
    write_record_rates(dir, name, chans, &[(rate, n)], fmt, times)
}

/// The time of each sample, seconds after the first, of a record at `rates` (each rate with the
/// 1-based number of its last sample): the samples of each rate are `1 / rate` apart and the
/// first sample at a new rate comes one interval of the old rate after the last sample at it
/// (IEEE C37.111 `samp,endsamp` lines, from memory).
pub fn sample_times(rates: &[(f64, usize)]) -> Vec<f64> {
    let mut times = Vec::new();
    let (mut first, mut start) = (0usize, 0.0);
    for &(rate, end) in rates {
        for k in first..end {
            times.push(start + (k - first) as f64 / rate);
        }
        start += (end - first) as f64 / rate;
        first = end;
    }
    times
}

/// Writes `name.cfg` and `name.dat` (1999 revision) with one `samp,endsamp` line per entry of
/// `rates` (the rate and the 1-based number of its last sample; the last must be the channels'
/// length) and returns the cfg's path.
pub fn write_record_rates(
    dir: &Path,
    name: &str,
    chans: &[Chan],
    rates: &[(f64, usize)],
    fmt: Fmt,
    (start, trigger): (&str, &str),
) -> PathBuf {
    let n = chans[0].raw.len();
    assert_eq!(
        rates.last().map(|r| r.1),
        Some(n),
        "the last rate ends at the last sample"
    );
    let mut cfg = format!(
        "Test bench recorder,unit 1,1999\n{},{}A,0D\n",
        chans.len(),
        chans.len()
    );
    for (k, c) in chans.iter().enumerate() {
        cfg.push_str(&format!(
            "{},{},{},bench,{},{},{},{},-2147483647,2147483647,{},{},{}\n",
            k + 1,
            c.id,
            c.ph,
            c.units,
            c.a,
            c.b,
            c.skew_us,
            c.ratio.0,
            c.ratio.1,
            c.ratio.2
        ));
    }
    cfg.push_str(&format!("50\n{}\n", rates.len()));
    for (rate, end) in rates {
        cfg.push_str(&format!("{rate},{end}\n"));
    }
    cfg.push_str(&format!("{start}\n{trigger}\n{}\n1\n", fmt.name()));
    let cfg_path = dir.join(format!("{name}.cfg"));
    std::fs::write(&cfg_path, cfg).unwrap();
    let times = sample_times(rates);
    let mut dat = Vec::new();
    for (s, t) in times.iter().enumerate() {
        let stamp = (t * 1e6).round() as u32;
        match fmt {
            Fmt::Ascii => {
                let vals: Vec<String> = chans.iter().map(|c| format!("{}", c.raw[s])).collect();
                dat.extend(format!("{},{},{}\n", s + 1, stamp, vals.join(",")).bytes());
            }
            _ => {
                dat.extend((s as u32 + 1).to_le_bytes());
                dat.extend(stamp.to_le_bytes());
                for c in chans {
                    match fmt {
                        Fmt::Binary => dat.extend((c.raw[s] as i16).to_le_bytes()),
                        Fmt::Binary32 => dat.extend((c.raw[s] as i32).to_le_bytes()),
                        _ => dat.extend((c.raw[s] as f32).to_le_bytes()),
                    }
                }
            }
        }
    }
    std::fs::write(dir.join(format!("{name}.dat")), dat).unwrap();
    cfg_path
}

/// How [`write_cff`] lays a single-file record out.
#[derive(Clone, Copy, PartialEq, Debug)]
pub struct CffLayout {
    /// Lines end in CR LF (as the standard writes them) rather than LF.
    pub crlf: bool,
    /// INF and HDR sections between the CFG and DAT sections.
    pub inf_hdr: bool,
}

/// Writes `name.cff` (IEEE C37.111-2013 single-file form, from memory) from the `.cfg` and
/// `.dat` pair at `cfg` in `fmt`: the CFG section holds the `.cfg`'s lines, the DAT section the
/// `.dat`'s bytes as they are, after `--- file type: DAT ASCII ---` or
/// `--- file type: DAT BINARY: <bytes> ---`. Returns its path.
pub fn write_cff(cfg: &Path, fmt: Fmt, name: &str, layout: CffLayout) -> PathBuf {
    let eol = if layout.crlf { "\r\n" } else { "\n" };
    let text = std::fs::read_to_string(cfg).unwrap();
    let dat = std::fs::read(cfg.with_extension("dat")).unwrap();
    let mut out = format!("--- file type: CFG ---{eol}");
    for line in text.lines() {
        out.push_str(line);
        out.push_str(eol);
    }
    if layout.inf_hdr {
        out.push_str(&format!(
            "--- file type: INF ---{eol}[Public Record_Information]{eol}Source=bench{eol}\
             --- file type: HDR ---{eol}Bench recorder, unit 1: a test record{eol}"
        ));
    }
    let mut bytes = match fmt {
        Fmt::Ascii => format!("--- file type: DAT ASCII ---{eol}").into_bytes(),
        _ => format!("--- file type: DAT BINARY: {} ---{eol}", dat.len()).into_bytes(),
    };
    let mut all = out.into_bytes();
    all.append(&mut bytes);
    if fmt == Fmt::Ascii && layout.crlf {
        for line in String::from_utf8(dat).unwrap().lines() {
            all.extend(line.bytes());
            all.extend(eol.bytes());
        }
    } else {
        all.extend(dat);
    }
    let path = cfg.with_file_name(format!("{name}.cff"));
    std::fs::write(&path, all).unwrap();
    path
}
