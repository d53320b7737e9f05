//! The uncertainty budget's own choices, each against an outside value: the coverage factor from
//! the effective degrees of freedom (JCGM 100:2008 Annex G), the THD's Type B term for the
//! harmonics' reading limit, and the frequency's U against its actual error.
//!
//! The frequency: seeded captures of the kind a bench scope gives: 4 to 25 cycles, 8-bit converter, 45 to 60 dB SNR, a 5th harmonic, the
//! clock's own error declared 0. The truth is the synthesiser's frequency. A U at the coverage
//! probability of k = 2 (95.45 %, JCGM 100:2008) should cover the error about that often: the
//! share of the 120 captures covered must lie in 90-99.5 % (120 captures: the binomial standard
//! error at 95 % is 2 %, so the band is over two standard errors each side).

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use tracephase::quantity::coverage::{COVERAGE_PROBABILITY, student_t_quantile};
use tracephase::quantity::uncertainty::{UncertaintyInputs, uncertainty};
use tracephase::synth::{Spec, Waveform, synthesize};
use tracephase::{Settings, analyze_traces};

const CAPTURES: usize = 120;

/// (error / U) of each capture.
fn normalised_errors(seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let inputs = UncertaintyInputs {
        clock_ppm: 0.0,
        ..UncertaintyInputs::default()
    };
    let mut out = Vec::new();
    for _ in 0..CAPTURES {
        let f = rng.random_range(49.5..50.5);
        let rate = [5_000.0, 6_400.0, 10_000.0][rng.random_range(0..3usize)];
        let cycles: f64 = rng.random_range(4.0..25.0);
        let v = Waveform::sine(230.0, rng.random_range(-180.0..180.0)).with(5, 6.0, 20.0);
        let i = Waveform::sine(10.0, rng.random_range(-180.0..180.0)).with(3, 1.0, 70.0);
        let mut spec = Spec::clean(rate, f, (cycles * rate / f) as usize, v, i);
        spec.snr_db = Some(rng.random_range(45.0..60.0));
        // 8 bits with the peaks at 80 % of full scale
        spec.quantise = Some((8, 230.0 * 1.5 / 0.8, 10.0 * 1.5 / 0.8));
        spec.start_s = rng.random_range(0.0..0.02);
        spec.seed = rng.random();
        let (vs, is) = synthesize(&spec);
        let (est, q) = analyze_traces(&vs, &is, rate, &Settings::default()).unwrap();
        let u = uncertainty(&vs, &is, &est, &q, 0.0, &inputs);
        out.push((est.frequency_hz - f).abs() / u.frequency_hz);
    }
    out
}

/// Today's budget (the Cramér-Rao bound of the whole record) covered 85.0 % of these errors; the
/// estimator's own slope across sub-records covers 93.3 %.
#[test]
fn frequency_uncertainty_covers_the_error_at_its_stated_probability() {
    let e = normalised_errors(1159);
    let covered = e.iter().filter(|x| **x <= 1.0).count() as f64 / e.len() as f64;
    let mut sorted = e.clone();
    sorted.sort_by(f64::total_cmp);
    eprintln!(
        "covered {covered:.3}; error/U median {:.3}, 95th percentile {:.3}, max {:.3}",
        sorted[e.len() / 2],
        sorted[e.len() * 95 / 100],
        sorted[e.len() - 1]
    );
    assert!(
        (0.90..=0.995).contains(&covered),
        "the frequency's U covers {covered:.3} of the errors"
    );
}

/// No instrument errors: what the capture itself says.
fn noise_only() -> UncertaintyInputs {
    UncertaintyInputs {
        v_ratio_percent: 0.0,
        i_ratio_percent: 0.0,
        phase_error_deg: 0.0,
        skew_s: 0.0,
        clock_ppm: 0.0,
        harmonic_percent: 0.0,
        adc: None,
    }
}

/// A 45-cycle capture gives four windows of about 200 ms: with no instrument errors the RMS's
/// uncertainty is their spread alone, with 4 − 1 = 3 degrees of freedom (GUM G.3.3), so
/// ν_eff = 3 and k = t_95.45(3) = 3.31 (JCGM 100:2008 Table G.2, from memory; 3.18 is the 95 %
/// column). With the default instrument limits beside it ν_eff grows by Welch-Satterthwaite
/// (G.2b) and k falls back towards 2.
#[test]
fn few_windows_widen_the_coverage_factor_by_the_effective_degrees_of_freedom() {
    let v = Waveform::sine(230.0, 0.0).with(5, 6.0, 20.0);
    let i = Waveform::sine(10.0, -30.0).with(3, 1.0, 70.0);
    let mut spec = Spec::clean(6_400.0, 50.0, 45 * 128, v, i);
    spec.snr_db = Some(40.0);
    spec.seed = 45;
    let (vs, is) = synthesize(&spec);
    let (est, q) = analyze_traces(&vs, &is, 6_400.0, &Settings::default()).unwrap();
    let u = uncertainty(&vs, &is, &est, &q, 0.0, &noise_only());
    assert_eq!(u.windows, 4);
    let c = u.coverage.voltage_rms;
    let nu = c.effective_dof.unwrap();
    assert!((nu - 3.0).abs() < 1e-6, "{nu}");
    assert!((c.k - 3.31).abs() < 0.006, "{}", c.k);
    assert_eq!(c.k, student_t_quantile(COVERAGE_PROBABILITY, 3));
    assert!(u.coverage_factor >= c.k);
    // the default limits: Type B beside the spread, ν_eff by Welch-Satterthwaite
    let d = uncertainty(&vs, &is, &est, &q, 0.0, &UncertaintyInputs::default());
    let c = d.coverage.voltage_rms;
    assert!(c.effective_dof.is_none_or(|n| n > 100.0), "{c:?}");
    assert!(c.k < 2.01, "{c:?}");
}

/// THD's Type B term (IEC 61000-4-7 class I: harmonics within ±5 % of reading, from memory;
/// the option's default): a THD of 10 % moves by up to 0.5 percentage points, u = 0.5/√3 (GUM
/// 4.3.7), U = 2u on a long capture whose own spread is small. Without the term the budget held
/// the spread alone.
#[test]
fn thd_carries_the_harmonics_reading_limit() {
    let v = Waveform::sine(230.0, 0.0).with(5, 23.0, 0.0);
    let i = Waveform::sine(10.0, -30.0).with(3, 1.0, 70.0);
    let mut spec = Spec::clean(6_400.0, 50.0, 20 * 128, v, i);
    spec.snr_db = Some(70.0);
    let (vs, is) = synthesize(&spec);
    let (est, q) = analyze_traces(&vs, &is, 6_400.0, &Settings::default()).unwrap();
    let thd = q.voltage.thd_percent.unwrap();
    assert!((thd - 10.0).abs() < 0.01, "{thd}");
    let inputs = UncertaintyInputs::default();
    assert_eq!(inputs.harmonic_percent, 5.0);
    let with = uncertainty(&vs, &is, &est, &q, 0.0, &inputs);
    let without = uncertainty(&vs, &is, &est, &q, 0.0, &noise_only());
    let type_b = 2.0 * thd * 0.05 / 3f64.sqrt();
    let u = with.voltage.thd_percent.unwrap();
    let a = without.voltage.thd_percent.unwrap();
    assert!(a < 0.02 * type_b, "the spread alone: {a}");
    assert!(
        (u - type_b.hypot(a)).abs() < 1e-6 * type_b,
        "{u} vs {type_b}"
    );
}
