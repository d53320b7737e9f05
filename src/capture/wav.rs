//! WAV loader: a RIFF/WAVE (or RF64) file becomes a [`Capture`].
//!
//! Our own small header reader ([`riff`]) checks the file first, so every problem is named before a
//! sample is read: a cut-off header or data chunk, an empty data chunk, one channel, a zero rate, a
//! compressed or unusual encoding. Our own sample reader then reads the two selected channels in
//! large blocks: 8/16/24/32-bit integers, 32 and 64-bit float, RF64, odd-length chunks before the
//! data (with their RIFF pad byte), and valid bits narrower than their slot (24 bits in 32, 20 in
//! 24, 12 in 16). The tests hold it to `hound`, an outside reader, on every layout `hound` reads
//! faithfully; `hound` reads sample by sample, which took about a sixth of a batch's time on short
//! captures, so it is not the reader in use.
//!
//! Samples are normalised to full scale = 1.0: integers are divided by 2^(bits-1) (8-bit samples
//! are unsigned offset binary in the file, 128 = zero); floats are kept as they are.
//!
//! Valid bits narrower than their slot are left-justified (low bits zero) according to Microsoft's
//! WAVE_FORMAT_EXTENSIBLE description, but `hound` writes them right-justified (low bits, top byte
//! zero). The two are told apart by the samples themselves: if every unused low bit is zero the
//! spec's layout is taken, else if every sample fits the valid bits counted from the bottom the
//! right-justified layout is taken, else the file is refused as damaged.

#[path = "riff.rs"]
mod riff;

use super::{
    Capture, CaptureHead, Channel, Content, LoadError, LoadErrorKind, LoadOptions, SourceFormat,
};
use crate::warning::Warning;
use riff::{Encoding, WavHeader};
use std::fs::File;
use std::io::{self, BufReader, Read};
use std::path::Path;

/// Size of the read buffers: large enough that system calls do not matter.
const BUF_BYTES: usize = 1 << 18;

/// Relative difference between a given rate and the file's rate that counts as a mismatch.
const RATE_TOLERANCE: f64 = 1e-9;

/// The samples of the chosen channels, in the order asked for.
type Pair = Vec<Vec<f64>>;

/// Which code reads the samples (tests read with `hound` too, to compare).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum SampleReader {
    /// Our own reader, for every layout.
    Own,
    /// `hound` where it reads the layout faithfully, our own reader otherwise.
    #[cfg(test)]
    Hound,
}

/// Loads the voltage and current channels of a WAV file, normalised to full scale = 1.0.
///
/// Channels are named `channel 1`, `channel 2`, ... and chosen by [`super::pick_channels`]. Only
/// the two chosen channels are kept in memory. `opts.rate_hz` overrides the header's rate (with a
/// [`Warning::RateMismatch`] when they differ).
pub(crate) fn load(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    load_with(path, opts, SampleReader::Own).map_err(|kind| LoadError::new(path, None, kind))
}

fn load_with(
    path: &Path,
    opts: &LoadOptions,
    reader: SampleReader,
) -> Result<Capture, LoadErrorKind> {
    let file = File::open(path)?;
    let file_len = file.metadata()?.len();
    let mut r = BufReader::with_capacity(BUF_BYTES, file);
    let h = riff::read_header(&mut r, file_len)?;
    if h.channels < 2 {
        return Err(LoadErrorKind::OneChannel);
    }
    let channels: Vec<Channel> = (1..=usize::from(h.channels))
        .map(|n| Channel::unnamed(format!("channel {n}"), n, Content::Numbers))
        .collect();
    let set = super::pick_set(&channels, super::selection(opts))?;
    let (sample_rate_hz, warnings) = sample_rate(h.rate_hz, opts.rate_hz)?;
    let frames = frame_count(&h, file_len)?;

    let pick = Picked {
        frames,
        block: usize::from(h.block_align),
        wanted: set.wanted(),
    };
    let from_hound = match reader {
        #[cfg(test)]
        SampleReader::Hound if hound_reads(&h) => read_with_hound(path, &h, &pick)?,
        _ => None,
    };
    let columns = match from_hound {
        Some(traces) => traces,
        None => read_own(&mut r, h.encoding, &pick)?,
    };
    if let Encoding::Float { .. } = h.encoding {
        for (samples, &k) in columns.iter().zip(&pick.wanted) {
            check_finite(samples, k)?;
        }
    }
    let head = CaptureHead {
        path: path.to_path_buf(),
        format: SourceFormat::Wav {
            bits: h.encoding.bits(),
            float: matches!(h.encoding, Encoding::Float { .. }),
            channels: h.channels,
        },
        sample_rate_hz,
        time: None,
        warnings,
        times: None,
    };
    Ok(Capture::assemble(head, &channels, &set, columns, Some(1.0)))
}

/// The header's rate, or the given one with a warning when they differ.
fn sample_rate(file_hz: u32, given: Option<f64>) -> Result<(f64, Vec<Warning>), LoadErrorKind> {
    let file_hz = f64::from(file_hz);
    match given {
        None if file_hz > 0.0 => Ok((file_hz, Vec::new())),
        None => Err(LoadErrorKind::BadRate(file_hz)),
        Some(g) if !(g.is_finite() && g > 0.0) => Err(LoadErrorKind::BadRate(g)),
        Some(g) if (g - file_hz).abs() > RATE_TOLERANCE * file_hz => Ok((
            g,
            vec![Warning::RateMismatch {
                given_hz: g,
                file_hz,
            }],
        )),
        Some(_) => Ok((file_hz, Vec::new())),
    }
}

