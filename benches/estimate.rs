//! Micro-benchmarks of the library: the harmonic fit, the coarse frequency search, the whole
//! analysis of two traces, and loading a CSV capture.
//!
//! Run with `cargo bench --bench estimate` (one group: `cargo bench --bench estimate -- load`).
//! The signals are the benchmark capture's (`tools/bench_csv.rs`): 50 Hz with harmonics and
//! noise, sampled at 100 kHz, so N = 20k, 200k and 2M samples hold 10, 100 and 1000 cycles.
//! `analyze_traces_1mhz` and `load_csv` use the end-to-end scenario instead: 1 MHz, 100 cycles
//! in 2M samples. The CSV files are written once into `target/bench-data/`.

#[allow(dead_code)] // the benches write one number style of the two
#[path = "tools/bench_csv.rs"]
mod bench_csv;

use divan::counter::{BytesCount, ItemsCount};
use divan::{Bencher, black_box};
use std::f64::consts::PI;
use std::path::PathBuf;
use tracephase::Settings;
use tracephase::capture::{LoadOptions, load};
use tracephase::estimate::{fit::fit, frequency::coarse};

const RATE_HZ: f64 = 100_000.0;
const SIZES: [usize; 3] = [20_000, 200_000, 2_000_000];
/// Harmonics fitted, as the analysis does by default.
const ORDER: usize = 50;

fn main() {
    divan::main();
}

fn voltage(n: usize) -> Vec<f64> {
    bench_csv::signals(n, RATE_HZ).0
}

/// DC and harmonics 1..=50 by least squares at the true 50 Hz.
#[divan::bench(args = SIZES, sample_count = 10)]
fn fit_50_harmonics(bencher: Bencher, n: usize) {
    let y = voltage(n);
    let theta = 2.0 * PI * 50.0 / RATE_HZ;
    bencher
        .counter(ItemsCount::new(n))
        .bench(|| fit(black_box(&y), black_box(theta), ORDER));
}

/// Interpolated Hann DFT, with decimation of long records.
#[divan::bench(args = SIZES, sample_count = 20)]
fn coarse_frequency(bencher: Bencher, n: usize) {
    let y = voltage(n);
    bencher
        .counter(ItemsCount::new(n))
        .bench(|| coarse(black_box(&y), RATE_HZ));
}

/// Estimate and quantities of a voltage and current pair (no file).
#[divan::bench(args = SIZES, sample_count = 10)]
fn analyze_traces(bencher: Bencher, n: usize) {
    let (v, i) = bench_csv::signals(n, RATE_HZ);
    let settings = Settings::default();
    bencher.counter(ItemsCount::new(n)).bench(|| {
        tracephase::analyze_traces(black_box(&v), black_box(&i), RATE_HZ, &settings).map(|(e, _)| e)
    });
}

/// The end-to-end scenario's traces: 2M samples at 1 MHz.
#[divan::bench(sample_count = 10)]
fn analyze_traces_1mhz(bencher: Bencher) {
    let (v, i) = bench_csv::signals(2_000_000, 1e6);
    let settings = Settings::default();
    bencher.counter(ItemsCount::new(v.len())).bench(|| {
        tracephase::analyze_traces(black_box(&v), black_box(&i), 1e6, &settings).map(|(e, _)| e)
    });
}

/// Writes (once) the benchmark CSV with `rows` rows at 1 MHz and gives its path.
fn bench_file(rows: usize) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("target/bench-data");
    let path = dir.join(format!("divan-{rows}.csv"));
    if !path.is_file() {
        let tmp = dir.join(format!("divan-{rows}.csv.part"));
        std::fs::create_dir_all(&dir)
            .and_then(|()| bench_csv::write(&tmp, rows, 1e6, bench_csv::Style::Fixed))
            .and_then(|()| std::fs::rename(&tmp, &path))
            .unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
    }
    path
}

/// `capture::load` of a 3-column CSV (sniffing, parsing, time check), counted in file bytes.
#[divan::bench(args = SIZES, sample_count = 20)]
fn load_csv(bencher: Bencher, rows: usize) {
    let path = bench_file(rows);
    let bytes = std::fs::metadata(&path).map_or(0, |m| m.len() as usize);
    let opts = LoadOptions::default();
    bencher
        .counter(BytesCount::new(bytes))
        .bench(|| load(black_box(&path), &opts).map(|c| c.len()));
}
