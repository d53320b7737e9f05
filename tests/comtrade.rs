//! IEEE C37.111 (COMTRADE) records: written here by the test's own writer in every data format,
//! and read back to the same figures as a CSV of the same samples; scaling, skew, missing data,
//! and files that lie or are cut short.

mod common;

use assert_cmd::Command;
use common::comtrade::{Chan, Fmt, write_record};
use proptest::prelude::*;
use serde_json::Value;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use tempfile::TempDir;

const RATE: f64 = 4000.0;
const N: usize = 800; // 10 cycles of 50 Hz

/// A 230 V / 10 A, 30° lagging pair as raw converter counts for `a` factors that fill 16 bits,
/// the current sampled `skew_us` after each time stamp.
fn bench_channels(skew_us: f64) -> Vec<Chan> {
    let w = 2.0 * PI * 50.0;
    let v: Vec<f64> = (0..N)
        .map(|s| (230.0 * 2f64.sqrt() * (w * s as f64 / RATE).cos() / 0.01).round())
        .collect();
    // secondary amperes of a 400/5 CT: 10 A primary is 0.125 A secondary
    let i: Vec<f64> = (0..N)
        .map(|s| {
            let t = s as f64 / RATE + skew_us * 1e-6;
            (0.125 * 2f64.sqrt() * (w * t - PI / 6.0).cos() / 1e-5).round()
        })
        .collect();
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
            a: 1e-5,
            b: 0.0,
            skew_us,
            ratio: (400.0, 5.0, 'S'),
            raw: i,
        },
    ]
}

/// The same samples as a CSV in primary units, computed here from the raw values.
fn write_csv(dir: &Path, chans: &[Chan]) -> PathBuf {
    let mut text = String::from("time (s),V (V),I (A)\n");
    let (v, i) = (&chans[0], &chans[1]);
    for s in 0..N {
        let iv = (i.a * i.raw[s] + i.b) * i.ratio.0 / i.ratio.1;
        text.push_str(&format!(
            "{:.9},{:.17e},{:.17e}\n",
            s as f64 / RATE,
            v.a * v.raw[s] + v.b,
            iv
        ));
    }
    let p = dir.join("same.csv");
    std::fs::write(&p, text).unwrap();
    p
}

fn analyze(args: &[&str]) -> (Option<i32>, String, String) {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .arg("analyze")
        .args(["--format", "json"])
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn json(args: &[&str]) -> Value {
    let (code, out, err) = analyze(args);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(out.lines().next().unwrap()).unwrap()
}

fn get(v: &Value, path: &str) -> f64 {
    path.split('.')
        .fold(v, |v, k| &v[k])
        .as_f64()
        .unwrap_or_else(|| panic!("{path} missing in {v}"))
}

const KEYS: [&str; 6] = [
    "voltage.rms",
    "current.rms",
    "power.active_w",
    "power.reactive_var",
    "phase_angle_deg.dft",
    "frequency_hz",
];

#[test]
fn every_data_format_reads_as_the_csv_of_the_same_samples() {
    let dir = TempDir::new().unwrap();
    let chans = bench_channels(0.0);
    let csv = json(&[write_csv(dir.path(), &chans).to_str().unwrap()]);
    for fmt in [Fmt::Ascii, Fmt::Binary, Fmt::Binary32, Fmt::Float32] {
        let cfg = write_record(
            dir.path(),
            &format!("rec-{}", fmt.name()),
            &chans,
            RATE,
            fmt,
        );
        let rec = json(&[cfg.to_str().unwrap()]);
        // FLOAT32 holds the counts exactly (they are below 2^24); every format is the CSV's
        // numbers up to the CSV's 17 printed digits
        for key in KEYS {
            let (a, b) = (get(&rec, key), get(&csv, key));
            assert!(
                (a - b).abs() <= 1e-9 * b.abs().max(1.0),
                "{fmt:?} {key}: {a} vs {b}"
            );
        }
        assert!(rec["format"].as_str().unwrap().starts_with("COMTRADE 1999"));
        // 10 A primary through a 400/5 CT recorded as secondary amperes
        assert!((get(&rec, "current.rms") - 10.0).abs() < 1e-3);
    }
}

#[test]
fn secondary_values_are_given_when_asked() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "r", &bench_channels(0.0), RATE, Fmt::Binary32);
    let sec = json(&[cfg.to_str().unwrap(), "--secondary"]);
    assert!((get(&sec, "current.rms") - 0.125).abs() < 1e-5, "{sec}");
}

#[test]
fn a_channels_declared_skew_is_removed() {
    // the current sampled 200 µs after each time stamp looks 3.6° less lagging at 50 Hz
    // (references §8 [computed]: Δθ = 360·f·Δt); the record's skew field puts it back
    let dir = TempDir::new().unwrap();
    let cfg = write_record(
        dir.path(),
        "skew",
        &bench_channels(200.0),
        RATE,
        Fmt::Binary32,
    );
    let rec = json(&[cfg.to_str().unwrap()]);
    let angle = get(&rec, "phase_angle_deg.dft");
    assert!((angle - 30.0).abs() < 0.01, "{angle}");
}

