//! The two inner loops the fits spend their time in, with AVX2/FMA versions chosen at run time
//! where the processor has them (checked once, then cached by the standard library), and plain
//! versions of the same sums elsewhere.
//!
//! - [`dot`]: Σ a·b.
//! - [`table_sums`]: `Σ_m y[m]·C[h][m]` and `Σ_m y[m]·S[h][m]` for every row h of a cosine and a sine
//!   table, four rows at a time so that each sample is loaded once per four rows and eight
//!   independent sums keep the multiply-add units busy.
//! - [`table_sums_pair`]: the same sums of two chunks (a phase's voltage and current) against
//!   the same table in one pass, so each table value is loaded once for both: every sum is
//!   the same sequence of operations as [`table_sums`] gives it, so the results are the same
//!   to the bit.

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

/// [`table_sums`] of two chunks of the same length against the same tables: `c[k]` and `s[k]`
/// receive chunk `y[k]`'s sums, exactly (to the bit) what [`table_sums`] gives each chunk
/// alone, with each table value loaded once for both chunks.
///
/// # Panics
/// When the lengths do not fit [`table_sums`]'s rules, or the two chunks or the four outputs
/// differ in length.
pub fn table_sums_pair(
    y: [&[f64]; 2],
    tcos: &[f64],
    tsin: &[f64],
    stride: usize,
    c: [&mut [f64]; 2],
    s: [&mut [f64]; 2],
) {
    let rows = c[0].len();
    let len = y[0].len();
    assert!(
        y[1].len() == len
            && c[1].len() == rows
            && s[0].len() == rows
            && s[1].len() == rows
            && len.is_multiple_of(4)
            && len <= stride
            && (rows == 0
                || (tcos.len() >= (rows - 1) * stride + len
                    && tsin.len() >= (rows - 1) * stride + len)),
        "table_sums_pair: chunks, tables and outputs do not fit"
    );
    let [c0, c1] = c;
    let [s0, s1] = s;
    #[cfg(target_arch = "x86_64")]
    if has_avx2_fma() {
        // SAFETY: the processor supports AVX2 and FMA, checked just above; the bounds were
        // checked by the assertion.
        unsafe { table_sums_pair_avx2(y, tcos, tsin, stride, [c0, c1], [s0, s1]) };
        return;
    }
    table_sums_plain(y[0], tcos, tsin, stride, c0, s0);
    table_sums_plain(y[1], tcos, tsin, stride, c1, s1);
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

/// [`table_sums_pair`] with AVX2 and FMA: two rows of both chunks at a time (eight running
/// sums, each table value loaded once for both chunks), then one row at a time for the rest.
/// Each sum takes its samples in the order and lanes [`table_sums_avx2`] does.
///
/// # Safety
/// The processor must support AVX2 and FMA, and the lengths must satisfy
/// [`table_sums_pair`]'s rules.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn table_sums_pair_avx2(
    y: [&[f64]; 2],
    tcos: &[f64],
    tsin: &[f64],
    stride: usize,
    c: [&mut [f64]; 2],
    s: [&mut [f64]; 2],
) {
    use std::arch::x86_64::*;
    let len = y[0].len();
    let rows = c[0].len();
    let (y0, y1) = (y[0].as_ptr(), y[1].as_ptr());
    let (cp, sp) = (tcos.as_ptr(), tsin.as_ptr());
    let [c0, c1] = c;
    let [s0, s1] = s;
    let mut h = 0;
    // SAFETY (all loads below): row r < rows, offset q + 3 < len; the caller checked that
    // (rows − 1)·stride + len values exist in each table and len values in each chunk.
    unsafe {
        while h + 2 <= rows {
            // acc[4g + 2k + t]: row h + g, chunk k, cosine (t = 0) or sine (t = 1)
            let mut acc = [_mm256_setzero_pd(); 8];
            let mut q = 0;
            while q < len {
                let yv = [_mm256_loadu_pd(y0.add(q)), _mm256_loadu_pd(y1.add(q))];
                for g in 0..2 {
                    let off = (h + g) * stride + q;
                    let (tc, ts) = (_mm256_loadu_pd(cp.add(off)), _mm256_loadu_pd(sp.add(off)));
                    for (k, &yk) in yv.iter().enumerate() {
                        let a = 4 * g + 2 * k;
                        acc[a] = _mm256_fmadd_pd(yk, tc, acc[a]);
                        acc[a + 1] = _mm256_fmadd_pd(yk, ts, acc[a + 1]);
                    }
                }
                q += 4;
            }
            for g in 0..2 {
                c0[h + g] = hsum(acc[4 * g]);
                s0[h + g] = hsum(acc[4 * g + 1]);
                c1[h + g] = hsum(acc[4 * g + 2]);
                s1[h + g] = hsum(acc[4 * g + 3]);
            }
            h += 2;
        }
        while h < rows {
            let mut acc = [_mm256_setzero_pd(); 4];
            let mut q = 0;
            while q < len {
                let yv = [_mm256_loadu_pd(y0.add(q)), _mm256_loadu_pd(y1.add(q))];
                let off = h * stride + q;
                let (tc, ts) = (_mm256_loadu_pd(cp.add(off)), _mm256_loadu_pd(sp.add(off)));
                for (k, &yk) in yv.iter().enumerate() {
                    acc[2 * k] = _mm256_fmadd_pd(yk, tc, acc[2 * k]);
                    acc[2 * k + 1] = _mm256_fmadd_pd(yk, ts, acc[2 * k + 1]);
                }
                q += 4;
            }
            c0[h] = hsum(acc[0]);
            s0[h] = hsum(acc[1]);
            c1[h] = hsum(acc[2]);
            s1[h] = hsum(acc[3]);
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

    /// The pair of chunks gives, to the bit, what each chunk gives alone (on this processor's
    /// path and on the plain one), for row counts odd and even, chunk lengths of one to sixteen
    /// vectors and tables read from an offset row, as the projection reads them; on
    /// pseudo-random values of mixed sign and size.
    #[test]
    fn table_sums_of_a_pair_equal_each_chunk_alone_to_the_bit() {
        let mut state = 0x2545_f491_4f6c_dd1du64;
        let mut next = move || {
            // xorshift64*: reproducible values in (−1000, 1000) with varied exponents
            state ^= state >> 12;
            state ^= state << 25;
            state ^= state >> 27;
            let u = state.wrapping_mul(0x2545_f491_4f6c_dd1d);
            let x = (u >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0;
            x * 10f64.powi((u % 7) as i32 - 3)
        };
        let stride = 64;
        for rows in [0usize, 1, 2, 3, 5, 26, 51] {
            let tcos: Vec<f64> = (0..(rows + 3) * stride).map(|_| next()).collect();
            let tsin: Vec<f64> = (0..(rows + 3) * stride).map(|_| next()).collect();
            for len in [4usize, 8, 12, 60, 64] {
                let y0: Vec<f64> = (0..len).map(|_| next()).collect();
                let y1: Vec<f64> = (0..len).map(|_| next()).collect();
                for first_row in [0usize, 3] {
                    let (tc, ts) = (&tcos[first_row * stride..], &tsin[first_row * stride..]);
                    let mut want = [
                        (vec![0.0; rows], vec![0.0; rows]),
                        (vec![0.0; rows], vec![0.0; rows]),
                    ];
                    for (y, (c, s)) in [&y0, &y1].into_iter().zip(want.iter_mut()) {
                        table_sums(y, tc, ts, stride, c, s);
                    }
                    let (mut c0, mut s0, mut c1, mut s1) = (
                        vec![9.0; rows],
                        vec![9.0; rows],
                        vec![9.0; rows],
                        vec![9.0; rows],
                    );
                    table_sums_pair(
                        [&y0, &y1],
                        tc,
                        ts,
                        stride,
                        [&mut c0, &mut c1],
                        [&mut s0, &mut s1],
                    );
                    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
                    let what = format!("rows {rows} len {len} from row {first_row}");
                    assert_eq!(bits(&c0), bits(&want[0].0), "{what}: cos of the first");
                    assert_eq!(bits(&s0), bits(&want[0].1), "{what}: sin of the first");
                    assert_eq!(bits(&c1), bits(&want[1].0), "{what}: cos of the second");
                    assert_eq!(bits(&s1), bits(&want[1].1), "{what}: sin of the second");
                    // and the plain path against a plain double loop
                    for (y, (c, s)) in [&y0, &y1].into_iter().zip(&want) {
                        for h in 0..rows {
                            let dc: f64 = (0..len).map(|m| y[m] * tc[h * stride + m]).sum();
                            let ds: f64 = (0..len).map(|m| y[m] * ts[h * stride + m]).sum();
                            let scale: f64 = (0..len)
                                .map(|m| {
                                    (y[m] * tc[h * stride + m]).abs()
                                        + (y[m] * ts[h * stride + m]).abs()
                                })
                                .sum::<f64>()
                                .max(1e-300);
                            assert!((c[h] - dc).abs() <= 1e-14 * scale, "{what}: row {h} cos");
                            assert!((s[h] - ds).abs() <= 1e-14 * scale, "{what}: row {h} sin");
                        }
                    }
                }
            }
        }
    }

    #[test]
    #[should_panic(expected = "do not fit")]
    fn table_sums_of_a_pair_refuse_chunks_of_different_lengths() {
        let t = vec![0.0; 8];
        let (mut c0, mut c1, mut s0, mut s1) = ([0.0], [0.0], [0.0], [0.0]);
        table_sums_pair(
            [&[1.0; 4], &[1.0; 8]],
            &t,
            &t,
            8,
            [&mut c0, &mut c1],
            [&mut s0, &mut s1],
        );
    }

    #[test]
    #[should_panic(expected = "do not fit")]
    fn table_sums_refuse_a_chunk_that_is_not_a_multiple_of_four() {
        let t = vec![0.0; 8];
        table_sums(&[1.0; 6], &t, &t, 8, &mut [0.0], &mut [0.0]);
    }
}
