//! A small RIFF/WAVE header reader of our own.
//!
//! It walks the chunks up to `data` and describes the sample layout, so the WAV loader can check a
//! file before reading any sample and can read the layouts `hound` cannot (64-bit float, RF64,
//! odd-length chunks before `data`, valid bits narrower than their container).
//!
//! Layout as in the Microsoft RIFF/WAVE and WAVE_FORMAT_EXTENSIBLE descriptions and EBU Tech 3306
//! for RF64 (from memory): little-endian throughout, every chunk is an id, a 32-bit length and the
//! body, followed by one pad byte when the length is odd.

use super::LoadErrorKind;
use std::io::{self, BufReader, Read, Seek};

/// Format tag of plain integer PCM.
const TAG_PCM: u16 = 0x0001;
/// Format tag of IEEE floating point.
const TAG_FLOAT: u16 = 0x0003;
/// Format tag of WAVE_FORMAT_EXTENSIBLE: the real encoding is in the sub-format GUID.
const TAG_EXTENSIBLE: u16 = 0xFFFE;
/// Bytes 4..16 shared by the KSDATAFORMAT_SUBTYPE GUIDs; bytes 0..4 hold the format tag.
const GUID_TAIL: [u8; 12] = [
    0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];
/// The GUID tail, for building test files.
#[cfg(test)]
pub(super) const GUID_TAIL_FOR_TESTS: [u8; 12] = GUID_TAIL;
/// An RF64 32-bit length field that says "see the ds64 chunk".
const RF64_SEE_DS64: u32 = 0xFFFF_FFFF;

/// How one sample is stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Encoding {
    /// Signed little-endian integers (8-bit: unsigned offset binary).
    Int {
        /// Bytes per sample slot (1 to 4).
        container_bytes: u16,
        /// Bits that carry the signal (at most `8 * container_bytes`).
        valid_bits: u16,
    },
    /// IEEE 754 little-endian floats.
    Float {
        /// 4 or 8.
        bytes: u16,
    },
}

impl Encoding {
    /// Bits that carry the signal.
    pub(super) fn bits(self) -> u16 {
        match self {
            Encoding::Int { valid_bits, .. } => valid_bits,
            Encoding::Float { bytes } => bytes * 8,
        }
    }
}

/// What the header says about the samples, and where they are.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(super) struct WavHeader {
    /// Sample encoding.
    pub(super) encoding: Encoding,
    /// Interleaved channels (at least 1).
    pub(super) channels: u16,
    /// Sample rate in Hz as written (may be 0; the caller decides).
    pub(super) rate_hz: u32,
    /// Bytes per frame (one sample of every channel).
    pub(super) block_align: u16,
    /// Byte offset of the first sample.
    pub(super) data_offset: u64,
    /// Length of the sample data in bytes, as the header promises it.
    pub(super) data_len: u64,
    /// The file is RF64 (64-bit sizes in a ds64 chunk).
    pub(super) rf64: bool,
}

