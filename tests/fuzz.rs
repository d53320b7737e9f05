//! Mutated valid captures through every loader (CSV, WAV, COMTRADE): whatever is flipped, cut,
//! inserted or lied about in a header, loading gives a capture or an error, never a panic, and
//! never takes more memory than the file's own size can justify. A header that claims 4 GB on a
//! file of a few kB is an error before anything is allocated.
//!
//! A fixed seed and a bounded number of cases, so CI runs them in seconds. (A coverage-guided
//! fuzzer would need a nightly toolchain, which CI does not use.)

mod common;

use common::comtrade::{CffLayout, Chan, Fmt, write_cff, write_record, write_record_rates};
use proptest::prelude::*;
use std::alloc::{GlobalAlloc, Layout, System};
use std::f64::consts::PI;
use std::path::Path;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};
use tempfile::TempDir;
use tracephase::capture::{ChannelSel, LoadOptions, load};

/// The system allocator, counting the bytes held and the most held at once.
struct Counting;

static HELD: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

fn add(n: usize) {
    let now = HELD.fetch_add(n, Ordering::SeqCst) + n;
    PEAK.fetch_max(now, Ordering::SeqCst);
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            add(layout.size());
        }
        p
    }
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        let p = unsafe { System.alloc_zeroed(layout) };
        if !p.is_null() {
            add(layout.size());
        }
        p
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) };
        HELD.fetch_sub(layout.size(), Ordering::SeqCst);
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        if !p.is_null() {
            HELD.fetch_sub(layout.size(), Ordering::SeqCst);
            add(new_size);
        }
        p
    }
}

#[global_allocator]
static ALLOCATOR: Counting = Counting;

/// The tests of this file take turns, so the count is of one load at a time.
static ONE_AT_A_TIME: Mutex<()> = Mutex::new(());

/// Memory a loader may take beyond its result for a file of `len` bytes: the kept samples as
/// f64 (at most 8 bytes for each byte of the file: an 8-bit sample, or a one-digit CSV cell and
/// its delimiter, becomes an f64 of 8 bytes) twice over (columns, then the capture), and a fixed
/// amount for read buffers, the header sniff and worker threads.
fn allowed(len: u64) -> usize {
    16 * len as usize + (24 << 20)
}

/// Loads `path` and gives the most memory held at once during the load, beyond what was held
/// before it. Panics (failing the test) if the loader panics.
fn load_peak(path: &Path, opts: &LoadOptions) -> usize {
    let before = HELD.load(Ordering::SeqCst);
    PEAK.store(before, Ordering::SeqCst);
    let result = load(path, opts);
    let peak = PEAK.load(Ordering::SeqCst) - before;
    drop(result);
    peak
}

fn check(path: &Path, opts: &LoadOptions) -> Result<(), TestCaseError> {
    let len = std::fs::metadata(path).unwrap().len();
    let peak = load_peak(path, opts);
    prop_assert!(
        peak <= allowed(len),
        "{} bytes held at once loading a file of {len} bytes",
        peak
    );
    Ok(())
}

/// A 230 V, 10 A, 30° lagging pair at 5 kS/s (an invented bench case).
fn bench(k: usize) -> (f64, f64) {
    let w = 2.0 * PI * 50.0 * k as f64 / 5000.0;
    (325.0 * w.sin(), 14.1 * (w - PI / 6.0).sin())
}

fn csv_bytes(rows: usize) -> Vec<u8> {
    let mut s = String::from("time (s),V,I\n");
    for k in 0..rows {
        let (v, i) = bench(k);
        s.push_str(&format!("{:.6},{v:.3},{i:.4}\n", k as f64 / 5000.0));
    }
    s.into_bytes()
}

/// A plain 16-bit, two-channel PCM WAV (tag 1), byte by byte.
fn wav_bytes(frames: usize) -> Vec<u8> {
    let data = (frames * 4) as u32;
    let mut b = Vec::new();
    b.extend_from_slice(b"RIFF");
    b.extend_from_slice(&(36 + data).to_le_bytes());
    b.extend_from_slice(b"WAVEfmt ");
    b.extend_from_slice(&16u32.to_le_bytes());
    b.extend_from_slice(&1u16.to_le_bytes()); // PCM
    b.extend_from_slice(&2u16.to_le_bytes()); // channels
    b.extend_from_slice(&5000u32.to_le_bytes()); // rate
    b.extend_from_slice(&20000u32.to_le_bytes()); // bytes per second
    b.extend_from_slice(&4u16.to_le_bytes()); // block align
    b.extend_from_slice(&16u16.to_le_bytes()); // bits
    b.extend_from_slice(b"data");
    b.extend_from_slice(&data.to_le_bytes());
    for k in 0..frames {
        let (v, i) = bench(k);
        b.extend_from_slice(&((v / 400.0 * 32767.0) as i16).to_le_bytes());
        b.extend_from_slice(&((i / 20.0 * 32767.0) as i16).to_le_bytes());
    }
    b
}