/// A 4-wire record whose channels were sampled at different instants (a multiplexed converter):
/// each channel's samples are taken `skew_us[k]` after the time stamp, and the record says so.
fn skewed_phase_set(skew_us: [f64; 6]) -> Vec<Chan> {
    let w = 2.0 * PI * 50.0;
    let ids = ["VAN", "VBN", "VCN", "IA", "IB", "IC"];
    let phs = ["A", "B", "C", "A", "B", "C"];
    (0..6)
        .map(|k| {
            let shift: f64 = [0.0, -120.0, 120.0][k % 3];
            let (rms, lag, a) = if k < 3 {
                (230.0, 0.0, 0.01)
            } else {
                (10.0, 30.0, 1e-4)
            };
            let raw = (0..N)
                .map(|s| {
                    let t = s as f64 / RATE + skew_us[k] * 1e-6;
                    let x = rms * 2f64.sqrt() * (w * t + (shift - lag).to_radians()).cos();
                    (x / a).round()
                })
                .collect();
            Chan {
                id: ids[k],
                ph: phs[k],
                units: if k < 3 { "V" } else { "A" },
                a,
                b: 0.0,
                skew_us: skew_us[k],
                ratio: (1.0, 1.0, 'P'),
                raw,
            }
        })
        .collect()
}

#[test]
fn each_channels_own_skew_is_removed() {
    // 50 Hz: 100 µs is 1.8° (references §8 [computed]: Δθ = 360·f·Δt). Phase c's voltage is
    // 50 µs late and its current 300 µs: one skew for every phase (phase a's pair, 0 here)
    // would leave phase b 1.8° and phase c 4.5° off, and the voltages 0.9° out of balance
    let dir = TempDir::new().unwrap();
    let chans = skewed_phase_set([0.0, 0.0, 50.0, 0.0, 100.0, 300.0]);
    let cfg = write_record(dir.path(), "mux", &chans, RATE, Fmt::Binary32);
    let rec = json(&[cfg.to_str().unwrap()]);
    assert_eq!(rec["system"], "3-phase 4-wire");
    for p in ["a", "b", "c"] {
        let angle = get(&rec, &format!("phases.{p}.phase_angle_deg.dft"));
        assert!((angle - 30.0).abs() < 0.01, "phase {p}: {angle}");
    }
    // balanced phasors of one instant: no negative sequence beyond the converter's rounding
    // (a 0.9° error in one phase would give about 0.5 %)
    let u2 = get(&rec, "sequence.voltage.unbalance_percent");
    assert!(u2 < 0.01, "{u2}");
    let i2 = get(&rec, "sequence.current.unbalance_percent");
    assert!(i2 < 0.01, "{i2}");
    assert_eq!(rec["rotation"], "abc");
    // the same record with its skews forgotten is off by the skews, which is what was removed
    let text = std::fs::read_to_string(&cfg).unwrap();
    let plain = dir.path().join("plain.cfg");
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for line in lines.iter_mut().skip(2).take(6) {
        let mut f: Vec<&str> = line.split(',').collect();
        f[7] = "0";
        *line = f.join(",");
    }
    std::fs::write(&plain, lines.join("\n") + "\n").unwrap();
    std::fs::copy(dir.path().join("mux.dat"), dir.path().join("plain.dat")).unwrap();
    let off = json(&[plain.to_str().unwrap()]);
    // phase c: the current sampled 300 µs late, the voltage 50 µs: 250 µs = 4.5° less lag
    let c = get(&off, "phases.c.phase_angle_deg.dft");
    assert!((c - (30.0 - 360.0 * 50.0 * 250e-6)).abs() < 0.01, "{c}");
}

#[test]
fn a_three_wire_record_whose_lines_were_sampled_apart_is_refused() {
    let dir = TempDir::new().unwrap();
    let mut chans = skewed_phase_set([0.0, 20.0, 0.0, 0.0, 0.0, 0.0]);
    chans.truncate(4);
    chans.push(skewed_phase_set([0.0; 6]).remove(5));
    chans[0].id = "VAB";
    chans[0].ph = "AB";
    chans[1].id = "VCB";
    chans[1].ph = "CB";
    chans.remove(2);
    let cfg = write_record(dir.path(), "aron", &chans, RATE, Fmt::Binary32);
    let (code, _, err) = analyze(&[cfg.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("line-to-line voltages of this 3-wire record have different skews (0, 20 µs)"),
        "{err}"
    );
}

#[test]
fn the_data_file_is_found_whatever_the_case_of_its_extension() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "upper", &bench_channels(0.0), RATE, Fmt::Binary);
    std::fs::rename(dir.path().join("upper.dat"), dir.path().join("upper.DAT")).unwrap();
    json(&[cfg.to_str().unwrap()]);
}

#[test]
fn missing_data_markers_are_refused_with_the_sample() {
    let dir = TempDir::new().unwrap();
    let mut chans = bench_channels(0.0);
    chans[0].raw[41] = -32768.0; // 0x8000 in BINARY
    let cfg = write_record(dir.path(), "gap", &chans, RATE, Fmt::Binary);
    let (code, _, err) = analyze(&[cfg.to_str().unwrap()]);
    assert_eq!(code, Some(2));
    assert!(
        err.contains("sample 42 of channel 'VAN' is marked as missing data"),
        "{err}"
    );
}