/// Reads the header of a RIFF/WAVE or RF64 file up to the start of the sample data.
///
/// `file_len` is the file's size in bytes, used to tell a cut-off header from a missing chunk.
/// On success the reader stands at the first sample byte.
pub(super) fn read_header<R: Read + Seek>(
    r: &mut BufReader<R>,
    file_len: u64,
) -> Result<WavHeader, LoadErrorKind> {
    let mut head = [0u8; 12];
    read_exact(r, &mut head, "the RIFF header")?;
    let rf64 = match &head[..4] {
        b"RIFF" => false,
        b"RF64" => true,
        _ => return Err(bad("no RIFF header")),
    };
    if &head[8..12] != b"WAVE" {
        return Err(bad("a RIFF file that is not WAVE"));
    }
    let mut pos: u64 = 12;
    let mut ds64_data_len: Option<u64> = None;
    let mut fmt: Option<Fmt> = None;
    loop {
        let mut ch = [0u8; 8];
        let got = read_up_to(r, &mut ch)?;
        if got < ch.len() {
            return Err(if got == 0 && pos >= file_len {
                bad("no sample data: the file has no data chunk")
            } else {
                bad("truncated header: the file ends inside a chunk header")
            });
        }
        pos += 8;
        let id = [ch[0], ch[1], ch[2], ch[3]];
        let len32 = u32::from_le_bytes([ch[4], ch[5], ch[6], ch[7]]);
        match &id {
            b"data" => {
                let fmt =
                    fmt.ok_or_else(|| bad("the sample data comes before the format chunk"))?;
                let data_len = if rf64 && len32 == RF64_SEE_DS64 {
                    ds64_data_len.ok_or_else(|| bad("RF64 file without its size table (ds64)"))?
                } else {
                    u64::from(len32)
                };
                return fmt.into_header(pos, data_len, rf64);
            }
            b"fmt " => {
                let mut body = [0u8; 40];
                let keep = (len32 as usize).min(body.len());
                check_inside(pos, u64::from(len32), file_len, &id)?;
                read_exact(r, &mut body[..keep], "the format chunk")?;
                fmt = Some(Fmt::parse(&body[..keep])?);
                skip(r, u64::from(len32) - keep as u64 + u64::from(len32 & 1))?;
            }
            b"ds64" if rf64 => {
                let mut body = [0u8; 16];
                if len32 < 16 {
                    return Err(bad("RF64 size table (ds64) is too short"));
                }
                check_inside(pos, u64::from(len32), file_len, &id)?;
                read_exact(r, &mut body, "the RF64 size table")?;
                ds64_data_len = Some(u64::from_le_bytes([
                    body[8], body[9], body[10], body[11], body[12], body[13], body[14], body[15],
                ]));
                skip(r, u64::from(len32) - 16 + u64::from(len32 & 1))?;
            }
            _ => {
                check_inside(pos, u64::from(len32), file_len, &id)?;
                skip(r, u64::from(len32) + u64::from(len32 & 1))?;
            }
        }
        pos += u64::from(len32) + u64::from(len32 & 1);
    }
}

/// The fields of a `fmt ` chunk that matter here.
struct Fmt {
    tag: u16,
    channels: u16,
    rate_hz: u32,
    block_align: u16,
    bits: u16,
    /// WAVE_FORMAT_EXTENSIBLE: valid bits and the sub-format tag.
    ext: Option<(u16, u16)>,
}

impl Fmt {
    fn parse(b: &[u8]) -> Result<Fmt, LoadErrorKind> {
        if b.len() < 16 {
            return Err(bad(format!(
                "format chunk too short ({} bytes, at least 16 needed)",
                b.len()
            )));
        }
        let u16_at = |i: usize| u16::from_le_bytes([b[i], b[i + 1]]);
        let tag = u16_at(0);
        let ext = if tag == TAG_EXTENSIBLE {
            if b.len() < 40 || u16_at(16) < 22 {
                return Err(bad("extensible format chunk is too short"));
            }
            if b[26..28] != [0, 0] || b[28..40] != GUID_TAIL {
                return Err(LoadErrorKind::UnsupportedWav(
                    "samples in a vendor-specific encoding (unknown sub-format)".into(),
                ));
            }
            Some((u16_at(18), u16_at(24)))
        } else {
            None
        };
        Ok(Fmt {
            tag,
            channels: u16_at(2),
            rate_hz: u32::from_le_bytes([b[4], b[5], b[6], b[7]]),
            block_align: u16_at(12),
            bits: u16_at(14),
            ext,
        })
    }