fn wav_opts() -> LoadOptions {
    LoadOptions {
        voltage: Some(ChannelSel::parse("1")),
        current: Some(ChannelSel::parse("2")),
        ..Default::default()
    }
}

/// A byte edit: flip at a place, cut the end, insert bytes, or write a 32-bit number.
#[derive(Debug, Clone)]
enum Edit {
    Set(usize, u8),
    Cut(usize),
    Insert(usize, Vec<u8>),
    Word(usize, u32),
}

fn edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(at, b)| Edit::Set(at, b)),
        any::<usize>().prop_map(Edit::Cut),
        (
            any::<usize>(),
            prop_oneof![
                Just(b"\"".to_vec()),
                Just(b"e308".to_vec()),
                Just(b"99999999999999999999".to_vec()),
                Just(b"\r".to_vec()),
                Just(b"\n".to_vec()),
                Just(b",,".to_vec()),
                Just(b"NaN".to_vec()),
                Just(b"-".to_vec()),
                Just(vec![0u8]),
                proptest::collection::vec(any::<u8>(), 1..16),
            ]
        )
            .prop_map(|(at, b)| Edit::Insert(at, b)),
        (
            any::<usize>(),
            prop_oneof![
                Just(u32::MAX),
                Just(u32::MAX - 3),
                Just(1 << 31),
                any::<u32>()
            ]
        )
            .prop_map(|(at, w)| Edit::Word(at, w)),
    ]
}

/// Applies the edits; places past the header region are taken modulo `focus` first half the time
/// (headers are where lies do harm).
fn apply(mut b: Vec<u8>, edits: &[Edit], focus: usize) -> Vec<u8> {
    for (n, e) in edits.iter().enumerate() {
        let len = b.len().max(1);
        let place = |at: usize| {
            if n % 2 == 0 {
                at % focus.min(len)
            } else {
                at % len
            }
        };
        match e {
            Edit::Set(at, v) => {
                let at = place(*at);
                if let Some(x) = b.get_mut(at) {
                    *x = *v;
                }
            }
            Edit::Cut(at) => b.truncate(place(*at)),
            Edit::Insert(at, bytes) => {
                let at = place(*at).min(b.len());
                b.splice(at..at, bytes.iter().copied());
            }
            Edit::Word(at, w) => {
                let at = place(*at);
                if at + 4 <= b.len() {
                    b[at..at + 4].copy_from_slice(&w.to_le_bytes());
                }
            }
        }
    }
    b
}

fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        rng_seed: proptest::test_runner::RngSeed::Fixed(15),
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config(300))]

    /// CSV: the sniffer, the fast reader and the reference reader.
    #[test]
    fn mutated_csv_files_load_or_fail_within_their_size(
        edits in proptest::collection::vec(edit(), 1..6),
        rows in 20usize..600,
    ) {
        let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
        let dir = TempDir::new().unwrap();
        let p = dir.path().join("m.csv");
        std::fs::write(&p, apply(csv_bytes(rows), &edits, 64)).unwrap();
        check(&p, &LoadOptions::default())?;
    }

    /// WAV: the RIFF header reader and the sample reader; half the edits land in the 44-byte
    /// header.
    #[test]
    fn mutated_wav_files_load_or_fail_within_their_size(
        edits in proptest::collection::vec(edit(), 1..6),
        frames in 20usize..600,
    ) {
        let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
        let dir = TempDir::new().unwrap();
        let p = dir.path().join("m.wav");
        std::fs::write(&p, apply(wav_bytes(frames), &edits, 44)).unwrap();
        check(&p, &wav_opts())?;
    }
}

