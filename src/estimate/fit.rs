//! Multi-harmonic least-squares fit at a known frequency (IEEE Std 1057 three-parameter sine fit,
//! extended to DC and harmonics 1..H).
//!
//! Model, with time `τ = n − (N−1)/2` in samples measured from the record's centre:
//!
//! ```text
//! y[n] = c0 + Σ_h ( a_h cos(hθτ) + b_h sin(hθτ) ),   θ = 2π f / fs
//! ```
//!
//! Because τ is centred, every cos·sin cross product sums to zero over the record, so the normal
//! equations split into a cosine block (DC and a_h) and a sine block (b_h). Their entries are
//! Dirichlet-kernel sums known in closed form, so building them costs O(H²), not O(N·H²). Only the
//! projections Σ y·cos and Σ y·sin touch the samples: O(N·H), done in blocks against a table of
//! `cos/sin(hθm)` so the inner loops are plain dot products the compiler vectorises.
//!
//! The fit stays exact on a non-integer number of cycles, where a bare DFT leaks.

pub(crate) use super::simd::dot;
use super::simd::{table_sums, table_sums_pair};
use ndarray::Array2;
use rustfft::num_complex::Complex64;
use std::borrow::Cow;
use std::f64::consts::PI;
use std::ops::Range;

/// Samples per projection block; the trig table holds `2·(H+1)·BLOCK` values.
const BLOCK: usize = 64;

/// Result of one fit.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicFit {
    /// Number of samples fitted.
    pub len: usize,
    /// DC level.
    pub dc: f64,
    /// Complex amplitude `A·e^{jφ}` of harmonic h at index h−1, for `A cos(hθτ + φ)` at the
    /// record's centre (peak amplitude, not RMS).
    pub amplitudes: Vec<Complex64>,
    /// Sum of squared residuals.
    pub residual_ss: f64,
    /// Σ y², kept for cross terms.
    pub energy: f64,
    /// Projections Σ y·cos(hθτ) for h = 0..=H.
    pub proj_cos: Vec<f64>,
    /// Projections Σ y·sin(hθτ) for h = 0..=H (index 0 unused, zero).
    pub proj_sin: Vec<f64>,
    /// Solved coefficients of the cosine block (c0, a_1..a_H).
    pub coef_cos: Vec<f64>,
    /// Solved coefficients of the sine block (b_1..b_H, index 0 unused).
    pub coef_sin: Vec<f64>,
}

impl HarmonicFit {
    /// Residual mean square per sample.
    pub fn residual_ms(&self) -> f64 {
        self.residual_ss / self.len as f64
    }

    /// Σ r_y·r_z of the residuals of two fits of the same length, frequency and order:
    /// `yᵀz − x_yᵀ(Xᵀz)`, which needs only the fits and Σ y·z.
    pub fn residual_cross(&self, other: &HarmonicFit, sum_yz: f64) -> f64 {
        let c: f64 = self
            .coef_cos
            .iter()
            .zip(&other.proj_cos)
            .map(|(a, b)| a * b)
            .sum();
        let s: f64 = self
            .coef_sin
            .iter()
            .zip(&other.proj_sin)
            .skip(1)
            .map(|(a, b)| a * b)
            .sum();
        sum_yz - c - s
    }
}

/// Σ_{n=0}^{N−1} e^{jα(n − c)} for a real centre `c` (complex Dirichlet sum).
pub(crate) fn cis_sum(alpha: f64, n: usize, c: f64) -> Complex64 {
    let nf = n as f64;
    let half = (alpha / 2.0).sin();
    let dirichlet = if half.abs() < 1e-12 {
        // α = 2πm: every term has the same phase
        let m = (alpha / (2.0 * PI)).round() as i64;
        if m.rem_euclid(2) == 0 || n % 2 == 1 {
            nf
        } else {
            -nf
        }
    } else {
        (nf * alpha / 2.0).sin() / half
    };
    Complex64::from_polar(dirichlet, alpha * ((nf - 1.0) / 2.0 - c))
}

