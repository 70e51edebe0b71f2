//! Complex symmetric systems: AC fields with losses.
//!
//! Box integration of div((σ + jωε0ε*)∇φ) = 0 gives A = A′ + j·A″ with A′
//! and A″ real symmetric on one pattern (A′ from ε′, A″ from −(ε″ +
//! σ/ωε0)): complex *symmetric*, not Hermitian. COCG — conjugate gradients
//! with the unconjugated bilinear form xᵀy (van der Vorst & Melissen, IEEE
//! Trans. Magn. 26(2), 706–708, 1990) — is the short-recurrence Krylov
//! method made for it. It is preconditioned by a real symmetric positive
//! definite M (the multigrid hierarchy of the operator with the magnitudes
//! |κ| of the coefficients) applied to the real and imaginary parts
//! separately, which keeps M⁻¹A symmetric in the same bilinear form.
//! Convergence is judged on the true residual ‖b − A·x‖₂/‖b‖₂ (Hermitian
//! norm), as for the real solver; a breakdown (xᵀy = 0 with x ≠ 0, possible
//! in exact arithmetic for complex symmetric matrices) is an error, never
//! an answer.

use super::{Matrix, Preconditioner, SolveError, SolveOptions, SolveReport, kernels};
use num_complex::Complex64;
use rayon::prelude::*;

/// A complex symmetric matrix: the real part as a CSR matrix and the
/// imaginary part's values in the same CSR order.
#[derive(Debug, Clone)]
pub struct ComplexMatrix {
    /// A′ (the structure of both parts).
    pub re: Matrix,
    /// Values of A″, in the CSR order of `re`.
    pub im: Vec<f64>,
}

/// A complex vector stored as real and imaginary parts.
#[derive(Debug, Clone, PartialEq)]
pub struct ComplexVector {
    /// Real parts.
    pub re: Vec<f64>,
    /// Imaginary parts.
    pub im: Vec<f64>,
}

impl ComplexVector {
    /// Zeros of length `n`.
    pub fn zeros(n: usize) -> ComplexVector {
        ComplexVector { re: vec![0.0; n], im: vec![0.0; n] }
    }

    /// From complex values.
    pub fn from_values(v: &[Complex64]) -> ComplexVector {
        ComplexVector { re: v.iter().map(|c| c.re).collect(), im: v.iter().map(|c| c.im).collect() }
    }

    /// Number of entries.
    pub fn len(&self) -> usize {
        self.re.len()
    }

    /// True when empty.
    pub fn is_empty(&self) -> bool {
        self.re.is_empty()
    }

    fn norm(&self) -> f64 {
        (kernels::dot(&self.re, &self.re) + kernels::dot(&self.im, &self.im)).sqrt()
    }

    fn finite(&self) -> bool {
        self.re.iter().chain(&self.im).all(|v| v.is_finite())
    }
}

impl ComplexMatrix {
    /// A complex matrix from CSR values `values` on the structure of `re`
    /// (whose own values are replaced by the real parts).
    pub fn new(structure: Matrix, values: &[Complex64]) -> ComplexMatrix {
        let (rows, cols) = structure.shape();
        let (indptr, indices, _) = structure.into_raw_storage();
        let re = Matrix::new((rows, cols), indptr, indices, values.iter().map(|c| c.re).collect());
        ComplexMatrix { re, im: values.iter().map(|c| c.im).collect() }
    }

    /// Rows.
    pub fn rows(&self) -> usize {
        self.re.rows()
    }

    /// Stored entries.
    pub fn nnz(&self) -> usize {
        self.re.nnz()
    }

    /// y = A·x, one pass over the structure for both parts, rows in
    /// parallel (each row summed in a fixed order: deterministic).
    pub fn matvec(&self, x: &ComplexVector, y: &mut ComplexVector) {
        let indptr = self.re.indptr();
        let indptr = indptr.raw_storage();
        let (indices, re, im) = (self.re.indices(), self.re.data(), &self.im);
        y.re.par_chunks_mut(kernels::CHUNK).zip(y.im.par_chunks_mut(kernels::CHUNK)).enumerate().for_each(
            |(c, (yr, yi))| {
                let start = c * kernels::CHUNK;
                for (k, (yr, yi)) in yr.iter_mut().zip(yi.iter_mut()).enumerate() {
                    let row = start + k;
                    let (mut sr, mut si) = (0.0, 0.0);
                    for e in indptr[row]..indptr[row + 1] {
                        let j = indices[e] as usize;
                        let (a, b) = (re[e], im[e]);
                        sr += a * x.re[j] - b * x.im[j];
                        si += a * x.im[j] + b * x.re[j];
                    }
                    *yr = sr;
                    *yi = si;
                }
            },
        );
    }