/// A bench pair as COMTRADE channels (raw counts for the a factors).
fn comtrade_channels() -> Vec<Chan> {
    let (v, i): (Vec<f64>, Vec<f64>) = (0..400)
        .map(|k| {
            let (v, i) = bench(k);
            ((v / 0.01).round(), (i / 0.001).round())
        })
        .unzip();
    vec![
        Chan {
            id: "VAN",
            ph: "A",
            units: "V",
            a: 0.01,
            b: 0.0,
            skew_us: 0.0,
            ratio: (1.0, 1.0, 'P'),
            raw: v,
        },
        Chan {
            id: "IA",
            ph: "A",
            units: "A",
            a: 0.001,
            b: 0.0,
            skew_us: 0.0,
            ratio: (1.0, 1.0, 'P'),
            raw: i,
        },
    ]
}

proptest! {
    #![proptest_config(config(200))]

    /// COMTRADE: any number in the `.cfg` replaced by another (channel counts, sample counts,
    /// rates, factors), then the `.dat` edited; `tests/comtrade.rs` mangles the bytes of both.
    #[test]
    fn comtrade_records_with_lying_numbers_load_or_fail_within_their_size(
        which in any::<usize>(),
        number in prop_oneof![
            Just("4294967295".to_string()),
            Just("2147483648".to_string()),
            Just("18446744073709551615".to_string()),
            Just("0".to_string()),
            Just("1e300".to_string()),
            any::<u32>().prop_map(|n| n.to_string()),
        ],
        edits in proptest::collection::vec(edit(), 0..4),
        fmt in prop_oneof![Just(Fmt::Ascii), Just(Fmt::Binary), Just(Fmt::Binary32), Just(Fmt::Float32)],
        two_rates in any::<bool>(),
    ) {
        let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
        let dir = TempDir::new().unwrap();
        // one rate, or two (their end samples and rates are among the numbers replaced)
        let rates: &[(f64, usize)] = if two_rates {
            &[(5000.0, 250), (1000.0, 400)]
        } else {
            &[(5000.0, 400)]
        };
        let times = ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000");
        let cfg = write_record_rates(dir.path(), "m", &comtrade_channels(), rates, fmt, times);
        let text = std::fs::read_to_string(&cfg).unwrap();
        // the runs of digits in the .cfg; one of them is replaced
        let runs: Vec<(usize, usize)> = {
            let b = text.as_bytes();
            let mut runs = Vec::new();
            let mut k = 0;
            while k < b.len() {
                if b[k].is_ascii_digit() {
                    let start = k;
                    while k < b.len() && b[k].is_ascii_digit() {
                        k += 1;
                    }
                    runs.push((start, k));
                } else {
                    k += 1;
                }
            }
            runs
        };
        let (a, b) = runs[which % runs.len()];
        std::fs::write(&cfg, format!("{}{number}{}", &text[..a], &text[b..])).unwrap();
        let dat = dir.path().join("m.dat");
        std::fs::write(&dat, apply(std::fs::read(&dat).unwrap(), &edits, 64)).unwrap();
        let len = std::fs::metadata(&cfg).unwrap().len() + std::fs::metadata(&dat).unwrap().len();
        let opts = LoadOptions {
            voltage: Some(ChannelSel::parse("VAN")),
            current: Some(ChannelSel::parse("IA")),
            ..Default::default()
        };
        let peak = load_peak(&cfg, &opts);
        prop_assert!(peak <= allowed(len), "{peak} bytes held at once for {len} bytes of record");
    }
}

proptest! {
    #![proptest_config(config(150))]

    /// COMTRADE single files (`.cff`): a record of one rate or two in any data format, its
    /// section lines, byte count, CFG lines and data edited (half the edits in the first 700
    /// bytes, where the text sections are).
    #[test]
    fn mutated_single_file_records_load_or_fail_within_their_size(
        edits in proptest::collection::vec(edit(), 1..5),
        fmt in prop_oneof![Just(Fmt::Ascii), Just(Fmt::Binary), Just(Fmt::Binary32), Just(Fmt::Float32)],
        two_rates in any::<bool>(),
        crlf in any::<bool>(),
    ) {
        let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
        let dir = TempDir::new().unwrap();
        let rates: &[(f64, usize)] = if two_rates {
            &[(5000.0, 250), (1000.0, 400)]
        } else {
            &[(5000.0, 400)]
        };
        let times = ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000");
        let cfg = write_record_rates(dir.path(), "p", &comtrade_channels(), rates, fmt, times);
        let cff = write_cff(&cfg, fmt, "m", CffLayout { crlf, inf_hdr: true });
        std::fs::write(&cff, apply(std::fs::read(&cff).unwrap(), &edits, 700)).unwrap();
        let opts = LoadOptions {
            voltage: Some(ChannelSel::parse("VAN")),
            current: Some(ChannelSel::parse("IA")),
            ..Default::default()
        };
        check(&cff, &opts)?;
    }
}

