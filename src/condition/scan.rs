//! The clipping check's two passes over a trace, with AVX2 versions chosen at run time where
//! the processor has them and plain versions elsewhere. Maxima, minima and counts are exact, so
//! both give the same results to the bit.

/// The largest and the smallest sample (−∞ and +∞ for none; NaN is passed over).
pub(super) fn extremes(y: &[f64]) -> (f64, f64) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor supports AVX2, checked just above.
        return unsafe { extremes_avx2(y) };
    }
    extremes_plain(y)
}

/// How many samples equal `hi`, the largest sample below `hi`, how many equal `lo`, and the
/// smallest sample above `lo` (−∞ and +∞ when there is none; NaN is passed over).
pub(super) fn next_to_extremes(y: &[f64], hi: f64, lo: f64) -> (usize, f64, usize, f64) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor supports AVX2, checked just above.
        return unsafe { next_to_extremes_avx2(y, hi, lo) };
    }
    next_to_extremes_plain(y, hi, lo)
}

fn extremes_plain(y: &[f64]) -> (f64, f64) {
    y.iter()
        .fold((f64::NEG_INFINITY, f64::INFINITY), |(hi, lo), &x| {
            (if x > hi { x } else { hi }, if x < lo { x } else { lo })
        })
}

fn next_to_extremes_plain(y: &[f64], hi: f64, lo: f64) -> (usize, f64, usize, f64) {
    let (mut n_hi, mut below, mut n_lo, mut above) = (0, f64::NEG_INFINITY, 0, f64::INFINITY);
    for &x in y {
        n_hi += usize::from(x == hi);
        n_lo += usize::from(x == lo);
        if x < hi && x > below {
            below = x;
        }
        if x > lo && x < above {
            above = x;
        }
    }
    (n_hi, below, n_lo, above)
}

/// [`extremes`] four samples at a time, two running maxima and minima per lane.
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn extremes_avx2(y: &[f64]) -> (f64, f64) {
    use std::arch::x86_64::*;
    let chunks = y.chunks_exact(8);
    let tail = chunks.remainder();
    let mut hi = [_mm256_set1_pd(f64::NEG_INFINITY); 2];
    let mut lo = [_mm256_set1_pd(f64::INFINITY); 2];
    for c in chunks {
        for (k, q) in c.chunks_exact(4).enumerate() {
            // SAFETY: `q` holds four values.
            let x = unsafe { _mm256_loadu_pd(q.as_ptr()) };
            // max(x, m) is m when x is NaN
            hi[k] = _mm256_max_pd(x, hi[k]);
            lo[k] = _mm256_min_pd(x, lo[k]);
        }
    }
    let mut lanes = [0.0; 4];
    let (mut h, mut l) = extremes_plain(tail);
    for k in 0..2 {
        // SAFETY: `lanes` holds four values.
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), hi[k]) };
        h = lanes.iter().fold(h, |m, &x| if x > m { x } else { m });
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), lo[k]) };
        l = lanes.iter().fold(l, |m, &x| if x < m { x } else { m });
    }
    (h, l)
}

/// [`next_to_extremes`] four samples at a time: the counts kept as doubles (exact below 2^53).
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn next_to_extremes_avx2(y: &[f64], hi: f64, lo: f64) -> (usize, f64, usize, f64) {
    use std::arch::x86_64::*;
    let chunks = y.chunks_exact(8);
    let tail = chunks.remainder();
    let (vhi, vlo) = (_mm256_set1_pd(hi), _mm256_set1_pd(lo));
    let (ninf, pinf, one) = (
        _mm256_set1_pd(f64::NEG_INFINITY),
        _mm256_set1_pd(f64::INFINITY),
        _mm256_set1_pd(1.0),
    );
    let mut n_hi = [_mm256_setzero_pd(); 2];
    let mut n_lo = [_mm256_setzero_pd(); 2];
    let mut below = [ninf; 2];
    let mut above = [pinf; 2];
    for c in chunks {
        for (k, q) in c.chunks_exact(4).enumerate() {
            // SAFETY: `q` holds four values.
            let x = unsafe { _mm256_loadu_pd(q.as_ptr()) };
            let at_hi = _mm256_cmp_pd::<_CMP_EQ_OQ>(x, vhi);
            let at_lo = _mm256_cmp_pd::<_CMP_EQ_OQ>(x, vlo);
            n_hi[k] = _mm256_add_pd(n_hi[k], _mm256_and_pd(at_hi, one));
            n_lo[k] = _mm256_add_pd(n_lo[k], _mm256_and_pd(at_lo, one));
            // x where it is below hi, else −∞ (NaN compares false: −∞)
            let under = _mm256_blendv_pd(ninf, x, _mm256_cmp_pd::<_CMP_LT_OQ>(x, vhi));
            let over = _mm256_blendv_pd(pinf, x, _mm256_cmp_pd::<_CMP_GT_OQ>(x, vlo));
            below[k] = _mm256_max_pd(under, below[k]);
            above[k] = _mm256_min_pd(over, above[k]);
        }
    }
    let (mut nh, mut b, mut nl, mut a) = next_to_extremes_plain(tail, hi, lo);
    let mut lanes = [0.0; 4];
    for k in 0..2 {
        // SAFETY: `lanes` holds four values.
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), n_hi[k]) };
        nh += lanes.iter().map(|&x| x as usize).sum::<usize>();
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), n_lo[k]) };
        nl += lanes.iter().map(|&x| x as usize).sum::<usize>();
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), below[k]) };
        b = lanes.iter().fold(b, |m, &x| if x > m { x } else { m });
        unsafe { _mm256_storeu_pd(lanes.as_mut_ptr(), above[k]) };
        a = lanes.iter().fold(a, |m, &x| if x < m { x } else { m });
    }
    (nh, b, nl, a)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Both versions against a plain two-pass definition, on traces with repeated extremes,
    /// NaN, signed zeros and lengths that leave a tail after the groups of eight.
    #[test]
    fn both_versions_give_the_plain_definition() {
        let mut traces: Vec<Vec<f64>> = Vec::new();
        for n in [0usize, 1, 7, 8, 9, 31, 1000] {
            traces.push(
                (0..n)
                    .map(|k| ((k * 37 % 23) as f64 - 11.0).clamp(-9.0, 9.0))
                    .collect(),
            );
        }
        traces.push(vec![
            -0.0,
            0.0,
            0.0,
            -0.0,
            1.0,
            1.0,
            f64::NAN,
            -1.0,
            2.0,
            3.0,
        ]);
        traces.push(vec![f64::NAN; 13]);
        traces.push(vec![5.0; 17]);
        for y in &traces {
            let finite = || y.iter().copied().filter(|x| !x.is_nan());
            let hi = finite().fold(f64::NEG_INFINITY, f64::max);
            let lo = finite().fold(f64::INFINITY, f64::min);
            let want = (
                finite().filter(|&x| x == hi).count(),
                finite()
                    .filter(|&x| x < hi)
                    .fold(f64::NEG_INFINITY, f64::max),
                finite().filter(|&x| x == lo).count(),
                finite().filter(|&x| x > lo).fold(f64::INFINITY, f64::min),
            );
            assert_eq!(extremes(y), (hi, lo), "{y:?}");
            assert_eq!(extremes_plain(y), (hi, lo), "{y:?}");
            assert_eq!(next_to_extremes(y, hi, lo), want, "{y:?}");
            assert_eq!(next_to_extremes_plain(y, hi, lo), want, "{y:?}");
        }
    }
}