    /// r = b − A·x.
    pub fn residual(&self, x: &ComplexVector, b: &ComplexVector, r: &mut ComplexVector) {
        self.matvec(x, r);
        for (r, b) in r.re.iter_mut().zip(&b.re).chain(r.im.iter_mut().zip(&b.im)) {
            *r = b - *r;
        }
    }

    /// ‖b − A·x‖₂ / ‖b‖₂.
    pub fn relative_residual(&self, x: &ComplexVector, b: &ComplexVector) -> f64 {
        let mut r = ComplexVector::zeros(b.len());
        self.residual(x, b, &mut r);
        let nb = b.norm();
        if nb > 0.0 { r.norm() / nb } else { r.norm() }
    }
}

/// The unconjugated bilinear form xᵀy.
fn bilinear(x: &ComplexVector, y: &ComplexVector) -> Complex64 {
    Complex64::new(
        kernels::dot(&x.re, &y.re) - kernels::dot(&x.im, &y.im),
        kernels::dot(&x.re, &y.im) + kernels::dot(&x.im, &y.re),
    )
}

/// y ← y + α·x.
fn axpy(alpha: Complex64, x: &ComplexVector, y: &mut ComplexVector) {
    kernels::axpy(alpha.re, &x.re, &mut y.re);
    kernels::axpy(-alpha.im, &x.im, &mut y.re);
    kernels::axpy(alpha.re, &x.im, &mut y.im);
    kernels::axpy(alpha.im, &x.re, &mut y.im);
}

/// p ← z + β·p.
fn xpby(z: &ComplexVector, beta: Complex64, p: &mut ComplexVector) {
    p.re.par_iter_mut()
        .zip(p.im.par_iter_mut())
        .zip(z.re.par_iter().zip(z.im.par_iter()))
        .with_min_len(kernels::CHUNK)
        .for_each(|((pr, pi), (zr, zi))| {
            let (r, i) = (*pr, *pi);
            *pr = zr + beta.re * r - beta.im * i;
            *pi = zi + beta.re * i + beta.im * r;
        });
}

/// z = M⁻¹·r for both parts, through the preconditioner's two-part path
/// (`buffers` holds the interleaved parts between calls).
fn precondition(
    m: &mut (impl Preconditioner + ?Sized),
    r: &ComplexVector,
    z: &mut ComplexVector,
    buffers: &mut (Vec<kernels::Pair>, Vec<kernels::Pair>),
) {
    let (ri, zi) = buffers;
    ri.par_iter_mut()
        .zip(r.re.par_iter().zip(r.im.par_iter()))
        .with_min_len(kernels::CHUNK)
        .for_each(|(p, (a, b))| *p = kernels::Pair([*a, *b]));
    m.apply_pair(ri, zi);
    z.re.par_iter_mut().zip(z.im.par_iter_mut()).zip(zi.par_iter()).with_min_len(kernels::CHUNK).for_each(
        |((a, b), p)| {
            *a = p.0[0];
            *b = p.0[1];
        },
    );
}

/// |xᵀy| below this fraction of ‖x‖·‖y‖ counts as a breakdown of the
/// recurrence (the bilinear form is not a norm and can vanish).
const BREAKDOWN: f64 = 1e-14;