fn dirichlet(alpha: f64, n: usize) -> f64 {
    cis_sum(alpha, n, (n as f64 - 1.0) / 2.0).re
}

/// Fits DC and harmonics 1..=`order` at `theta` rad/sample to `y`.
///
/// Returns `None` when the normal equations are singular (too few samples for the order).
/// Fitting many records at one frequency is cheaper through one [`Basis`].
pub fn fit(y: &[f64], theta: f64, order: usize) -> Option<HarmonicFit> {
    Basis::new(theta, order).fit(y)
}

/// Cholesky factors of the two normal-equation blocks for one record length and order.
#[derive(Debug, Clone)]
struct Factors {
    cos: Array2<f64>,
    sin: Array2<f64>,
}

/// Projections `Σ y·cos(hθτ)` and `Σ y·sin(hθτ)`, h = 0..=H, of one record about its centre.
#[derive(Debug, Clone)]
struct Projection {
    cos: Vec<f64>,
    sin: Vec<f64>,
}

impl Projection {
    fn zero(order: usize) -> Self {
        Projection {
            cos: vec![0.0; order + 1],
            sin: vec![0.0; order + 1],
        }
    }

    /// Takes `rows` (harmonic orders) from `other`.
    fn take_rows(&mut self, other: &Projection, rows: Range<usize>) {
        self.cos[rows.clone()].copy_from_slice(&other.cos[rows.clone()]);
        self.sin[rows.clone()].copy_from_slice(&other.sin[rows]);
    }
}

/// One record's projection and its parts'.
type Projections = (Projection, Vec<Projection>);

/// Below this much work (records × samples × harmonic rows) a projection is not split between
/// threads.
const SPLIT_WORK: usize = 1 << 20;

/// Everything a fit at one frequency and order can share between records: the table of
/// `cos/sin(hθm)` and the factored normal equations of the record lengths seen.
#[derive(Debug, Clone)]
pub struct Basis {
    theta: f64,
    order: usize,
    tcos: Vec<f64>,
    tsin: Vec<f64>,
    /// `e^{jhθ·BLOCK}`, h = 0..=order: the turn from one full chunk to the next.
    step_re: Vec<f64>,
    step_im: Vec<f64>,
    /// Factors by (record length, order), `None` when singular; a few entries at most.
    factors: Vec<((usize, usize), Option<Factors>)>,
}

/// Full-length chunks the turn is carried over before it is computed afresh (its rounding grows
/// by about one unit in the last place per chunk).
const RESYNC: usize = 32;

/// Factor sets kept per [`Basis`]; a whole record and its sub-records need two.
const FACTOR_CACHE: usize = 4;

/// `e^{jhx}` for h = 0..=order by repeated multiplication (one `sin_cos` per call).
fn powers(x: f64, order: usize, out: &mut Vec<Complex64>) {
    out.clear();
    let step = Complex64::from_polar(1.0, x);
    let mut z = Complex64::new(1.0, 0.0);
    for _ in 0..=order {
        out.push(z);
        z *= step;
    }
}

impl Basis {
    /// Prepares fits of DC and harmonics 1..=`order` at `theta` rad/sample.
    pub fn new(theta: f64, order: usize) -> Self {
        let mut tcos = vec![0.0; (order + 1) * BLOCK];
        let mut tsin = vec![0.0; (order + 1) * BLOCK];
        let mut p = Vec::with_capacity(order + 1);
        for m in 0..BLOCK {
            powers(theta * m as f64, order, &mut p);
            for (h, z) in p.iter().enumerate() {
                tcos[h * BLOCK + m] = z.re;
                tsin[h * BLOCK + m] = z.im;
            }
        }
        let (step_re, step_im) = (0..=order)
            .map(|h| {
                let (s, c) = (theta * (h * BLOCK) as f64).sin_cos();
                (c, s)
            })
            .unzip();
        Basis {
            theta,
            order,
            tcos,
            tsin,
            step_re,
            step_im,
            factors: Vec::new(),
        }
    }

