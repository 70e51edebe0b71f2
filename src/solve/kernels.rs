//! Vector and sparse-matrix kernels shared by the solvers, parallel over
//! rows with rayon and deterministic: every reduction sums fixed-size
//! chunks in a fixed order, so results do not depend on the thread count.

use super::Matrix;
use rayon::prelude::*;

/// Rows (or entries) per parallel task.
pub const CHUNK: usize = 4096;

/// A value the vector kernels work on: one real number, or a [`Pair`] of
/// them (the real and imaginary parts of a complex vector, preconditioned
/// together so that each matrix is read once for both).
pub trait Lane:
    Copy
    + Send
    + Sync
    + Default
    + std::ops::Add<Output = Self>
    + std::ops::Sub<Output = Self>
    + std::ops::Mul<f64, Output = Self>
    + std::ops::AddAssign
{
}

impl Lane for f64 {}

/// Two real numbers carried together through the kernels.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Pair(pub [f64; 2]);

impl std::ops::Add for Pair {
    type Output = Pair;
    fn add(self, o: Pair) -> Pair {
        Pair([self.0[0] + o.0[0], self.0[1] + o.0[1]])
    }
}

impl std::ops::Sub for Pair {
    type Output = Pair;
    fn sub(self, o: Pair) -> Pair {
        Pair([self.0[0] - o.0[0], self.0[1] - o.0[1]])
    }
}

impl std::ops::Mul<f64> for Pair {
    type Output = Pair;
    fn mul(self, c: f64) -> Pair {
        Pair([self.0[0] * c, self.0[1] * c])
    }
}

impl std::ops::AddAssign for Pair {
    fn add_assign(&mut self, o: Pair) {
        self.0[0] += o.0[0];
        self.0[1] += o.0[1];
    }
}

impl Lane for Pair {}

/// Σ_j a_ij·x_j for one row.
#[inline]
fn row_dot<T: Lane>(indptr: &[usize], indices: &[u32], data: &[f64], row: usize, x: &[T]) -> T {
    let (s, e) = (indptr[row], indptr[row + 1]);
    let mut acc = T::default();
    for (v, j) in data[s..e].iter().zip(&indices[s..e]) {
        acc += x[*j as usize] * *v;
    }
    acc
}

/// Applies `f(row, (A·x)_row, out)` to every row in parallel.
#[inline]
fn rows_with_product<T: Lane>(a: &Matrix, x: &[T], out: &mut [T], f: impl Fn(usize, T, &mut T) + Sync) {
    let indptr = a.indptr();
    let indptr = indptr.raw_storage();
    let (indices, data) = (a.indices(), a.data());
    out.par_chunks_mut(CHUNK).enumerate().for_each(|(c, out)| {
        let start = c * CHUNK;
        for (k, o) in out.iter_mut().enumerate() {
            let row = start + k;
            f(row, row_dot(indptr, indices, data, row, x), o);
        }
    });
}

/// y = A·x
pub fn matvec<T: Lane>(a: &Matrix, x: &[T], y: &mut [T]) {
    rows_with_product(a, x, y, |_, ax, y| *y = ax);
}

/// y ← y + A·x
pub fn matvec_add<T: Lane>(a: &Matrix, x: &[T], y: &mut [T]) {
    rows_with_product(a, x, y, |_, ax, y| *y += ax);
}

/// r = b − A·x
pub fn residual<T: Lane>(a: &Matrix, x: &[T], b: &[T], r: &mut [T]) {
    rows_with_product(a, x, r, |i, ax, r| *r = b[i] - ax);
}

/// d ← c1·d + c2·w∘(b − A·x), one pass (a Chebyshev step).
pub fn chebyshev_direction<T: Lane>(a: &Matrix, x: &[T], b: &[T], w: &[f64], c1: f64, c2: f64, d: &mut [T]) {
    rows_with_product(a, x, d, |i, ax, d| *d = *d * c1 + (b[i] - ax) * (c2 * w[i]));
}

