//! The two inner loops the fits spend their time in, with AVX2/FMA versions chosen at run time
//! where the processor has them (checked once, then cached by the standard library), and plain
//! versions of the same sums elsewhere.
//!
//! - [`dot`]: Σ a·b.
//! - [`table_sums`]: Σ_m y[m]·C[h][m] and Σ_m y[m]·S[h][m] for every row h of a cosine and a sine
//!   table, four rows at a time so that each sample is loaded once per four rows and eight
//!   independent sums keep the multiply-add units busy.

/// Dot product with eight accumulators (lets the compiler use SIMD without `-ffast-math`).
#[inline(always)]
fn dot_lanes(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 8];
    let ca = a.chunks_exact(8);
    let cb = b.chunks_exact(8);
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for k in 0..8 {
            acc[k] += x[k] * y[k];
        }
    }
    let tail: f64 = ra.iter().zip(rb).map(|(x, y)| x * y).sum();
    ((acc[0] + acc[4]) + (acc[1] + acc[5])) + ((acc[2] + acc[6]) + (acc[3] + acc[7])) + tail
}

/// The same code compiled for AVX2 and FMA, for processors that have them.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn dot_avx2(a: &[f64], b: &[f64]) -> f64 {
    dot_lanes(a, b)
}

/// Whether this processor has AVX2 and FMA.
#[cfg(target_arch = "x86_64")]
#[inline]
fn has_avx2_fma() -> bool {
    std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
}

/// Dot product of the common length of `a` and `b`. The sum is the same expression on every
/// processor, up to FMA rounding.
#[inline]
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    #[cfg(target_arch = "x86_64")]
    if has_avx2_fma() {
        // SAFETY: the processor supports AVX2 and FMA, checked just above.
        return unsafe { dot_avx2(a, b) };
    }
    dot_lanes(a, b)
}

/// Sums of one chunk of samples against every row of a cosine and a sine table.
///
/// `y` holds the chunk, its length a multiple of 4 (pad with zeros); row h of `tcos` and `tsin`
/// starts at `h·stride` and holds at least `y.len()` values; `c` and `s` receive one sum per row,
/// as many rows as they are long (the same for both).
///
/// # Panics
/// When the lengths do not fit these rules.
pub fn table_sums(
    y: &[f64],
    tcos: &[f64],
    tsin: &[f64],
    stride: usize,
    c: &mut [f64],
    s: &mut [f64],
) {
    let rows = c.len();
    assert!(
        y.len().is_multiple_of(4)
            && y.len() <= stride
            && s.len() == rows
            && (rows == 0
                || (tcos.len() >= (rows - 1) * stride + y.len()
                    && tsin.len() >= (rows - 1) * stride + y.len())),
        "table_sums: chunk, tables and outputs do not fit"
    );
    #[cfg(target_arch = "x86_64")]
    if has_avx2_fma() {
        // SAFETY: the processor supports AVX2 and FMA, checked just above; the bounds were
        // checked by the assertion.
        unsafe { table_sums_avx2(y, tcos, tsin, stride, c, s) };
        return;
    }
    table_sums_plain(y, tcos, tsin, stride, c, s);
}

/// [`table_sums`] in plain Rust, four lanes per sum as the AVX2 version keeps them.
fn table_sums_plain(
    y: &[f64],
    tcos: &[f64],
    tsin: &[f64],
    stride: usize,
    c: &mut [f64],
    s: &mut [f64],
) {
    let len = y.len();
    for h in 0..c.len() {
        let (rc, rs) = (
            &tcos[h * stride..h * stride + len],
            &tsin[h * stride..h * stride + len],
        );
        let mut ac = [0.0f64; 4];
        let mut as_ = [0.0f64; 4];
        for q in (0..len).step_by(4) {
            for l in 0..4 {
                ac[l] += y[q + l] * rc[q + l];
                as_[l] += y[q + l] * rs[q + l];
            }
        }
        c[h] = (ac[0] + ac[2]) + (ac[1] + ac[3]);
        s[h] = (as_[0] + as_[2]) + (as_[1] + as_[3]);
    }
}

/// Sum of the four lanes.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
fn hsum(v: std::arch::x86_64::__m256d) -> f64 {
    use std::arch::x86_64::*;
    let lo = _mm256_castpd256_pd128(v);
    let hi = _mm256_extractf128_pd::<1>(v);
    let p = _mm_add_pd(lo, hi);
    _mm_cvtsd_f64(_mm_add_sd(p, _mm_unpackhi_pd(p, p)))
}