    /// Factors the normal equations for records of `n` samples fitted to `order` (at most the
    /// basis's own) ahead of time, so that [`Basis::fit_parts`] on a shared basis finds them.
    pub fn prepare(&mut self, n: usize, order: usize) {
        let order = order.min(self.order);
        if self.factors.iter().any(|(key, _)| *key == (n, order)) {
            return;
        }
        if self.factors.len() == FACTOR_CACHE {
            self.factors.remove(0);
        }
        self.factors
            .push(((n, order), factor_gram(self.theta, order, n)));
    }

    /// The factors for `n` samples at `order`: from the cache, else made now.
    fn factors(&self, n: usize, order: usize) -> Cow<'_, Option<Factors>> {
        match self.factors.iter().find(|(key, _)| *key == (n, order)) {
            Some((_, f)) => Cow::Borrowed(f),
            None => Cow::Owned(factor_gram(self.theta, order, n)),
        }
    }

    /// Fits one record; `None` when the normal equations are singular.
    pub fn fit(&mut self, y: &[f64]) -> Option<HarmonicFit> {
        if y.len() < 2 * self.order + 2 {
            return None;
        }
        self.prepare(y.len(), self.order);
        self.fit_shared(y)
    }

    /// [`Basis::fit`] on a basis shared between threads: the same result, the factors for
    /// `y`'s length taken from those [`Basis::prepare`] made (or made for this fit alone).
    pub fn fit_shared(&self, y: &[f64]) -> Option<HarmonicFit> {
        let (n, order) = (y.len(), self.order);
        if n < 2 * order + 2 {
            return None;
        }
        let (whole, _) = self.project_many(&[y], &[]).pop()?;
        self.solve_projection(n, order, whole, dot(y, y))
    }

    /// Fits the whole of `y` and, from the same pass over the samples, each of `parts`: ranges of
    /// `y` in ascending order that do not overlap, fitted to `part_order` (at most the basis's
    /// order) each about its own centre. Exactly what separate fits of each range would give, up
    /// to rounding. `None` when the whole record's normal equations are singular; a part's fit is
    /// `None` when its own are.
    ///
    /// # Panics
    /// When `parts` are not ascending, overlap, or reach past `y`.
    pub fn fit_parts(
        &self,
        y: &[f64],
        parts: &[Range<usize>],
        part_order: usize,
    ) -> Option<(HarmonicFit, Vec<Option<HarmonicFit>>)> {
        self.fit_parts_many(&[y], parts, part_order).pop()?
    }

    /// [`Basis::fit_parts`] of several records of the same length (a phase's voltage and
    /// current) from one pass over their samples, in their order: each the same to the bit as
    /// its own [`Basis::fit_parts`] would be. The table is read once for two records, and a
    /// long record's harmonic orders are shared between two threads (each order's sums are
    /// independent of the others', so the split changes no result).
    ///
    /// # Panics
    /// When the records differ in length, or as [`Basis::fit_parts`].
    pub fn fit_parts_many(
        &self,
        ys: &[&[f64]],
        parts: &[Range<usize>],
        part_order: usize,
    ) -> Vec<Option<(HarmonicFit, Vec<Option<HarmonicFit>>)>> {
        let n = ys.first().map_or(0, |y| y.len());
        let order = self.order;
        assert!(
            ys.iter().all(|y| y.len() == n),
            "fit_parts_many: the records must be of one length"
        );
        let mut last = 0;
        for p in parts {
            assert!(
                last <= p.start && p.start <= p.end && p.end <= n,
                "fit_parts: the parts must be ascending ranges inside the record"
            );
            last = p.end;
        }
        if n < 2 * order + 2 {
            return ys.iter().map(|_| None).collect();
        }
        let part_order = part_order.min(order);
        let projections = self.project_many(ys, parts);
        ys.iter()
            .zip(projections)
            .map(|(y, (whole, each))| {
                let fit = self.solve_projection(n, order, whole, dot(y, y))?;
                let fits = each
                    .into_iter()
                    .zip(parts)
                    .map(|(mut p, range)| {
                        let seg = &y[range.clone()];
                        if seg.len() < 2 * part_order + 2 {
                            return None;
                        }
                        p.cos.truncate(part_order + 1);
                        p.sin.truncate(part_order + 1);
                        self.solve_projection(seg.len(), part_order, p, dot(seg, seg))
                    })
                    .collect();
                Some((fit, fits))
            })
            .collect()
    }

    /// Solves the normal equations of an `n`-sample record at `order` from its projections and
    /// its energy Σ y².
    fn solve_projection(
        &self,
        n: usize,
        order: usize,
        p: Projection,
        energy: f64,
    ) -> Option<HarmonicFit> {
        let factors = self.factors(n, order);
        let f = factors.as_ref().as_ref()?;
        let (proj_cos, proj_sin) = (p.cos, p.sin);
        let coef_cos = solve(&f.cos, &proj_cos);
        let mut coef_sin = vec![0.0];
        if order > 0 {
            coef_sin.extend(solve(&f.sin, &proj_sin[1..]));
        }
        let explained: f64 = dot(&coef_cos, &proj_cos) + dot(&coef_sin[1..], &proj_sin[1..]);
        let amplitudes = (1..=order)
            .map(|h| Complex64::new(coef_cos[h], -coef_sin[h]))
            .collect();
        Some(HarmonicFit {
            len: n,
            dc: coef_cos[0],
            amplitudes,
            residual_ss: (energy - explained).max(0.0),
            energy,
            proj_cos,
            proj_sin,
            coef_cos,
            coef_sin,
        })
    }

    /// [`Basis::project_rows`] of every harmonic order, a long record's orders shared between
    /// two threads.
    fn project_many(&self, ys: &[&[f64]], parts: &[Range<usize>]) -> Vec<Projections> {
        let rows = self.order + 1;
        let n = ys.first().map_or(0, |y| y.len());
        if rows < 2 || ys.len() * n * rows < SPLIT_WORK {
            return self.project_rows(ys, parts, 0..rows);
        }
        let mid = rows.div_ceil(2);
        let (mut low, high) = rayon::join(
            || self.project_rows(ys, parts, 0..mid),
            || self.project_rows(ys, parts, mid..rows),
        );
        for ((lw, le), (hw, he)) in low.iter_mut().zip(&high) {
            lw.take_rows(hw, mid..rows);
            for (a, b) in le.iter_mut().zip(he) {
                a.take_rows(b, mid..rows);
            }
        }
        low
    }

    /// Σ y·cos(hθτ) and Σ y·sin(hθτ) for the harmonic orders h in `rows` (within 0..=order;
    /// the others are left zero) with τ about the record's centre, and the same for each of
    /// `parts` about the part's own centre (ascending, not overlapping), for each of the records
    /// `ys` (all of one length).
    ///
    /// The records are walked in chunks of at most [`BLOCK`] samples that never straddle a part's
    /// edge; each chunk's sums against the table (two records' at once) are turned to the
    /// record's centre and added to the record's total and to its part's. A part's total is
    /// turned to the part's centre at the end: `Σ y e^{jhθ(n−c_p)} = e^{jhθ(c−c_p)} Σ y
    /// e^{jhθ(n−c)}`. Every order's sums use only that order's table row and turns, so a record's
    /// projection does not depend on which other records or orders are taken with it.
    fn project_rows(
        &self,
        ys: &[&[f64]],
        parts: &[Range<usize>],
        rows: Range<usize>,
    ) -> Vec<Projections> {
        let order = self.order;
        let n = ys.first().map_or(0, |y| y.len());
        let centre = (n as f64 - 1.0) / 2.0;
        let (first_row, nr) = (rows.start, rows.len());
        let mut out: Vec<Projections> = ys
            .iter()
            .map(|_| {
                let each = parts.iter().map(|_| Projection::zero(order)).collect();
                (Projection::zero(order), each)
            })
            .collect();
        // this range's rows of the tables and of the turn from one full chunk to the next
        let (tcos, tsin) = (
            &self.tcos[first_row * BLOCK..],
            &self.tsin[first_row * BLOCK..],
        );
        let (step_re, step_im) = (&self.step_re[rows.clone()], &self.step_im[rows.clone()]);
        let mut rot = Vec::with_capacity(order + 1);
        // e^{jhθ(n0−c)} for the chunk at n0, split in parts for the vectorised loops, and the
        // sample it is good for with the full-length steps taken since it was computed afresh
        let (mut rot_re, mut rot_im) = (vec![0.0; nr], vec![0.0; nr]);
        let mut rot_at: Option<(usize, usize)> = None;
        // each record's chunk sums
        let mut sums: Vec<(Vec<f64>, Vec<f64>)> =
            ys.iter().map(|_| (vec![0.0; nr], vec![0.0; nr])).collect();
        // each record's chunk, zero-padded to a multiple of four samples
        let mut chunks = vec![[0.0f64; BLOCK]; ys.len()];
        let mut part = 0;
        let mut n0 = 0;
        while n0 < n {
            while part < parts.len() && parts[part].end <= n0 {
                part += 1;
            }
            let inside = part < parts.len() && parts[part].start <= n0;
            let edge = match parts.get(part) {
                Some(p) if inside => p.end,
                Some(p) => p.start,
                None => n,
            };
            let len = BLOCK.min(edge - n0);
            let padded = len.div_ceil(4) * 4;
            // a chunk of whole groups of four is read where it lies; a shorter one is copied
            // and padded with zeros (the sums are the same either way)
            let direct = len == padded;
            if !direct {
                for (chunk, y) in chunks.iter_mut().zip(ys) {
                    chunk[..len].copy_from_slice(&y[n0..n0 + len]);
                    chunk[len..padded].fill(0.0);
                }
            }
            let chunk = |k: usize| -> &[f64] {
                if direct {
                    &ys[k][n0..n0 + len]
                } else {
                    &chunks[k][..padded]
                }
            };
            for (pair, sm) in sums.chunks_exact_mut(2).enumerate() {
                if let [a, b] = sm {
                    table_sums_pair(
                        [chunk(2 * pair), chunk(2 * pair + 1)],
                        tcos,
                        tsin,
                        BLOCK,
                        [&mut a.0, &mut b.0],
                        [&mut a.1, &mut b.1],
                    );
                }
            }
            if ys.len() % 2 == 1 {
                let k = ys.len() - 1;
                let (c, s) = &mut sums[k];
                table_sums(chunk(k), tcos, tsin, BLOCK, c, s);
            }
            // Σ y e^{jhθ(start+m)} = e^{jhθ·start} (c + js). The turn e^{jhθ·start} is carried
            // from chunk to chunk by one multiplication per harmonic (independent, so they run
            // side by side), and computed afresh after a short chunk and every RESYNC chunks.
            let steps = match rot_at {
                Some((at, k)) if at == n0 && k < RESYNC => k,
                _ => {
                    powers(self.theta * (n0 as f64 - centre), order, &mut rot);
                    for (j, r) in rot[rows.clone()].iter().enumerate() {
                        rot_re[j] = r.re;
                        rot_im[j] = r.im;
                    }
                    0
                }
            };
            for ((whole, each), (c, s)) in out.iter_mut().zip(&sums) {
                let target = if inside { Some(&mut each[part]) } else { None };
                turn_and_add(&rot_re, &rot_im, c, s, first_row, whole, target);
            }
            if len == BLOCK {
                for j in 0..nr {
                    let (re, im) = (rot_re[j], rot_im[j]);
                    let (sr, si) = (step_re[j], step_im[j]);
                    rot_re[j] = re * sr - im * si;
                    rot_im[j] = re * si + im * sr;
                }
                rot_at = Some((n0 + BLOCK, steps + 1));
            } else {
                rot_at = None;
            }
            n0 += len;
        }
        for (k, range) in parts.iter().enumerate() {
            let own_centre = range.start as f64 + (range.len() as f64 - 1.0) / 2.0;
            powers(self.theta * (centre - own_centre), order, &mut rot);
            for (_, each) in out.iter_mut() {
                let p = &mut each[k];
                for h in rows.clone() {
                    let r = rot[h];
                    let (c, s) = (p.cos[h], p.sin[h]);
                    p.cos[h] = r.re * c - r.im * s;
                    p.sin[h] = r.im * c + r.re * s;
                }
            }
        }
        out
    }
}