/// A single file whose binary data section claims far more bytes than the file holds is
/// refused at its section line within the bound (nothing that size is reserved).
#[test]
fn a_single_file_claiming_more_data_than_it_holds_is_refused_before_allocation() {
    let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "p", &comtrade_channels(), 5000.0, Fmt::Binary);
    let layout = CffLayout {
        crlf: true,
        inf_hdr: false,
    };
    let cff = write_cff(&cfg, Fmt::Binary, "m", layout);
    let b = std::fs::read(&cff).unwrap();
    let opts = LoadOptions {
        voltage: Some(ChannelSel::parse("VAN")),
        current: Some(ChannelSel::parse("IA")),
        ..Default::default()
    };
    assert!(load(&cff, &opts).is_ok());
    let real = format!("DAT BINARY: {} ---", 400 * 12);
    for lie in ["4294967295", "2147483648", "18446744073709551615"] {
        // only the section line differs; the data bytes are kept as they were
        let at = b
            .windows(real.len())
            .position(|w| w == real.as_bytes())
            .unwrap();
        let mut lied = b[..at].to_vec();
        lied.extend(format!("DAT BINARY: {lie} ---").bytes());
        lied.extend(&b[at + real.len()..]);
        std::fs::write(&cff, &lied).unwrap();
        let peak = load_peak(&cff, &opts);
        assert!(peak <= allowed(lied.len() as u64), "{lie}: {peak} bytes");
        let e = load(&cff, &opts).unwrap_err().to_string();
        assert!(
            e.contains("line 13") && e.contains(&format!("claims {lie} bytes")),
            "{e}"
        );
    }
}

/// Headers that claim far more than the file holds: a WAV whose data chunk says 4 GB, in a file
/// of a few kB, is refused before anything that size is reserved.
#[test]
fn a_wav_claiming_four_gigabytes_in_a_small_file_is_refused_before_allocation() {
    let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
    let dir = TempDir::new().unwrap();
    let p = dir.path().join("lie.wav");
    for size in [u32::MAX, u32::MAX - 3, 1 << 31] {
        let mut b = wav_bytes(250);
        b[40..44].copy_from_slice(&size.to_le_bytes());
        std::fs::write(&p, &b).unwrap();
        let len = b.len() as u64;
        let peak = load_peak(&p, &wav_opts());
        assert!(peak <= allowed(len), "{size}: {peak} bytes");
        let r = load(&p, &wav_opts());
        // a data chunk running past the end is read as far as it goes, or refused; either way
        // never with more samples than the file holds
        if let Ok(c) = r {
            assert!(c.len() <= 250, "{} samples", c.len());
        }
    }
}

/// The valid files themselves load (the mutations start from something that works), and their
/// peak is within the bound by a wide margin.
#[test]
fn the_unmutated_files_load() {
    let _turn = ONE_AT_A_TIME.lock().unwrap_or_else(|e| e.into_inner());
    let dir = TempDir::new().unwrap();
    let csv = dir.path().join("ok.csv");
    std::fs::write(&csv, csv_bytes(600)).unwrap();
    assert!(load(&csv, &LoadOptions::default()).is_ok());
    // the count sees the loader's memory: at least the two columns of 600 f64
    let peak = load_peak(&csv, &LoadOptions::default());
    assert!(peak >= 2 * 600 * 8, "{peak}");
    assert!(
        peak <= allowed(std::fs::metadata(&csv).unwrap().len()),
        "{peak}"
    );
    let wav = dir.path().join("ok.wav");
    std::fs::write(&wav, wav_bytes(600)).unwrap();
    assert!(load(&wav, &wav_opts()).is_ok());
    let cfg = write_record(dir.path(), "ok", &comtrade_channels(), 5000.0, Fmt::Binary);
    let opts = LoadOptions {
        voltage: Some(ChannelSel::parse("VAN")),
        current: Some(ChannelSel::parse("IA")),
        ..Default::default()
    };
    assert!(load(&cfg, &opts).is_ok());
    let times = ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000");
    let rates = [(5000.0, 250), (1000.0, 400)];
    let two = write_record_rates(
        dir.path(),
        "two",
        &comtrade_channels(),
        &rates,
        Fmt::Ascii,
        times,
    );
    assert_eq!(load(&two, &opts).map(|c| c.len()).ok(), Some(150));
}