/// out = x + c·w∘(b − A·x), one pass (a damped Jacobi step into a
/// separate buffer).
pub fn jacobi_into<T: Lane>(a: &Matrix, x: &[T], b: &[T], w: &[f64], c: f64, out: &mut [T]) {
    rows_with_product(a, x, out, |i, ax, o| *o = x[i] + (b[i] - ax) * (c * w[i]));
}

/// q = A·p, returning p·q (chunked, in order).
pub fn matvec_dot(a: &Matrix, p: &[f64], q: &mut [f64]) -> f64 {
    let indptr = a.indptr();
    let indptr = indptr.raw_storage();
    let (indices, data) = (a.indices(), a.data());
    let partial: Vec<f64> = q
        .par_chunks_mut(CHUNK)
        .enumerate()
        .map(|(c, out)| {
            let start = c * CHUNK;
            let mut s = 0.0;
            for (k, o) in out.iter_mut().enumerate() {
                let row = start + k;
                *o = row_dot(indptr, indices, data, row, p);
                s += *o * p[row];
            }
            s
        })
        .collect();
    partial.iter().sum()
}

/// x ← x + α·p and r ← r − α·q, returning ‖r‖² (chunked, in order).
pub fn cg_update(alpha: f64, p: &[f64], q: &[f64], x: &mut [f64], r: &mut [f64]) -> f64 {
    let partial: Vec<f64> = x
        .par_chunks_mut(CHUNK)
        .zip(r.par_chunks_mut(CHUNK))
        .zip(p.par_chunks(CHUNK).zip(q.par_chunks(CHUNK)))
        .map(|((x, r), (p, q))| {
            let mut s = 0.0;
            for k in 0..x.len() {
                x[k] += alpha * p[k];
                r[k] -= alpha * q[k];
                s += r[k] * r[k];
            }
            s
        })
        .collect();
    partial.iter().sum()
}

/// Σ aᵢ·bᵢ, summed chunk by chunk in order.
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    let partial: Vec<f64> =
        a.par_chunks(CHUNK).zip(b.par_chunks(CHUNK)).map(|(x, y)| x.iter().zip(y).map(|(p, q)| p * q).sum()).collect();
    partial.iter().sum()
}

/// ‖a‖₂
pub fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

/// y ← y + α·x
pub fn axpy<T: Lane>(alpha: f64, x: &[T], y: &mut [T]) {
    y.par_iter_mut().zip(x.par_iter()).with_min_len(CHUNK).for_each(|(y, x)| *y += *x * alpha);
}

/// y ← x + β·y
pub fn xpby(x: &[f64], beta: f64, y: &mut [f64]) {
    y.par_iter_mut().zip(x.par_iter()).with_min_len(CHUNK).for_each(|(y, x)| *y = x + beta * *y);
}

/// z ← c·d∘r (element-wise product)
pub fn scale<T: Lane>(c: f64, d: &[f64], r: &[T], z: &mut [T]) {
    z.par_iter_mut().zip(r.par_iter().zip(d.par_iter())).with_min_len(CHUNK).for_each(|(z, (r, d))| *z = *r * c * *d);
}

/// Inverse of the diagonal (1 where the diagonal is not positive).
pub fn inverse_diagonal(a: &Matrix) -> Vec<f64> {
    a.outer_iterator()
        .enumerate()
        .map(|(i, row)| match row.get(i) {
            Some(&d) if d > 0.0 => 1.0 / d,
            _ => 1.0,
        })
        .collect()
}

/// Gershgorin bound on the largest eigenvalue of D⁻¹·A:
/// `max_i Σ_j |a_ij| / a_ii` (at most 2 for a diagonally dominant matrix).
pub fn gershgorin_scaled(a: &Matrix, inv_diag: &[f64]) -> f64 {
    a.outer_iterator()
        .zip(inv_diag)
        .map(|(row, d)| row.data().iter().map(|v| v.abs()).sum::<f64>() * d)
        .fold(0.0, f64::max)
}