/// Adds the chunk sums `c + js` of the rows from `first_row` on, turned by `rot`, to the record's
/// projection and, when given, to its part's.
#[inline]
fn turn_and_add(
    rot_re: &[f64],
    rot_im: &[f64],
    c: &[f64],
    s: &[f64],
    first_row: usize,
    whole: &mut Projection,
    part: Option<&mut Projection>,
) {
    let n = c.len();
    let rows = first_row..first_row + n;
    let (rr, ri, s) = (&rot_re[..n], &rot_im[..n], &s[..n]);
    let (wc, ws) = (&mut whole.cos[rows.clone()], &mut whole.sin[rows.clone()]);
    match part {
        Some(p) => {
            let (pc, ps) = (&mut p.cos[rows.clone()], &mut p.sin[rows]);
            for h in 0..n {
                let (x, y) = (rr[h] * c[h] - ri[h] * s[h], ri[h] * c[h] + rr[h] * s[h]);
                wc[h] += x;
                ws[h] += y;
                pc[h] += x;
                ps[h] += y;
            }
        }
        None => {
            for h in 0..n {
                wc[h] += rr[h] * c[h] - ri[h] * s[h];
                ws[h] += ri[h] * c[h] + rr[h] * s[h];
            }
        }
    }
}

/// Builds and factors the two normal-equation blocks for a record of `n` samples; `None` when
/// either is not positive definite.
fn factor_gram(theta: f64, order: usize, n: usize) -> Option<Factors> {
    let hc = order + 1;
    let mut gc = Array2::<f64>::zeros((hc, hc));
    let mut gs = Array2::<f64>::zeros((order, order));
    let d: Vec<f64> = (0..=2 * order)
        .map(|m| dirichlet(m as f64 * theta, n))
        .collect();
    for h in 0..=order {
        for k in 0..=h {
            let (dm, dp) = (d[h - k], d[h + k]);
            let c = match (h, k) {
                (0, 0) => n as f64,
                (_, 0) => d[h],
                _ => 0.5 * (dm + dp),
            };
            gc[[h, k]] = c;
            gc[[k, h]] = c;
            if h >= 1 && k >= 1 {
                let s = 0.5 * (dm - dp);
                gs[[h - 1, k - 1]] = s;
                gs[[k - 1, h - 1]] = s;
            }
        }
    }
    Some(Factors {
        cos: cholesky(gc)?,
        sin: cholesky(gs)?,
    })
}