/// [`table_sums`] with AVX2 and FMA: four rows at a time (eight running sums), then one row at
/// a time for the rest.
///
/// # Safety
/// The processor must support AVX2 and FMA, and the lengths must satisfy [`table_sums`]'s rules.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn table_sums_avx2(
    y: &[f64],
    tcos: &[f64],
    tsin: &[f64],
    stride: usize,
    c: &mut [f64],
    s: &mut [f64],
) {
    use std::arch::x86_64::*;
    let len = y.len();
    let rows = c.len();
    let yp = y.as_ptr();
    let (cp, sp) = (tcos.as_ptr(), tsin.as_ptr());
    let mut h = 0;
    // SAFETY (all loads below): row r < rows, offset q + 3 < len; the caller checked that
    // (rows − 1)·stride + len values exist in each table and len values in y.
    unsafe {
        while h + 4 <= rows {
            let mut acc = [_mm256_setzero_pd(); 8];
            let mut q = 0;
            while q < len {
                let yv = _mm256_loadu_pd(yp.add(q));
                for g in 0..4 {
                    let off = (h + g) * stride + q;
                    acc[2 * g] = _mm256_fmadd_pd(yv, _mm256_loadu_pd(cp.add(off)), acc[2 * g]);
                    acc[2 * g + 1] =
                        _mm256_fmadd_pd(yv, _mm256_loadu_pd(sp.add(off)), acc[2 * g + 1]);
                }
                q += 4;
            }
            for g in 0..4 {
                c[h + g] = hsum(acc[2 * g]);
                s[h + g] = hsum(acc[2 * g + 1]);
            }
            h += 4;
        }
        while h < rows {
            let (mut ac, mut as_) = (_mm256_setzero_pd(), _mm256_setzero_pd());
            let mut q = 0;
            while q < len {
                let yv = _mm256_loadu_pd(yp.add(q));
                let off = h * stride + q;
                ac = _mm256_fmadd_pd(yv, _mm256_loadu_pd(cp.add(off)), ac);
                as_ = _mm256_fmadd_pd(yv, _mm256_loadu_pd(sp.add(off)), as_);
                q += 4;
            }
            c[h] = hsum(ac);
            s[h] = hsum(as_);
            h += 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Both versions of the table sums agree with a plain double loop, for row counts that leave
    /// a remainder after the groups of four.
    #[test]
    fn table_sums_match_a_plain_double_loop() {
        let stride = 24;
        for rows in [0usize, 1, 3, 4, 7, 9] {
            let tcos: Vec<f64> = (0..rows.max(1) * stride)
                .map(|k| ((k * 7 % 13) as f64) - 6.0)
                .collect();
            let tsin: Vec<f64> = (0..rows.max(1) * stride)
                .map(|k| ((k * 5 % 11) as f64) * 0.5)
                .collect();
            let y: Vec<f64> = (0..20).map(|k| (k as f64 * 0.7).sin()).collect();
            let mut want_c = vec![0.0; rows];
            let mut want_s = vec![0.0; rows];
            for h in 0..rows {
                for m in 0..y.len() {
                    want_c[h] += y[m] * tcos[h * stride + m];
                    want_s[h] += y[m] * tsin[h * stride + m];
                }
            }
            let (mut c, mut s) = (vec![9.0; rows], vec![9.0; rows]);
            table_sums(&y, &tcos, &tsin, stride, &mut c, &mut s);
            let (mut pc, mut ps) = (vec![9.0; rows], vec![9.0; rows]);
            table_sums_plain(&y, &tcos, &tsin, stride, &mut pc, &mut ps);
            for h in 0..rows {
                for (got, want) in [
                    (c[h], want_c[h]),
                    (s[h], want_s[h]),
                    (pc[h], want_c[h]),
                    (ps[h], want_s[h]),
                ] {
                    assert!(
                        (got - want).abs() < 1e-12,
                        "rows {rows} h {h}: {got} vs {want}"
                    );
                }
            }
        }
    }

    #[test]
    #[should_panic(expected = "do not fit")]
    fn table_sums_refuse_a_chunk_that_is_not_a_multiple_of_four() {
        let t = vec![0.0; 8];
        table_sums(&[1.0; 6], &t, &t, 8, &mut [0.0], &mut [0.0]);
    }
}