    fn into_header(
        self,
        data_offset: u64,
        data_len: u64,
        rf64: bool,
    ) -> Result<WavHeader, LoadErrorKind> {
        if self.channels == 0 {
            return Err(bad("the header declares 0 channels"));
        }
        if self.block_align == 0 || !self.block_align.is_multiple_of(self.channels) {
            return Err(bad(format!(
                "frame size of {} bytes does not fit {} channels",
                self.block_align, self.channels
            )));
        }
        let container_bytes = self.block_align / self.channels;
        let (tag, valid_bits) = match self.ext {
            Some((valid, sub)) => (sub, if valid == 0 { self.bits } else { valid }),
            None => (self.tag, self.bits),
        };
        if valid_bits == 0 || self.bits > container_bytes.saturating_mul(8) {
            return Err(bad(format!(
                "{}-bit samples do not fit a {}-byte frame slot",
                self.bits, container_bytes
            )));
        }
        if valid_bits > self.bits {
            return Err(bad(format!(
                "{valid_bits} valid bits in a {}-bit sample",
                self.bits
            )));
        }
        let encoding = match tag {
            TAG_PCM => {
                if !(1..=4).contains(&container_bytes) {
                    return Err(unsupported(format!("{}-bit integer samples", self.bits)));
                }
                if container_bytes == 1 && valid_bits != 8 {
                    return Err(unsupported(format!("{valid_bits}-bit samples")));
                }
                Encoding::Int {
                    container_bytes,
                    valid_bits,
                }
            }
            TAG_FLOAT => {
                if !(container_bytes == 4 || container_bytes == 8)
                    || valid_bits != container_bytes * 8
                {
                    return Err(unsupported(if valid_bits == container_bytes * 8 {
                        format!("{valid_bits}-bit float samples")
                    } else {
                        format!(
                            "{valid_bits}-bit float samples in {}-bit slots",
                            container_bytes * 8
                        )
                    }));
                }
                Encoding::Float {
                    bytes: container_bytes,
                }
            }
            other => return Err(unsupported(tag_name(other))),
        };
        Ok(WavHeader {
            encoding,
            channels: self.channels,
            rate_hz: self.rate_hz,
            block_align: self.block_align,
            data_offset,
            data_len,
            rf64,
        })
    }
}

/// Plain words for the format tags one meets in practice (Microsoft's registered tag list).
fn tag_name(tag: u16) -> String {
    match tag {
        0x0002 | 0x0011 => "ADPCM-compressed samples".into(),
        0x0006 => "A-law compressed samples".into(),
        0x0007 => "µ-law compressed samples".into(),
        0x0050 | 0x0055 => "MPEG (MP3) compressed samples".into(),
        other => format!("sample encoding {other:#06x}, neither plain integer nor float"),
    }
}

fn bad(what: impl Into<String>) -> LoadErrorKind {
    LoadErrorKind::BadWav(what.into())
}

fn unsupported(what: impl Into<String>) -> LoadErrorKind {
    LoadErrorKind::UnsupportedWav(what.into())
}

/// A chunk body that runs past the end of the file means the header was cut off.
fn check_inside(pos: u64, len: u64, file_len: u64, id: &[u8; 4]) -> Result<(), LoadErrorKind> {
    if pos.saturating_add(len) > file_len {
        return Err(bad(format!(
            "truncated header: the file ends inside the '{}' chunk",
            id.escape_ascii()
        )));
    }
    Ok(())
}

fn read_exact(r: &mut impl Read, buf: &mut [u8], what: &str) -> Result<(), LoadErrorKind> {
    r.read_exact(buf).map_err(|e| match e.kind() {
        io::ErrorKind::UnexpectedEof => {
            bad(format!("truncated header: the file ends inside {what}"))
        }
        _ => LoadErrorKind::Io(e),
    })
}

fn read_up_to(r: &mut impl Read, buf: &mut [u8]) -> Result<usize, LoadErrorKind> {
    let mut n = 0;
    while n < buf.len() {
        match r.read(&mut buf[n..]) {
            Ok(0) => break,
            Ok(k) => n += k,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(LoadErrorKind::Io(e)),
        }
    }
    Ok(n)
}

fn skip<R: Read + Seek>(r: &mut BufReader<R>, n: u64) -> Result<(), LoadErrorKind> {
    if n == 0 {
        return Ok(());
    }
    // A chunk length is at most 2^32, so it always fits an i64.
    let n = i64::try_from(n).map_err(|_| bad("chunk length out of range"))?;
    r.seek_relative(n).map_err(LoadErrorKind::Io)
}