/// Frames (samples per channel) in the data chunk, after checking the file holds all of them.
fn frame_count(h: &WavHeader, file_len: u64) -> Result<u64, LoadErrorKind> {
    let block = u64::from(h.block_align);
    let expected = h.data_len / block;
    let available = file_len.saturating_sub(h.data_offset);
    if h.data_len == 0 {
        return Err(LoadErrorKind::TooShort(0));
    }
    if available < h.data_len {
        return Err(LoadErrorKind::Truncated {
            expected,
            found: available / block,
        });
    }
    if !h.data_len.is_multiple_of(block) {
        return Err(LoadErrorKind::BadWav(format!(
            "the sample data ({} bytes) is not a whole number of {}-byte frames",
            h.data_len, block
        )));
    }
    if expected < 2 {
        return Err(LoadErrorKind::TooShort(expected as usize));
    }
    Ok(expected)
}

/// What to read: how many frames, their size, and which channels to keep (0-based, in order).
struct Picked {
    frames: u64,
    block: usize,
    wanted: Vec<usize>,
}

impl Picked {
    /// Empty traces sized for the whole record (the file was checked to hold it).
    fn vecs(&self) -> Result<Pair, LoadErrorKind> {
        let n = usize::try_from(self.frames).map_err(|_| {
            LoadErrorKind::UnsupportedWav("too many samples for this computer".into())
        })?;
        super::room::empty_columns(n, self.wanted.len())
    }
}

#[cfg(test)]
/// Layouts `hound` reads faithfully; the rest go to our own reader.
fn hound_reads(h: &WavHeader) -> bool {
    !h.rf64
        && match h.encoding {
            Encoding::Int {
                container_bytes,
                valid_bits,
            } => valid_bits == container_bytes * 8,
            Encoding::Float { bytes } => bytes == 4,
        }
}

#[cfg(test)]
/// Reads the two channels with `hound`; `Ok(None)` when `hound` refuses the file (our header reader
/// accepted it, so our own reader takes over: an odd-length chunk before the data, for instance).
fn read_with_hound(
    path: &Path,
    h: &WavHeader,
    pick: &Picked,
) -> Result<Option<Pair>, LoadErrorKind> {
    let file = File::open(path)?;
    let Ok(reader) = hound::WavReader::new(BufReader::with_capacity(BUF_BYTES, file)) else {
        return Ok(None);
    };
    let spec = reader.spec();
    if spec.channels != h.channels || u64::from(reader.len()) != pick.frames * u64::from(h.channels)
    {
        // hound found another data chunk or layout than we did; trust the checked reading.
        return Ok(None);
    }
    let traces = match h.encoding {
        Encoding::Int { valid_bits, .. } => {
            let scale = (-f64::from(valid_bits - 1)).exp2();
            hound_samples(reader.into_samples::<i32>(), h.channels, pick, |s| {
                f64::from(s) * scale
            })?
        }
        Encoding::Float { .. } => {
            hound_samples(reader.into_samples::<f32>(), h.channels, pick, f64::from)?
        }
    };
    Ok(Some(traces))
}

#[cfg(test)]
/// Deinterleaves `hound`'s samples, keeping only the two picked channels.
fn hound_samples<S>(
    samples: impl Iterator<Item = hound::Result<S>>,
    channels: u16,
    pick: &Picked,
    to_f64: impl Fn(S) -> f64,
) -> Result<Pair, LoadErrorKind> {
    let mut out = pick.vecs()?;
    let channels = usize::from(channels);
    let mut c = 0;
    let mut frame = vec![0.0; channels];
    for s in samples {
        let s = match s {
            Ok(s) => s,
            Err(hound::Error::IoError(_)) => break, // the file ended early: counted below
            Err(e) => return Err(LoadErrorKind::BadWav(e.to_string())),
        };
        frame[c] = to_f64(s);
        c += 1;
        if c == channels {
            c = 0;
            for (col, &k) in out.iter_mut().zip(&pick.wanted) {
                col.push(frame[k]);
            }
        }
    }
    let found = out.iter().map(Vec::len).min().unwrap_or(0) as u64;
    if found < pick.frames {
        return Err(LoadErrorKind::Truncated {
            expected: pick.frames,
            found,
        });
    }
    Ok(out)
}

/// Reads the chosen channels with our own reader; `r` stands at the first sample byte.
fn read_own<R: Read>(r: &mut R, encoding: Encoding, pick: &Picked) -> Result<Pair, LoadErrorKind> {
    match encoding {
        Encoding::Int {
            container_bytes,
            valid_bits,
        } => {
            let bits = container_bytes * 8;
            match container_bytes {
                1 => read_ints(r, pick, bits, valid_bits, |b| i32::from(b[0]) - 128),
                2 => read_ints(r, pick, bits, valid_bits, |b| {
                    i32::from(i16::from_le_bytes([b[0], b[1]]))
                }),
                3 => read_ints(r, pick, bits, valid_bits, |b| {
                    i32::from_le_bytes([0, b[0], b[1], b[2]]) >> 8
                }),
                _ => read_ints(r, pick, bits, valid_bits, |b| {
                    i32::from_le_bytes([b[0], b[1], b[2], b[3]])
                }),
            }
        }
        Encoding::Float { bytes: 4 } => read_floats(r, pick, 4, |b| {
            f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        }),
        Encoding::Float { .. } => read_floats(r, pick, 8, |b| {
            f64::from_le_bytes([b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]])
        }),
    }
}