/// Solves A·x = b by preconditioned COCG from `x0` (`None`: zero). With
/// `stall_window = Some(w)` it gives up when w iterations gained less than
/// a factor 10.
pub fn cocg(
    a: &ComplexMatrix,
    b: &ComplexVector,
    x0: Option<&ComplexVector>,
    m: &mut (impl Preconditioner + ?Sized),
    opts: &SolveOptions,
    stall_window: Option<usize>,
) -> Result<(ComplexVector, SolveReport), SolveError> {
    let n = b.len();
    let method = format!("cocg+{}", m.name());
    let report = |iterations, relative_residual, history| SolveReport {
        method: method.clone(),
        iterations,
        relative_residual,
        unknowns: n,
        history,
    };
    let norm_b = b.norm();
    if !norm_b.is_finite() {
        return Err(SolveError::NonFinite);
    }
    if norm_b == 0.0 {
        return Ok((ComplexVector::zeros(n), report(0, 0.0, Vec::new())));
    }
    let mut x = x0.cloned().unwrap_or_else(|| ComplexVector::zeros(n));
    let mut r = b.clone();
    if x0.is_some() {
        a.residual(&x, b, &mut r);
        let start = r.norm() / norm_b;
        if !start.is_finite() {
            return Err(SolveError::NonFinite);
        }
        if start <= opts.rel_tol {
            return Ok((x, report(0, start, Vec::new())));
        }
    }
    let mut z = ComplexVector::zeros(n);
    let mut buffers = (vec![kernels::Pair::default(); n], vec![kernels::Pair::default(); n]);
    precondition(m, &r, &mut z, &mut buffers);
    let mut p = z.clone();
    let mut q = ComplexVector::zeros(n);
    let mut rz = bilinear(&r, &z);
    let mut history = Vec::new();
    let mut it = 0;
    let mut restarts = 0;
    loop {
        if it >= opts.max_iterations {
            return Err(SolveError::NoConvergence {
                iterations: it,
                relative_residual: a.relative_residual(&x, b),
                rel_tol: opts.rel_tol,
            });
        }
        it += 1;
        a.matvec(&p, &mut q);
        let pq = bilinear(&p, &q);
        if !pq.is_finite() {
            return Err(SolveError::NonFinite);
        }
        if pq.norm() <= BREAKDOWN * p.norm() * q.norm() {
            return Err(SolveError::Breakdown { iteration: it });
        }
        let alpha = rz / pq;
        axpy(alpha, &p, &mut x);
        axpy(-alpha, &q, &mut r);
        let rel = r.norm() / norm_b;
        history.push(rel);
        if rel <= opts.rel_tol {
            a.residual(&x, b, &mut r);
            let true_rel = r.norm() / norm_b;
            if !true_rel.is_finite() || !x.finite() {
                return Err(SolveError::NonFinite);
            }
            if true_rel <= opts.rel_tol {
                return Ok((x, report(it, true_rel, history)));
            }
            restarts += 1;
            if restarts > super::MAX_RESTARTS {
                return Err(SolveError::NoConvergence {
                    iterations: it,
                    relative_residual: true_rel,
                    rel_tol: opts.rel_tol,
                });
            }
            precondition(m, &r, &mut z, &mut buffers);
            rz = bilinear(&r, &z);
            p.clone_from(&z);
            continue;
        }
        if let Some(w) = stall_window
            && it > w
            && rel > 0.1 * history[it - 1 - w]
        {
            return Err(SolveError::NoConvergence { iterations: it, relative_residual: rel, rel_tol: opts.rel_tol });
        }
        precondition(m, &r, &mut z, &mut buffers);
        let rz_new = bilinear(&r, &z);
        if rz_new.norm() <= BREAKDOWN * r.norm() * z.norm() {
            return Err(SolveError::Breakdown { iteration: it });
        }
        let beta = rz_new / rz;
        rz = rz_new;
        xpby(&z, beta, &mut p);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solve::{Jacobi, gallery::laplace_1d};

    /// (1 − j)·L for the 1D Laplacian L: the solution is b/(1 − j)
    /// applied to L⁻¹, so x·(1 − j) solves the real system (exact algebra).
    #[test]
    fn a_complex_multiple_of_a_real_matrix_gives_the_scaled_real_solution() {
        let l = laplace_1d(60);
        let values: Vec<Complex64> = l.data().iter().map(|v| Complex64::new(*v, -*v)).collect();
        let a = ComplexMatrix::new(l.clone(), &values);
        let b = ComplexVector { re: (0..60).map(|i| (i as f64 * 0.3).sin()).collect(), im: vec![0.0; 60] };
        let (x, rep) = cocg(&a, &b, None, &mut Jacobi::new(&l), &SolveOptions::default(), None).unwrap();
        assert!(rep.relative_residual <= 1e-10, "{rep:?}");
        let (real, _) = crate::solve::pcg(&l, &b.re, &mut Jacobi::new(&l), &SolveOptions::default(), None).unwrap();
        for k in 0..60 {
            let scaled = Complex64::new(x.re[k], x.im[k]) * Complex64::new(1.0, -1.0);
            assert!((scaled.re - real[k]).abs() < 1e-8 * real.iter().fold(0.0f64, |m, v| m.max(v.abs())));
            assert!(scaled.im.abs() < 1e-8 * real.iter().fold(0.0f64, |m, v| m.max(v.abs())));
        }
    }

    #[test]
    fn too_few_iterations_is_an_error_not_an_answer() {
        let l = laplace_1d(200);
        let values: Vec<Complex64> = l.data().iter().map(|v| Complex64::new(*v, 0.3 * *v)).collect();
        let a = ComplexMatrix::new(l.clone(), &values);
        let b = ComplexVector { re: vec![1.0; 200], im: vec![0.5; 200] };
        let opts = SolveOptions { rel_tol: 1e-12, max_iterations: 5 };
        let r = cocg(&a, &b, None, &mut Jacobi::new(&l), &opts, None);
        assert!(matches!(r, Err(SolveError::NoConvergence { .. })));
    }
}
