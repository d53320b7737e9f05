//! Clean captures of any frequency, length and duration are analysed: no panic, no error, and the
//! frequency found is the one the capture holds. Every case here once failed.

use assert_cmd::Command;
use tempfile::TempDir;
use tracephase::synth::{Spec, Waveform, synthesize};
use tracephase::{Settings, analyze_traces};

/// A 230 V, 10 A at 30° lagging pair with a little 3rd and 5th harmonic (invented bench case).
fn bench_spec(rate: f64, f: f64, samples: usize) -> Spec {
    let v = Waveform::sine(230.0, 0.0).with(5, 4.0, 20.0);
    let i = Waveform::sine(10.0, -30.0).with(3, 0.8, 70.0);
    Spec::clean(rate, f, samples, v, i)
}

/// Relative frequency error a clean double-precision record must meet (the accuracy suite's
/// clean-signal limit).
const CLEAN_FREQ_REL: f64 = 1e-6;

/// Fundamentals from 49.5 to 50.5 Hz in 0.01 Hz steps, at several rates and lengths: the
/// about-200 ms uncertainty windows, rounded to whole samples, once ran past the record's end
/// on about 1 % of these (a panic, exit 101).
#[test]
fn every_clean_capture_near_fifty_hertz_is_analysed() {
    let mut failed = Vec::new();
    for (rate, samples) in [
        (10_000.0, 9_999usize),
        (10_000.0, 10_001),
        (6_400.0, 6_397),
        (25_000.0, 12_503),
        (4_000.0, 7_999),
    ] {
        for step in 0..=100 {
            let f = 49.5 + step as f64 * 0.01;
            let spec = bench_spec(rate, f, samples);
            let (v, i) = synthesize(&spec);
            let run =
                std::panic::catch_unwind(|| analyze_traces(&v, &i, rate, &Settings::default()));
            match run {
                Ok(Ok((_, q))) if ((q.frequency_hz - f) / f).abs() < CLEAN_FREQ_REL => {}
                Ok(Ok((_, q))) => failed.push(format!(
                    "{rate} S/s, {samples}, {f} Hz: {} Hz",
                    q.frequency_hz
                )),
                Ok(Err(e)) => failed.push(format!("{rate} S/s, {samples}, {f} Hz: {e}")),
                Err(_) => failed.push(format!("{rate} S/s, {samples}, {f} Hz: panic")),
            }
        }
    }
    assert!(
        failed.is_empty(),
        "{} failed:\n{}",
        failed.len(),
        failed.join("\n")
    );
}

/// Writes `spec` as a two-channel 32-bit float WAV (voltage first, current second).
fn write_float_wav(path: &std::path::Path, spec: &Spec) {
    let (v, i) = synthesize(spec);
    let ws = hound::WavSpec {
        channels: 2,
        sample_rate: spec.rate_hz as u32,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, ws).unwrap();
    for (a, b) in v.iter().zip(&i) {
        w.write_sample(*a as f32).unwrap();
        w.write_sample(*b as f32).unwrap();
    }
    w.finalize().unwrap();
}

/// The exact capture the fault probe found: 10 kS/s, 9 999 samples, 50.01 Hz, clean. It panicked
/// with exit code 101; it must give exit 0 and the frequency it holds.
#[test]
fn ten_kilosample_capture_of_9999_samples_at_50_01_hz_exits_cleanly() {
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("bench-50.01hz-9999.wav");
    write_float_wav(&path, &bench_spec(10_000.0, 50.01, 9_999));
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .args(["analyze", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    let json: serde_json::Value =
        serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("{e}: {stderr}"));
    let f = json["frequency_hz"].as_f64().unwrap();
    // 32-bit float samples carry about 7 digits; the frequency keeps them.
    assert!((f - 50.01).abs() < 1e-5, "{f}");
}

/// A slow logger's long record: 1 kS/s for 40 minutes (2.4 M samples, 120 000 cycles). The
/// coarse search once block-averaged every record down to 2^18 points, so past about
/// 2^18/(2f) s (39 min at 50 Hz) the fundamental aliased: a 2 370 s record gave "no fundamental
/// found".
#[test]
fn forty_minute_record_at_one_kilosample_gives_its_frequency() {
    for (f, seconds) in [(50.0, 2_370.0), (49.987, 2_400.0)] {
        let rate = 1_000.0;
        let spec = bench_spec(rate, f, (seconds * rate) as usize);
        let (v, i) = synthesize(&spec);
        let (_, q) = analyze_traces(&v, &i, rate, &Settings::default())
            .unwrap_or_else(|e| panic!("{f} Hz, {seconds} s: {e}"));
        assert!(
            ((q.frequency_hz - f) / f).abs() < CLEAN_FREQ_REL,
            "{f} Hz: {}",
            q.frequency_hz
        );
        // 30° lagging, as the capture was made.
        assert!((q.phase_angle_dft_deg.unwrap() - 30.0).abs() < 1e-4);
    }
}

/// Six times past the old limit: four hours at 200 S/s (4 samples per cycle at 50 Hz, 2.88 M
/// samples) and two hours at 400 S/s of a 60 Hz supply.
#[test]
fn records_of_hours_give_their_frequency() {
    for (rate, f, hours) in [(200.0, 50.0, 4.0), (400.0, 60.02, 2.0)] {
        let samples = (hours * 3600.0 * rate) as usize;
        let v = Waveform::sine(230.0, 0.0);
        let i = Waveform::sine(10.0, -30.0);
        let (v, i) = synthesize(&Spec::clean(rate, f, samples, v, i));
        let (_, q) = analyze_traces(&v, &i, rate, &Settings::default())
            .unwrap_or_else(|e| panic!("{f} Hz, {hours} h: {e}"));
        assert!(
            ((q.frequency_hz - f) / f).abs() < CLEAN_FREQ_REL,
            "{f} Hz: {}",
            q.frequency_hz
        );
        assert!((q.phase_angle_dft_deg.unwrap() - 30.0).abs() < 1e-4);
    }
}