#[test]
fn a_record_promising_more_samples_than_its_file_holds_is_refused_before_reading() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "lie", &bench_channels(0.0), RATE, Fmt::Binary);
    let text = std::fs::read_to_string(&cfg).unwrap();
    std::fs::write(&cfg, text.replace("4000,800", "4000,2147483648")).unwrap();
    let (code, _, err) = analyze(&[cfg.to_str().unwrap()]);
    assert_eq!(code, Some(2));
    assert!(err.contains("holds 800 samples of 12 bytes"), "{err}");
    assert!(err.contains("promises 2147483648"), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
}

#[test]
/// A record with a complete phase set (the `ph` fields say A, B, C) is a 4-wire capture, each
/// phase its own pair; a single choice still analyses one pair.
fn a_phase_set_is_read_as_three_phases_and_a_single_choice_is_kept() {
    let dir = TempDir::new().unwrap();
    let base = bench_channels(0.0);
    let mut chans = Vec::new();
    for (k, ph) in ["A", "B", "C"].iter().enumerate() {
        let v = &base[0];
        chans.push(Chan {
            id: ["VAN", "VBN", "VCN"][k],
            ph,
            units: "V",
            a: v.a,
            b: 0.0,
            skew_us: 0.0,
            ratio: (1.0, 1.0, 'P'),
            raw: v.raw.clone(),
        });
    }
    for (k, ph) in ["A", "B", "C"].iter().enumerate() {
        let i = &base[1];
        chans.push(Chan {
            id: ["IA", "IB", "IC"][k],
            ph,
            units: "A",
            a: i.a,
            b: 0.0,
            skew_us: 0.0,
            ratio: (400.0, 5.0, 'S'),
            raw: i.raw.clone(),
        });
    }
    let cfg = write_record(dir.path(), "three", &chans, RATE, Fmt::Binary32);
    let all = json(&[cfg.to_str().unwrap()]);
    assert_eq!(all["system"], "3-phase 4-wire");
    assert_eq!(all["phases"]["b"]["channels"]["voltage"]["name"], "VBN");
    assert_eq!(all["phases"]["c"]["channels"]["current"]["name"], "IC");
    assert!((get(&all, "phases.b.phase_angle_deg.dft") - 30.0).abs() < 0.01);
    let rec = json(&[cfg.to_str().unwrap(), "--voltage", "VAN", "--current", "IA"]);
    assert!((get(&rec, "phase_angle_deg.dft") - 30.0).abs() < 0.01);
}

#[test]
fn a_single_file_record_with_a_section_of_no_known_type_is_refused_at_its_line() {
    // read as the 2013 single-file form (tests/comtrade_cff.rs): `CONFIG` is not a section type
    let dir = TempDir::new().unwrap();
    let cff = dir.path().join("r.cff");
    std::fs::write(&cff, "--- file type: CONFIG ---\nstation,dev,2013\n").unwrap();
    let (code, _, err) = analyze(&[cff.to_str().unwrap()]);
    assert_eq!(code, Some(2));
    assert!(
        err.contains("r.cff: line 1: section type 'CONFIG'"),
        "{err}"
    );
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, rng_seed: proptest::test_runner::RngSeed::Fixed(7), ..ProptestConfig::default() })]

    /// Whatever is cut from, flipped in or appended to a valid record's two files, loading it
    /// returns a result or an error and never panics.
    #[test]
    fn mangled_records_never_panic(
        cfg_cut in 0usize..700,
        cfg_flip in proptest::collection::vec((0usize..700, any::<u8>()), 0..4),
        dat_cut in 0usize..10_000,
        dat_flip in proptest::collection::vec((0usize..10_000, any::<u8>()), 0..8),
        fmt in prop_oneof![Just(Fmt::Ascii), Just(Fmt::Binary), Just(Fmt::Binary32), Just(Fmt::Float32)],
    ) {
        let dir = TempDir::new().unwrap();
        let cfg = write_record(dir.path(), "m", &bench_channels(0.0), RATE, fmt);
        let dat = dir.path().join("m.dat");
        let mut c = std::fs::read(&cfg).unwrap();
        for (at, b) in &cfg_flip {
            if let Some(x) = c.get_mut(*at) { *x = *b; }
        }
        c.truncate(c.len().saturating_sub(cfg_cut % 40));
        std::fs::write(&cfg, &c).unwrap();
        let mut d = std::fs::read(&dat).unwrap();
        for (at, b) in &dat_flip {
            if let Some(x) = d.get_mut(*at) { *x = *b; }
        }
        d.truncate(d.len().saturating_sub(dat_cut % 64));
        std::fs::write(&dat, &d).unwrap();
        let opts = tracephase::capture::LoadOptions {
            voltage: Some(tracephase::capture::ChannelSel::parse("VAN")),
            current: Some(tracephase::capture::ChannelSel::parse("IA")),
            ..Default::default()
        };
        let _ = tracephase::capture::load(&cfg, &opts);
    }
}
