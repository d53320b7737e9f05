//! The samples (`.dat`, or a `.cff`'s DAT section read in place): ASCII lines or binary
//! records of a sample number, a time stamp, the analog values and the status words.

use super::{Config, DataFormat};
use crate::capture::LoadError;
use crate::capture::error::LoadErrorKind;
use std::fs::File;
use std::io::{BufRead, BufReader, Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

/// Where a record's samples are: a whole `.dat` file, or the DAT section of a `.cff`.
#[derive(Debug, Clone)]
pub(super) struct DatSource {
    /// The file (errors name it).
    pub path: PathBuf,
    /// Where the samples start in it, bytes.
    pub offset: u64,
    /// How many bytes they may take.
    pub len: u64,
    /// Lines of the file before the samples' first line (ASCII errors name the file's line).
    pub lines_before: u64,
    /// The samples are a `.cff`'s last section: a section line among them is out of order.
    pub in_cff: bool,
}

impl DatSource {
    /// A whole `.dat` file.
    pub fn file(path: &Path) -> Result<DatSource, LoadError> {
        let meta = std::fs::metadata(path)
            .map_err(|e| LoadError::new(path, None, LoadErrorKind::Io(e)))?;
        Ok(DatSource {
            path: path.to_path_buf(),
            offset: 0,
            len: meta.len(),
            lines_before: 0,
            in_cff: false,
        })
    }
}

/// Reads the chosen analog channels (0-based among the analog channels) of every sample, as raw
/// values x, and the time stamps. Bounded by the samples' size in the file, never by the
/// header's counts.
pub(super) fn read_dat(
    src: &DatSource,
    cfg: &Config,
    chosen: &[usize],
) -> Result<(Vec<Vec<f64>>, Vec<f64>), LoadError> {
    let dat = src.path.as_path();
    let io = |e| LoadError::new(dat, None, LoadErrorKind::Io(e));
    let err = |line: Option<u64>, m: String| LoadError::new(dat, line, LoadErrorKind::BadRecord(m));
    let mut file = File::open(dat).map_err(io)?;
    file.seek(SeekFrom::Start(src.offset)).map_err(io)?;
    let file = file.take(src.len);
    let size = src.len;
    let n_analog = cfg.analog.len();
    let words = cfg.digital.len().div_ceil(16);
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); chosen.len()];
    let mut stamps = Vec::new();
    // room for `n` samples of every chosen channel and their stamps, or the error saying so
    let room = |columns: &mut Vec<Vec<f64>>, stamps: &mut Vec<f64>, n: usize| {
        let refused = |k| LoadError::new(dat, None, k);
        *columns = crate::capture::room::empty_columns(n, chosen.len()).map_err(refused)?;
        crate::capture::room::reserve(stamps, n, chosen.len() + 1).map_err(refused)
    };
    let missing = |k: usize, sample: u64| {
        format!(
            "sample {sample} of channel '{}' is marked as missing data",
            cfg.analog[k].id
        )
    };
    match cfg.format {
        DataFormat::Ascii => {
            // at least "1,0," per line: the sample count cannot pass a quarter of the size
            let cap = cfg.samples.min(size / 4) as usize;
            room(&mut columns, &mut stamps, cap)?;
            let reader = BufReader::new(file);
            let mut seen = 0u64;
            for (ln, line) in reader.lines().enumerate() {
                let line = line.map_err(io)?;
                let at = Some(src.lines_before + ln as u64 + 1);
                if src.in_cff && super::cff::looks_like_cff(line.trim_start().as_bytes()) {
                    return Err(err(
                        at,
                        "a section after the data section: the DAT section must be the last".into(),
                    ));
                }
                if line.trim().is_empty() {
                    continue;
                }
                seen += 1;
                if seen > cfg.samples {
                    break;
                }
                let f: Vec<&str> = line.split(',').map(str::trim).collect();
                if f.len() < 2 + n_analog {
                    return Err(err(
                        at,
                        format!(
                            "{} fields, expected {}",
                            f.len(),
                            2 + n_analog + cfg.digital.len()
                        ),
                    ));
                }
                stamps.push(f[1].parse::<f64>().unwrap_or(f64::NAN));
                for (col, &k) in columns.iter_mut().zip(chosen) {
                    let text = f[2 + k];
                    if text.is_empty() {
                        return Err(err(at, missing(k, seen)));
                    }
                    let x: f64 = text.parse().map_err(|_| {
                        err(
                            at,
                            format!(
                                "channel '{}' holds '{text}', expected a number",
                                cfg.analog[k].id
                            ),
                        )
                    })?;
                    if !x.is_finite() {
                        return Err(err(
                            at,
                            format!("channel '{}' holds '{text}'", cfg.analog[k].id),
                        ));
                    }
                    col.push(x);
                }
            }
        }
        format => {
            let width = format.width();
            let record = 8 + n_analog * width + 2 * words;
            let in_file = size / record as u64;
            if in_file < cfg.samples {
                return Err(err(
                    None,
                    format!(
                        "the data file holds {in_file} samples of {record} bytes, the \
                         configuration promises {}: it is cut short or does not belong to it",
                        cfg.samples
                    ),
                ));
            }
            let n = cfg.samples as usize;
            room(&mut columns, &mut stamps, n)?;
            let mut reader = BufReader::with_capacity(1 << 16, file);
            let mut buf = vec![0u8; record];
            for s in 0..n {
                reader.read_exact(&mut buf).map_err(io)?;
                let stamp = u32::from_le_bytes([buf[4], buf[5], buf[6], buf[7]]);
                stamps.push(if stamp == u32::MAX {
                    f64::NAN
                } else {
                    f64::from(stamp)
                });
                for (col, &k) in columns.iter_mut().zip(chosen) {
                    let at = 8 + k * width;
                    let x = match format {
                        DataFormat::Binary => {
                            let v = i16::from_le_bytes([buf[at], buf[at + 1]]);
                            (v != i16::MIN).then_some(f64::from(v))
                        }
                        DataFormat::Binary32 => {
                            let v = i32::from_le_bytes([
                                buf[at],
                                buf[at + 1],
                                buf[at + 2],
                                buf[at + 3],
                            ]);
                            (v != i32::MIN).then_some(f64::from(v))
                        }
                        _ => {
                            let v = f32::from_le_bytes([
                                buf[at],
                                buf[at + 1],
                                buf[at + 2],
                                buf[at + 3],
                            ]);
                            v.is_finite().then_some(f64::from(v))
                        }
                    };
                    col.push(x.ok_or_else(|| err(None, missing(k, s as u64 + 1)))?);
                }
            }
        }
    }
    let got = columns.first().map_or(stamps.len(), Vec::len) as u64;
    if got < cfg.samples {
        return Err(err(
            None,
            format!(
                "the data file holds {got} samples, the configuration promises {}",
                cfg.samples
            ),
        ));
    }
    Ok((columns, stamps))
}
