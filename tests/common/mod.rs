//! Textbook references for the tests: quantities by their defining sums, no cleverness.
#![allow(dead_code)]

use std::f64::consts::PI;

/// Naive O(N²) DFT: X[k] = Σ x[n]·e^{−j2πkn/N}, returned as (re, im).
pub fn naive_dft(x: &[f64], k: usize) -> (f64, f64) {
    let n = x.len() as f64;
    x.iter().enumerate().fold((0.0, 0.0), |(re, im), (i, v)| {
        let a = -2.0 * PI * k as f64 * i as f64 / n;
        (re + v * a.cos(), im + v * a.sin())
    })
}

/// RMS by its definition, √(Σx²/N).
pub fn rms(x: &[f64]) -> f64 {
    (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt()
}

/// Mean power by its definition, Σ v·i / N.
pub fn mean_power(v: &[f64], i: &[f64]) -> f64 {
    v.iter().zip(i).map(|(a, b)| a * b).sum::<f64>() / v.len() as f64
}
