//! Benchmarks of the tolerance band: Monte Carlo and the worst-case search on a 5-part network.
//!
//! Run with `cargo bench --bench tolerance`. The goal: 100 000 Monte Carlo draws of a 5-part
//! network in under 0.5 s (read the median of `monte_carlo_100k_draws`).

use divan::counter::ItemsCount;
use divan::{Bencher, black_box};
use std::path::Path;
use tracephase::check::circuit::Circuit;
use tracephase::check::tolerance::{Distribution, MonteCarloConfig, monte_carlo, worst_case};

fn main() {
    divan::main();
}

/// A lossy coil with a capacitor bank of two, a series resistor and a feed resistor: every part
/// has a tolerance, so every draw samples five values.
const FIVE_PARTS: &str = r#"
network = "R1 + (L1 || (C1 || C2)) + R2"

[parts.R1]
value = "10 ohm"
tolerance = "±5%"

[parts.L1]
value = "100 mH"
tolerance = "±10%"
series_resistance = "2.1 ohm"

[parts.C1]
value = "47 uF"
tolerance = "-5%/+10%"

[parts.C2]
value = "22 uF"
tolerance = "±10%"

[parts.R2]
value = "4.7 ohm"
tolerance = "±1%"
"#;

const DRAWS: usize = 100_000;

fn five_parts() -> Circuit {
    match Circuit::parse(FIVE_PARTS, Path::new("bench.toml")) {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    }
}

/// 100 000 draws of the five parts at 50 Hz, summarised (sort, percentiles, histogram).
#[divan::bench(args = [Distribution::Uniform, Distribution::Normal], sample_count = 20)]
fn monte_carlo_100k_draws(bencher: Bencher, distribution: Distribution) {
    let circuit = five_parts();
    let cfg = MonteCarloConfig {
        draws: DRAWS,
        seed: 1,
        distribution,
    };
    bencher
        .counter(ItemsCount::new(DRAWS))
        .bench(|| monte_carlo(black_box(&circuit), 50.0, &cfg));
}

/// The worst-case search over the 5-dimensional tolerance box at 50 Hz.
#[divan::bench(sample_count = 20)]
fn worst_case_5_parts(bencher: Bencher) {
    let circuit = five_parts();
    bencher.bench(|| worst_case(black_box(&circuit), 50.0));
}

/// Reading and checking the model text.
#[divan::bench(sample_count = 100)]
fn parse_model(bencher: Bencher) {
    bencher.bench(|| Circuit::parse(black_box(FIVE_PARTS), Path::new("bench.toml")));
}