/// Reads integer samples; `decode` turns one slot into a sign-extended `container_bits` integer.
fn read_ints<R: Read>(
    r: &mut R,
    pick: &Picked,
    container_bits: u16,
    valid_bits: u16,
    decode: impl Fn(&[u8]) -> i32,
) -> Result<Pair, LoadErrorKind> {
    let mut out = pick.vecs()?;
    let slot = usize::from(container_bits / 8);
    let offsets: Vec<usize> = pick.wanted.iter().map(|&k| k * slot).collect();
    // Left-justified reading (the spec's): the whole slot is the sample.
    let scale = (-f64::from(container_bits - 1)).exp2();
    let pad = u32::from(container_bits - valid_bits);
    if pad == 0 {
        for_each_frame(r, pick, |f| {
            for (col, &o) in out.iter_mut().zip(&offsets) {
                col.push(f64::from(decode(&f[o..])) * scale);
            }
        })?;
        return Ok(out);
    }
    let low_mask = (1i32 << pad) - 1;
    let mut low_bits = 0i32;
    let mut fits_low = true;
    let fits = |x: i32| fits_right_justified(x, u32::from(container_bits), u32::from(valid_bits));
    for_each_frame(r, pick, |f| {
        for (col, &o) in out.iter_mut().zip(&offsets) {
            let a = decode(&f[o..]);
            low_bits |= a & low_mask;
            fits_low &= fits(a);
            col.push(f64::from(a) * scale);
        }
    })?;
    if low_bits == 0 {
        return Ok(out);
    }
    if !fits_low {
        return Err(LoadErrorKind::BadWav(format!(
            "samples do not fit the {valid_bits} valid bits the header declares \
             (neither at the top nor at the bottom of their {container_bits}-bit slots)"
        )));
    }
    // Right-justified after all: the sample is the low `valid_bits`, sign-extended.
    let up = (-f64::from(container_bits - 1)).exp2().recip();
    let shift = 32 - u32::from(valid_bits);
    let rescale = (-f64::from(valid_bits - 1)).exp2();
    for x in out.iter_mut().flatten() {
        let slot_value = (*x * up) as i32; // exact: x was a slot integer times 2^-(bits-1)
        *x = f64::from(((slot_value as u32) << shift) as i32 >> shift) * rescale;
    }
    Ok(out)
}

/// True when `x` (a sign-extended slot integer) holds a right-justified `valid`-bit sample: the
/// bits above it are all zero (as `hound` writes them) or all copies of its sign bit.
fn fits_right_justified(x: i32, container: u32, valid: u32) -> bool {
    let slot = if container == 32 {
        x as u32
    } else {
        (x as u32) & ((1u32 << container) - 1)
    };
    let high = slot >> valid;
    let all_ones = (1u32 << (container - valid)) - 1;
    high == 0 || (high == all_ones && (slot >> (valid - 1)) & 1 == 1)
}

/// Reads float samples; `decode` turns one slot into an `f64`.
fn read_floats<R: Read>(
    r: &mut R,
    pick: &Picked,
    slot: usize,
    decode: impl Fn(&[u8]) -> f64,
) -> Result<Pair, LoadErrorKind> {
    let mut out = pick.vecs()?;
    let offsets: Vec<usize> = pick.wanted.iter().map(|&k| k * slot).collect();
    for_each_frame(r, pick, |f| {
        for (col, &o) in out.iter_mut().zip(&offsets) {
            col.push(decode(&f[o..]));
        }
    })?;
    Ok(out)
}

/// Calls `f` on every frame of the data, reading large blocks; a short file is `Truncated`.
fn for_each_frame<R: Read>(
    r: &mut R,
    pick: &Picked,
    mut f: impl FnMut(&[u8]),
) -> Result<(), LoadErrorKind> {
    let per_read = (BUF_BYTES / pick.block).max(1);
    let mut buf = vec![0u8; per_read * pick.block];
    let mut done = 0u64;
    while done < pick.frames {
        let want = (pick.frames - done).min(per_read as u64) as usize * pick.block;
        let got = read_up_to(r, &mut buf[..want])?;
        let whole = got / pick.block;
        for frame in buf[..whole * pick.block].chunks_exact(pick.block) {
            f(frame);
        }
        done += whole as u64;
        if got < want {
            return Err(LoadErrorKind::Truncated {
                expected: pick.frames,
                found: done,
            });
        }
    }
    Ok(())
}