/// Cholesky factor (lower triangle, in place) of a symmetric positive-definite matrix; `None`
/// when it is not positive definite to working precision.
fn cholesky(mut a: Array2<f64>) -> Option<Array2<f64>> {
    let n = a.nrows();
    for j in 0..n {
        let mut d = a[[j, j]];
        for k in 0..j {
            d -= a[[j, k]] * a[[j, k]];
        }
        if !(d > 1e-12 * a[[j, j]].abs().max(f64::MIN_POSITIVE)) {
            return None;
        }
        let d = d.sqrt();
        a[[j, j]] = d;
        for i in j + 1..n {
            let mut s = a[[i, j]];
            for k in 0..j {
                s -= a[[i, k]] * a[[j, k]];
            }
            a[[i, j]] = s / d;
        }
    }
    Some(a)
}

/// Solves `L·Lᵀ·x = b` with the factor from [`cholesky`].
fn solve(l: &Array2<f64>, b: &[f64]) -> Vec<f64> {
    let n = b.len();
    let mut x = b.to_vec();
    for i in 0..n {
        let mut s = x[i];
        for k in 0..i {
            s -= l[[i, k]] * x[k];
        }
        x[i] = s / l[[i, i]];
    }
    for i in (0..n).rev() {
        let mut s = x[i];
        for k in i + 1..n {
            s -= l[[k, i]] * x[k];
        }
        x[i] = s / l[[i, i]];
    }
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The Gram entries in closed form equal their defining sums.
    #[test]
    fn closed_form_dirichlet_sums_match_direct_sums() {
        for &(alpha, n, c) in &[(0.3, 17usize, 8.0), (2.0 * PI, 10, 4.5), (1.1, 100, 3.25)] {
            let direct: Complex64 = (0..n)
                .map(|k| Complex64::from_polar(1.0, alpha * (k as f64 - c)))
                .sum();
            let closed = cis_sum(alpha, n, c);
            assert!(
                (direct - closed).norm() < 1e-9,
                "{alpha} {n}: {direct} vs {closed}"
            );
        }
    }

    /// 5 300 samples: more full chunks than the turn is carried over (RESYNC), and a short last
    /// chunk.
    #[test]
    fn block_projection_matches_direct_sums() {
        let y: Vec<f64> = (0..5300).map(|k| ((k * 37 % 101) as f64) - 50.0).collect();
        let theta = 0.0123;
        let (p, _) = Basis::new(theta, 7).project_many(&[&y], &[]).remove(0);
        let (pc, ps) = (p.cos, p.sin);
        let c = (y.len() as f64 - 1.0) / 2.0;
        for h in 0..=7 {
            let dc: f64 = y
                .iter()
                .enumerate()
                .map(|(k, v)| v * (h as f64 * theta * (k as f64 - c)).cos())
                .sum();
            let ds: f64 = y
                .iter()
                .enumerate()
                .map(|(k, v)| v * (h as f64 * theta * (k as f64 - c)).sin())
                .sum();
            assert!((pc[h] - dc).abs() < 1e-8 * dc.abs().max(1.0), "h{h} cos");
            assert!((ps[h] - ds).abs() < 1e-8 * ds.abs().max(1.0), "h{h} sin");
        }
    }

    /// Parts fitted from the whole record's pass equal separate fits of the same samples, with
    /// parts that start off a block edge, end inside one, span several and use a lower order.
    #[test]
    fn parts_match_separate_fits() {
        let y: Vec<f64> = (0..2000)
            .map(|k| {
                let t = k as f64 * 0.031;
                3.0 * t.cos() + 0.4 * (3.0 * t + 0.3).sin() + ((k * 37 % 101) as f64) / 500.0
            })
            .collect();
        let theta = 0.031;
        let parts = [0..300, 300..301, 301..900, 1000..1777];
        let mut basis = Basis::new(theta, 9);
        let (whole, fits) = basis.fit_parts(&y, &parts, 6).unwrap();
        let alone = fit(&y, theta, 9).unwrap();
        assert!((whole.dc - alone.dc).abs() < 1e-12);
        assert!((whole.residual_ss - alone.residual_ss).abs() < 1e-9 * alone.energy);
        assert!(fits[1].is_none(), "one sample cannot carry a fit");
        for (k, range) in parts.iter().enumerate().filter(|(k, _)| *k != 1) {
            let a = fit(&y[range.clone()], theta, 6).unwrap();
            let b = fits[k].as_ref().unwrap();
            assert_eq!(b.amplitudes.len(), 6);
            assert!((a.dc - b.dc).abs() < 1e-10, "part {k} dc");
            for (x, z) in a.amplitudes.iter().zip(&b.amplitudes) {
                assert!((x - z).norm() < 1e-10, "part {k}: {x} vs {z}");
            }
            assert!((a.residual_ss - b.residual_ss).abs() < 1e-9 * a.energy);
        }
        basis.prepare(600, 6);
        assert!(basis.fit_parts(&y, &parts, 6).is_some());
    }

    /// Records fitted together (two at a time through the table, a third alone, the harmonic
    /// orders shared between two threads) give, to the bit, what each gives fitted alone, with
    /// parts; on a record long enough to be split and not a whole number of chunks.
    #[test]
    fn records_fitted_together_equal_each_fitted_alone_to_the_bit() {
        let n = 20_011;
        let theta = 2.0 * PI * 50.0 / 10_000.0;
        let record = |seed: usize| -> Vec<f64> {
            (0..n)
                .map(|k| {
                    let t = k as f64 * theta;
                    (100.0 + seed as f64) * (t + 0.1 * seed as f64).cos()
                        + 7.0 * (5.0 * t - 0.3).sin()
                        + (((k * (37 + seed) + seed) % 101) as f64 - 50.0) / 25.0
                })
                .collect()
        };
        let ys: Vec<Vec<f64>> = (0..3).map(record).collect();
        let refs: Vec<&[f64]> = ys.iter().map(Vec::as_slice).collect();
        let parts = [0..2000, 2000..4001, 4001..6000, 7000..20_011];
        let basis = Basis::new(theta, 50);
        assert!(
            refs.len() * n * 51 >= SPLIT_WORK && n * 51 < SPLIT_WORK,
            "together split, alone not"
        );
        let together = basis.fit_parts_many(&refs, &parts, 20);
        assert_eq!(together.len(), 3);
        let bits = |f: &HarmonicFit| {
            let mut b = vec![f.dc.to_bits(), f.residual_ss.to_bits(), f.energy.to_bits()];
            b.extend(f.proj_cos.iter().chain(&f.proj_sin).map(|x| x.to_bits()));
            b.extend(
                f.amplitudes
                    .iter()
                    .flat_map(|a| [a.re.to_bits(), a.im.to_bits()]),
            );
            b
        };
        for (k, y) in refs.iter().enumerate() {
            let (whole, each) = together[k].as_ref().expect("fitted together");
            let (alone, alone_each) = basis.fit_parts(y, &parts, 20).expect("fitted alone");
            assert_eq!(bits(whole), bits(&alone), "record {k}");
            assert_eq!(each.len(), alone_each.len());
            for (p, (a, b)) in each.iter().zip(&alone_each).enumerate() {
                let (a, b) = (a.as_ref().expect("part"), b.as_ref().expect("part"));
                assert_eq!(bits(a), bits(b), "record {k} part {p}");
            }
        }
    }

    #[test]
    #[should_panic(expected = "of one length")]
    fn records_of_different_lengths_are_not_fitted_together() {
        let basis = Basis::new(0.1, 3);
        basis.fit_parts_many(&[&[1.0; 40], &[1.0; 41]], &[], 3);
    }

    /// DC and H harmonics are 2H + 1 unknowns: a least-squares fit needs more samples than
    /// unknowns to leave a residual (N − p degrees of freedom, textbook least squares), so a
    /// record of exactly 2H + 1 samples is refused rather than fitted with a residual of zero
    /// whatever its noise, and one sample more is fitted.
    #[test]
    fn a_record_with_no_more_samples_than_unknowns_is_not_fitted() {
        let order = 5;
        let n = 2 * order + 1;
        // one cycle over the record: the harmonics are the DFT's own bins, well conditioned
        let theta = 2.0 * PI / n as f64;
        let noise = |k: usize| ((k * 37 % 101) as f64) / 101.0 - 0.5;
        let y: Vec<f64> = (0..n + 1)
            .map(|k| (theta * k as f64).cos() + noise(k))
            .collect();
        assert!(fit(&y[..n], theta, order).is_none());
        assert!(fit(&y, theta, order).is_some());
    }

    /// A sum of harmonics on 3.37 cycles (not an integer) comes back exactly.
    #[test]
    fn fit_recovers_harmonics_on_a_non_integer_record() {
        let n = 337;
        let theta = 2.0 * PI / 100.0;
        let c = (n as f64 - 1.0) / 2.0;
        let y: Vec<f64> = (0..n)
            .map(|k| {
                let t = k as f64 - c;
                0.7 + 3.0 * (theta * t + 0.4).cos() + 0.5 * (3.0 * theta * t - 1.2).cos()
            })
            .collect();
        let f = fit(&y, theta, 5).unwrap();
        assert!((f.dc - 0.7).abs() < 1e-10);
        assert!((f.amplitudes[0] - Complex64::from_polar(3.0, 0.4)).norm() < 1e-10);
        assert!((f.amplitudes[2] - Complex64::from_polar(0.5, -1.2)).norm() < 1e-10);
        assert!(f.amplitudes[1].norm() < 1e-10);
        assert!(f.residual_ss < 1e-15 * f.energy);
    }
}