fn read_up_to(r: &mut impl Read, buf: &mut [u8]) -> io::Result<usize> {
    let mut n = 0;
    while n < buf.len() {
        match r.read(&mut buf[n..]) {
            Ok(0) => break,
            Ok(k) => n += k,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(n)
}

/// A NaN or infinite float sample would poison every result: refuse the file and say where.
fn check_finite(samples: &[f64], channel: usize) -> Result<(), LoadErrorKind> {
    match samples.iter().position(|x| !x.is_finite()) {
        None => Ok(()),
        Some(k) => Err(LoadErrorKind::BadWav(format!(
            "channel {} sample {} is {}, not a finite number",
            channel + 1,
            k + 1,
            samples[k]
        ))),
    }
}

#[cfg(test)]
mod tests {
    //! Test files are built byte by byte after the Microsoft RIFF/WAVE and WAVE_FORMAT_EXTENSIBLE
    //! layouts and EBU Tech 3306 (RF64), from memory, or written by `hound` (an outside reader and
    //! writer). Expected values are worked out by hand from the integer codes.

    use super::*;
    use crate::capture::ChannelSel;
    use std::path::PathBuf;
    use tempfile::TempDir;

    /// One RIFF chunk: id, 32-bit length, body, pad byte when the length is odd.
    fn chunk(id: &[u8; 4], body: &[u8]) -> Vec<u8> {
        let mut out = id.to_vec();
        out.extend_from_slice(&(body.len() as u32).to_le_bytes());
        out.extend_from_slice(body);
        if body.len() % 2 == 1 {
            out.push(0);
        }
        out
    }

    /// A RIFF/WAVE file of the given chunks.
    fn riff(chunks: &[Vec<u8>]) -> Vec<u8> {
        let body: Vec<u8> = chunks.concat();
        let mut out = b"RIFF".to_vec();
        out.extend_from_slice(&(body.len() as u32 + 4).to_le_bytes());
        out.extend_from_slice(b"WAVE");
        out.extend_from_slice(&body);
        out
    }

    /// A plain (16-byte) fmt chunk.
    fn fmt(tag: u16, channels: u16, rate: u32, bits: u16, block: u16) -> Vec<u8> {
        let mut b = Vec::new();
        b.extend_from_slice(&tag.to_le_bytes());
        b.extend_from_slice(&channels.to_le_bytes());
        b.extend_from_slice(&rate.to_le_bytes());
        b.extend_from_slice(&(rate * u32::from(block)).to_le_bytes());
        b.extend_from_slice(&block.to_le_bytes());
        b.extend_from_slice(&bits.to_le_bytes());
        chunk(b"fmt ", &b)
    }

    /// A WAVE_FORMAT_EXTENSIBLE fmt chunk (cbSize 22) with a KSDATAFORMAT sub-format.
    fn fmt_ext(channels: u16, rate: u32, container: u16, valid: u16, sub: u16) -> Vec<u8> {
        let block = channels * container / 8;
        let mut b = Vec::new();
        b.extend_from_slice(&0xFFFEu16.to_le_bytes());
        b.extend_from_slice(&channels.to_le_bytes());
        b.extend_from_slice(&rate.to_le_bytes());
        b.extend_from_slice(&(rate * u32::from(block)).to_le_bytes());
        b.extend_from_slice(&block.to_le_bytes());
        b.extend_from_slice(&container.to_le_bytes());
        b.extend_from_slice(&22u16.to_le_bytes());
        b.extend_from_slice(&valid.to_le_bytes());
        b.extend_from_slice(&0u32.to_le_bytes()); // channel mask
        b.extend_from_slice(&sub.to_le_bytes());
        b.extend_from_slice(&[0, 0]);
        b.extend_from_slice(&riff::GUID_TAIL_FOR_TESTS);
        chunk(b"fmt ", &b)
    }

    /// Little-endian bytes of each code, `bytes` wide (two's complement, top bytes dropped).
    fn le(codes: &[i64], bytes: usize) -> Vec<u8> {
        codes
            .iter()
            .flat_map(|c| c.to_le_bytes()[..bytes].to_vec())
            .collect()
    }

    fn write(bytes: &[u8]) -> (TempDir, PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.wav");
        std::fs::write(&path, bytes).unwrap();
        (dir, path)
    }

    fn load_bytes(bytes: &[u8]) -> Result<Capture, LoadErrorKind> {
        let (_dir, path) = write(bytes);
        load(&path, &LoadOptions::default()).map_err(|e| e.kind)
    }

    fn interleave(frames: &[[i64; 2]]) -> Vec<i64> {
        frames.iter().flatten().copied().collect()
    }

    #[test]
    fn sixteen_bit_codes_scale_by_two_to_the_fifteen() {
        let codes = interleave(&[[16384, -16384], [32767, -32768], [0, 1]]);
        let c = load_bytes(&riff(&[
            fmt(1, 2, 8000, 16, 4),
            chunk(b"data", &le(&codes, 2)),
        ]))
        .unwrap();
        assert_eq!(c.voltage().samples, [0.5, 32767.0 / 32768.0, 0.0]);
        assert_eq!(c.current().samples, [-0.5, -1.0, 1.0 / 32768.0]);
        assert_eq!(c.voltage().channel.name, "channel 1");
        assert_eq!(c.current().channel.name, "channel 2");
        assert_eq!(c.voltage().chosen_by, crate::capture::ChosenBy::Order);
        assert_eq!(c.voltage().full_scale, Some(1.0));
        assert_eq!(c.sample_rate_hz, 8000.0);
        assert_eq!(
            c.format,
            SourceFormat::Wav {
                bits: 16,
                float: false,
                channels: 2
            }
        );
        // Two unnamed channels are taken in order, and the output says so.
        assert_eq!(c.warnings.len(), 1, "{:?}", c.warnings);
        assert_eq!(c.warnings[0].code(), "channel-assumed");
    }

    #[test]
    fn eight_bit_samples_are_offset_binary_centred_on_128() {
        // Microsoft RIFF/WAVE: 8-bit PCM is unsigned, 128 is zero.
        let data = [128u8, 192, 0, 255, 64, 129];
        let c = load_bytes(&riff(&[fmt(1, 2, 8000, 8, 2), chunk(b"data", &data)])).unwrap();
        assert_eq!(c.voltage().samples, [0.0, -1.0, -0.5]);
        assert_eq!(c.current().samples, [0.5, 127.0 / 128.0, 1.0 / 128.0]);
    }

    #[test]
    fn twenty_four_bit_three_byte_codes_scale_by_two_to_the_twenty_three() {
        let codes = interleave(&[[-4_194_304, 4_194_304], [8_388_607, -8_388_608]]);
        let c = load_bytes(&riff(&[
            fmt(1, 2, 8000, 24, 6),
            chunk(b"data", &le(&codes, 3)),
        ]))
        .unwrap();
        assert_eq!(c.voltage().samples, [-0.5, 8_388_607.0 / 8_388_608.0]);
        assert_eq!(c.current().samples, [0.5, -1.0]);
    }

    #[test]
    fn thirty_two_bit_codes_scale_by_two_to_the_thirty_one() {
        let codes = interleave(&[[1 << 30, -(1 << 30)], [i64::from(i32::MIN), 1]]);
        let c = load_bytes(&riff(&[
            fmt(1, 2, 8000, 32, 8),
            chunk(b"data", &le(&codes, 4)),
        ]))
        .unwrap();
        assert_eq!(c.voltage().samples, [0.5, -1.0]);
        assert_eq!(c.current().samples, [-0.5, 2f64.powi(-31)]);
    }

    #[test]
    fn twenty_four_valid_bits_left_justified_in_32_follow_the_extensible_layout() {
        // WAVE_FORMAT_EXTENSIBLE: valid bits sit at the top of the slot, unused low bits zero.
        let codes = interleave(&[[-4_194_304 << 8, 4_194_304 << 8], [8_388_607 << 8, -1 << 8]]);
        let bytes = riff(&[fmt_ext(2, 8000, 32, 24, 1), chunk(b"data", &le(&codes, 4))]);
        let c = load_bytes(&bytes).unwrap();
        assert_eq!(c.voltage().samples, [-0.5, 8_388_607.0 / 8_388_608.0]);
        assert_eq!(c.current().samples, [0.5, -1.0 / 8_388_608.0]);
        assert_eq!(
            c.format,
            SourceFormat::Wav {
                bits: 24,
                float: false,
                channels: 2
            }
        );
    }

    #[test]
    fn twenty_four_bits_right_justified_in_32_as_hound_writes_them_read_the_same() {
        let (_dir, path) = {
            let dir = tempfile::tempdir().unwrap();
            let path = dir.path().join("t.wav");
            let spec = hound::WavSpecEx {
                spec: hound::WavSpec {
                    channels: 2,
                    sample_rate: 8000,
                    bits_per_sample: 24,
                    sample_format: hound::SampleFormat::Int,
                },
                bytes_per_sample: 4,
            };
            let file = std::io::BufWriter::new(File::create(&path).unwrap());
            let mut w = hound::WavWriter::new_with_spec_ex(file, spec).unwrap();
            for s in [-4_194_304, 4_194_305, 8_388_607, -8_388_608] {
                w.write_sample(s).unwrap();
            }
            w.finalize().unwrap();
            (dir, path)
        };
        let c = load(&path, &LoadOptions::default()).unwrap();
        assert_eq!(c.voltage().samples, [-0.5, 8_388_607.0 / 8_388_608.0]);
        assert_eq!(c.current().samples, [4_194_305.0 / 8_388_608.0, -1.0]);
    }

    #[test]
    fn samples_that_fit_neither_justification_are_refused() {
        // 0x0100_0001: low byte set (not left-justified), top byte neither 0x00 nor 0xFF.
        let codes = [0x0100_0001i64, 0, 0, 0];
        let bytes = riff(&[fmt_ext(2, 8000, 32, 24, 1), chunk(b"data", &le(&codes, 4))]);
        let e = load_bytes(&bytes).unwrap_err();
        assert!(
            matches!(e, LoadErrorKind::BadWav(ref m) if m.contains("24 valid bits")),
            "{e}"
        );
    }

    #[test]
    fn twelve_bit_samples_in_16_bit_slots_scale_as_16_bit_codes() {
        // Plain tag 1 with 12 bits: left-justified in the 16-bit slot (Microsoft RIFF/WAVE).
        let codes = interleave(&[[0x4000, -0x4000], [0x7FF0, -0x10]]);
        let c = load_bytes(&riff(&[
            fmt(1, 2, 8000, 12, 4),
            chunk(b"data", &le(&codes, 2)),
        ]))
        .unwrap();
        assert_eq!(c.voltage().samples, [0.5, 2047.0 / 2048.0]);
        assert_eq!(c.current().samples, [-0.5, -1.0 / 2048.0]);
        assert_eq!(
            c.format,
            SourceFormat::Wav {
                bits: 12,
                float: false,
                channels: 2
            }
        );
    }

    #[test]
    fn sixty_four_bit_float_with_plain_tag_3_is_read() {
        let vals = [0.25f64, -0.75, 1.5, -1e-9];
        let data: Vec<u8> = vals.iter().flat_map(|x| x.to_le_bytes()).collect();
        let c = load_bytes(&riff(&[fmt(3, 2, 12_800, 64, 16), chunk(b"data", &data)])).unwrap();
        assert_eq!(c.voltage().samples, [0.25, 1.5]);
        assert_eq!(c.current().samples, [-0.75, -1e-9]);
        assert_eq!(
            c.format,
            SourceFormat::Wav {
                bits: 64,
                float: true,
                channels: 2
            }
        );
    }

    #[test]
    fn sixty_four_bit_float_in_an_extensible_header_is_read() {
        let vals = [0.1f64, 0.2, 0.3, 0.4, 0.5, 0.6];
        let data: Vec<u8> = vals.iter().flat_map(|x| x.to_le_bytes()).collect();
        let (_dir, path) = write(&riff(&[fmt_ext(3, 1000, 64, 64, 3), chunk(b"data", &data)]));
        // Three unnamed channels: which two is not guessed.
        let e = load(&path, &LoadOptions::default()).unwrap_err();
        assert!(matches!(e.kind, LoadErrorKind::Ambiguous { .. }), "{e}");
        let opts = LoadOptions {
            voltage: Some(ChannelSel::Index(1)),
            current: Some(ChannelSel::Index(2)),
            ..Default::default()
        };
        let c = load(&path, &opts).unwrap();
        assert_eq!(c.voltage().samples, [0.1, 0.4]);
        assert_eq!(c.current().samples, [0.2, 0.5]);
    }

    #[test]
    fn a_known_sine_survives_a_round_trip_through_64_bit_float() {
        // 50 Hz at 10 kHz, current lagging 30 degrees: the samples come back bit for bit.
        let w = |n: usize, deg: f64| {
            (2.0 * std::f64::consts::PI * 50.0 * n as f64 / 10_000.0 - deg.to_radians()).sin()
        };
        let mut data = Vec::new();
        for n in 0..400 {
            data.extend_from_slice(&(325.0 * w(n, 0.0)).to_le_bytes());
            data.extend_from_slice(&(14.1 * w(n, 30.0)).to_le_bytes());
        }
        let c = load_bytes(&riff(&[fmt(3, 2, 10_000, 64, 16), chunk(b"data", &data)])).unwrap();
        assert_eq!(c.len(), 400);
        for n in 0..400 {
            assert_eq!(c.voltage().samples[n], 325.0 * w(n, 0.0));
            assert_eq!(c.current().samples[n], 14.1 * w(n, 30.0));
        }
    }

    #[test]
    fn a_known_sine_written_by_hound_comes_back_within_half_a_code() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("sine.wav");
        let spec = hound::WavSpec {
            channels: 2,
            sample_rate: 10_000,
            bits_per_sample: 16,
            sample_format: hound::SampleFormat::Int,
        };
        let w = |n: usize, amp: f64, deg: f64| {
            amp * (2.0 * std::f64::consts::PI * 50.0 * n as f64 / 10_000.0 - deg.to_radians()).sin()
        };
        let mut wr = hound::WavWriter::create(&path, spec).unwrap();
        for n in 0..1000 {
            wr.write_sample((w(n, 0.8, 0.0) * 32768.0).round() as i16)
                .unwrap();
            wr.write_sample((w(n, 0.5, 30.0) * 32768.0).round() as i16)
                .unwrap();
        }
        wr.finalize().unwrap();
        let c = load(&path, &LoadOptions::default()).unwrap();
        assert_eq!(c.len(), 1000);
        assert_eq!(c.sample_rate_hz, 10_000.0);
        let half_code = 0.5 / 32768.0 + 1e-15;
        for n in 0..1000 {
            assert!((c.voltage().samples[n] - w(n, 0.8, 0.0)).abs() <= half_code);
            assert!((c.current().samples[n] - w(n, 0.5, 30.0)).abs() <= half_code);
        }
    }

    /// Writes a three-channel file with `hound` holding known codes.
    fn hound_file(dir: &TempDir, bits: u16, float: bool) -> (PathBuf, Vec<f64>) {
        let path = dir.path().join(format!("h{bits}{float}.wav"));
        let spec = hound::WavSpec {
            channels: 3,
            sample_rate: 4000,
            bits_per_sample: bits,
            sample_format: if float {
                hound::SampleFormat::Float
            } else {
                hound::SampleFormat::Int
            },
        };
        let mut w = hound::WavWriter::create(&path, spec).unwrap();
        let full = 2f64.powi(i32::from(bits) - 1);
        let mut expected = Vec::new();
        let mut x: u32 = 12345;
        for _ in 0..3 * 500 {
            x = x.wrapping_mul(1_664_525).wrapping_add(1_013_904_223); // Numerical Recipes LCG
            let u = f64::from(x) / f64::from(u32::MAX) * 2.0 - 1.0;
            if float {
                w.write_sample(u as f32).unwrap();
                expected.push(f64::from(u as f32));
            } else {
                let code = (u * (full - 1.0)).round() as i32;
                w.write_sample(code).unwrap();
                expected.push(f64::from(code) / full);
            }
        }
        w.finalize().unwrap();
        (path, expected)
    }

    #[test]
    fn own_reader_and_hound_agree_on_every_layout_hound_reads() {
        let dir = tempfile::tempdir().unwrap();
        let opts = LoadOptions {
            voltage: Some(ChannelSel::Index(3)),
            current: Some(ChannelSel::Index(1)),
            ..Default::default()
        };
        for (bits, float) in [
            (8, false),
            (16, false),
            (24, false),
            (32, false),
            (32, true),
        ] {
            let (path, expected) = hound_file(&dir, bits, float);
            let hound = load_with(&path, &opts, SampleReader::Hound).unwrap();
            let own = load_with(&path, &opts, SampleReader::Own).unwrap();
            assert_eq!(hound, own, "{bits}-bit float={float}");
            let third: Vec<f64> = expected.iter().skip(2).step_by(3).copied().collect();
            let first: Vec<f64> = expected.iter().step_by(3).copied().collect();
            assert_eq!(hound.voltage().samples, third, "{bits}-bit float={float}");
            assert_eq!(hound.current().samples, first, "{bits}-bit float={float}");
            assert_eq!(hound.voltage().channel.name, "channel 3");
        }
    }

    #[test]
    fn odd_length_chunk_before_data_is_skipped_with_its_pad_byte() {
        let codes = interleave(&[[16384, -16384], [-32768, 8192]]);
        let bytes = riff(&[
            fmt(1, 2, 8000, 16, 4),
            chunk(b"LIST", b"INFOISFT\x03\x00\x00\x00ab\x00"), // 15 bytes + pad
            chunk(b"data", &le(&codes, 2)),
        ]);
        let c = load_bytes(&bytes).unwrap();
        assert_eq!(c.voltage().samples, [0.5, -1.0]);
        assert_eq!(c.current().samples, [-0.5, 0.25]);
    }

    #[test]
    fn rf64_sizes_come_from_the_ds64_chunk() {
        let codes = interleave(&[[16384, -16384], [-32768, 8192], [1, 2]]);
        let data = le(&codes, 2);
        let mut ds64 = Vec::new();
        ds64.extend_from_slice(&0u64.to_le_bytes()); // RIFF size (unused here)
        ds64.extend_from_slice(&(data.len() as u64).to_le_bytes());
        ds64.extend_from_slice(&3u64.to_le_bytes()); // sample count
        ds64.extend_from_slice(&0u32.to_le_bytes()); // table length
        let mut bytes = b"RF64\xFF\xFF\xFF\xFFWAVE".to_vec();
        bytes.extend(chunk(b"ds64", &ds64));
        bytes.extend(fmt(1, 2, 8000, 16, 4));
        bytes.extend_from_slice(b"data\xFF\xFF\xFF\xFF");
        bytes.extend(&data);
        let c = load_bytes(&bytes).unwrap();
        assert_eq!(c.voltage().samples, [0.5, -1.0, 1.0 / 32768.0]);
        assert_eq!(c.current().samples, [-0.5, 0.25, 2.0 / 32768.0]);
    }

    /// 100 frames of 16-bit stereo; the data start at byte 44.
    fn hundred_frames() -> Vec<u8> {
        let codes: Vec<i64> = (0..200).collect();
        riff(&[fmt(1, 2, 8000, 16, 4), chunk(b"data", &le(&codes, 2))])
    }

    #[test]
    fn truncated_data_is_an_error_not_a_short_record() {
        let full = hundred_frames();
        for (cut, found) in [(44 + 200, 50), (44 + 202, 50), (44 + 399, 99), (44, 0)] {
            for reader in [SampleReader::Hound, SampleReader::Own] {
                let (_dir, path) = write(&full[..cut]);
                let e = load_with(&path, &LoadOptions::default(), reader).unwrap_err();
                assert!(
                    matches!(e, LoadErrorKind::Truncated { expected: 100, found: f } if f == found),
                    "cut at {cut}: {e}"
                );
            }
        }
    }

    #[test]
    fn every_cut_inside_the_header_is_a_damaged_wav_and_never_a_record() {
        let full = hundred_frames();
        for cut in 0..44 {
            let e = load_bytes(&full[..cut]).unwrap_err();
            match e {
                LoadErrorKind::BadWav(m) => assert!(
                    m.contains("truncated header") || m.contains("no data chunk"),
                    "cut at {cut}: {m}"
                ),
                other => panic!("cut at {cut}: {other}"),
            }
        }
        assert_eq!(load_bytes(&full).unwrap().len(), 100);
    }

    #[test]
    fn a_chunk_running_past_the_end_is_a_truncated_header() {
        let mut bytes = riff(&[fmt(1, 2, 8000, 16, 4)]);
        bytes.extend_from_slice(b"LIST\x00\x10\x00\x00abc");
        let e = load_bytes(&bytes).unwrap_err();
        assert_eq!(
            e.to_string(),
            "damaged WAV: truncated header: the file ends inside the 'LIST' chunk"
        );
    }

    #[test]
    fn an_empty_data_chunk_is_too_short() {
        let e = load_bytes(&riff(&[fmt(1, 2, 8000, 16, 4), chunk(b"data", &[])])).unwrap_err();
        assert!(matches!(e, LoadErrorKind::TooShort(0)), "{e}");
    }

    #[test]
    fn a_single_frame_is_too_short() {
        let bytes = riff(&[fmt(1, 2, 8000, 16, 4), chunk(b"data", &[1, 0, 2, 0])]);
        assert!(matches!(
            load_bytes(&bytes),
            Err(LoadErrorKind::TooShort(1))
        ));
    }

    #[test]
    fn data_that_is_not_whole_frames_is_damaged() {
        let bytes = riff(&[fmt(1, 2, 8000, 16, 4), chunk(b"data", &[0; 10])]);
        let e = load_bytes(&bytes).unwrap_err();
        assert!(
            matches!(e, LoadErrorKind::BadWav(ref m) if m.contains("10 bytes")),
            "{e}"
        );
    }

    #[test]
    fn a_single_channel_file_is_refused() {
        let bytes = riff(&[fmt(1, 1, 8000, 16, 2), chunk(b"data", &[0; 8])]);
        assert!(matches!(load_bytes(&bytes), Err(LoadErrorKind::OneChannel)));
    }

    #[test]
    fn unusual_encodings_are_refused_in_plain_words() {
        let cases: [(Vec<u8>, &str); 6] = [
            (fmt(6, 2, 8000, 8, 2), "A-law compressed samples"),
            (fmt(0x11, 2, 8000, 4, 2), "ADPCM-compressed samples"),
            (fmt(1, 2, 8000, 64, 16), "64-bit integer samples"),
            (fmt(3, 2, 8000, 16, 4), "16-bit float samples"),
            (fmt(1, 2, 8000, 4, 2), "4-bit samples"),
            (fmt_ext(2, 8000, 16, 16, 0x0092), "sample encoding 0x0092"),
        ];
        for (f, words) in cases {
            let e = load_bytes(&riff(&[f, chunk(b"data", &[0; 32])])).unwrap_err();
            assert!(
                matches!(e, LoadErrorKind::UnsupportedWav(ref m) if m.contains(words)),
                "{words}: {e}"
            );
        }
    }

    #[test]
    fn an_unknown_extensible_sub_format_is_unsupported() {
        let mut f = fmt_ext(2, 8000, 16, 16, 1);
        let last = f.len() - 1;
        f[last] ^= 0xFF; // spoil the GUID
        let e = load_bytes(&riff(&[f, chunk(b"data", &[0; 8])])).unwrap_err();
        assert!(matches!(e, LoadErrorKind::UnsupportedWav(_)), "{e}");
    }

    #[test]
    fn a_zero_sample_rate_is_refused() {
        let bytes = riff(&[fmt(1, 2, 0, 16, 4), chunk(b"data", &[0; 8])]);
        assert!(matches!(load_bytes(&bytes), Err(LoadErrorKind::BadRate(r)) if r == 0.0));
    }

    #[test]
    fn a_given_rate_that_differs_wins_with_a_warning() {
        let (_dir, path) = write(&hundred_frames());
        let opts = |r| LoadOptions {
            rate_hz: Some(r),
            ..Default::default()
        };
        let c = load(&path, &opts(8001.0)).unwrap();
        assert_eq!(c.sample_rate_hz, 8001.0);
        let rate_warnings = |c: &Capture| -> Vec<Warning> {
            c.warnings
                .iter()
                .filter(|w| matches!(w, Warning::RateMismatch { .. }))
                .cloned()
                .collect()
        };
        assert_eq!(
            rate_warnings(&c),
            [Warning::RateMismatch {
                given_hz: 8001.0,
                file_hz: 8000.0
            }]
        );
        let same = load(&path, &opts(8000.0 * (1.0 + 1e-12))).unwrap();
        assert_eq!(same.sample_rate_hz, 8000.0);
        assert!(rate_warnings(&same).is_empty());
        let e = load(&path, &opts(-5.0)).unwrap_err();
        assert!(matches!(e.kind, LoadErrorKind::BadRate(r) if r == -5.0));
    }

    #[test]
    fn channels_are_picked_from_many_and_named_by_number() {
        let codes: Vec<i64> = vec![100, 200, 300, 400, 101, 201, 301, 401];
        let bytes = riff(&[fmt(1, 4, 8000, 16, 8), chunk(b"data", &le(&codes, 2))]);
        let (_dir, path) = write(&bytes);
        let opts = LoadOptions {
            voltage: Some(ChannelSel::parse("channel 4")),
            current: Some(ChannelSel::parse("2")),
            ..Default::default()
        };
        let c = load(&path, &opts).unwrap();
        assert_eq!(c.voltage().channel.name, "channel 4");
        assert_eq!(c.voltage().samples, [400.0 / 32768.0, 401.0 / 32768.0]);
        assert_eq!(c.current().samples, [200.0 / 32768.0, 201.0 / 32768.0]);
        let bad = LoadOptions {
            voltage: Some(ChannelSel::Index(5)),
            ..Default::default()
        };
        let e = load(&path, &bad).unwrap_err();
        assert!(matches!(e.kind, LoadErrorKind::NoSuchChannel { .. }), "{e}");
    }

    #[test]
    fn a_float_sample_that_is_not_a_number_is_refused_with_its_place() {
        let vals = [0.0f32, 1.0, 0.5, f32::NAN];
        let data: Vec<u8> = vals.iter().flat_map(|x| x.to_le_bytes()).collect();
        let e = load_bytes(&riff(&[fmt(3, 2, 8000, 32, 8), chunk(b"data", &data)])).unwrap_err();
        assert_eq!(
            e.to_string(),
            "damaged WAV: channel 2 sample 2 is NaN, not a finite number"
        );
    }

    #[test]
    fn errors_name_the_file() {
        let (_dir, path) = write(&hundred_frames()[..100]);
        let e = load(&path, &LoadOptions::default()).unwrap_err();
        assert!(
            e.to_string().starts_with(&path.display().to_string()),
            "{e}"
        );
        assert!(e.to_string().contains("truncated"), "{e}");
    }
}
