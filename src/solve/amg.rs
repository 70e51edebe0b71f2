//! Smoothed-aggregation algebraic multigrid, used as a preconditioner for
//! conjugate gradients.
//!
//! Method (Vaněk, Mandel & Brezina, "Algebraic multigrid by smoothed
//! aggregation for second and fourth order elliptic problems", Computing 56,
//! 1996), with the choices this code makes:
//!
//! * Strength of connection (symmetric, scale-free): j is a strong neighbour
//!   of i when `|a_ij| ≥ θ·√(a_ii·a_jj)`. Because it compares each coupling
//!   with the diagonals on both sides, a coupling across a jump of
//!   permittivity (εr 80 : 1) or across the long side of a thin cell is weak,
//!   so aggregates follow materials and thin layers instead of crossing them.
//! * Aggregation: the standard three passes (root nodes whose strong
//!   neighbourhood is still free; leftovers join a neighbouring aggregate;
//!   the rest form new aggregates). Nodes without strong neighbours are
//!   singletons.
//! * Prolongation: the tentative piecewise-constant P₀ smoothed by one
//!   damped-Jacobi step on the filtered matrix (weak couplings lumped into
//!   the diagonal): `P = (I − ω·D_F⁻¹·A_F)·P₀`, `ω = 4/(3·ρ)`, ρ bounded by
//!   Gershgorin on the finest level and estimated by power iteration on
//!   the coarse ones. The filtered matrix keeps P as sparse as the strong
//!   graph.
//! * Coarse operators by the Galerkin product `A_c = Pᵀ·A·P` (sprs's
//!   parallel sparse product), so every level stays symmetric positive
//!   definite.
//! * Smoother: Chebyshev polynomial in D⁻¹·A over `[λ/ratio, 1.1·λ]`
//!   (as in Adams, Brezina, Hu & Tuminaro, J. Comput. Phys. 188, 2003): only
//!   matrix–vector products, so it runs on every core, and the same
//!   polynomial before and after the coarse correction keeps the V-cycle
//!   symmetric, as CG needs.
//! * Coarsest level: dense Cholesky (nalgebra) once it has at most
//!   `max_coarse` rows.
//! * Transfer operators P and R = Pᵀ in single precision with 32-bit
//!   offsets (`Transfer`): a third less memory and traffic than the
//!   matrices, the cycle unchanged in structure and still symmetric.
//!
//! Memory: sparse matrices only; the dense factor is at most
//! `max_coarse²` numbers.

use super::kernels::{
    CHUNK, Lane, Pair, chebyshev_direction, gershgorin_scaled, inverse_diagonal, jacobi_into, matvec, residual,
};
use super::{Matrix, Preconditioner, RowBlock, from_row_blocks, sort_and_merge};
use nalgebra::{Cholesky, DMatrix, DVector, Dyn};
use rayon::prelude::*;
use std::borrow::Cow;

/// Settings of the multigrid hierarchy.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AmgOptions {
    /// θ of the strength test `|a_ij| ≥ θ·√(a_ii·a_jj)`.
    pub strength_threshold: f64,
    /// Largest level solved densely.
    pub max_coarse: usize,
    /// Most levels built.
    pub max_levels: usize,
    /// Chebyshev degree of the pre- and post-smoother on the finest level.
    pub smoother_degree: usize,
    /// Chebyshev degree on the coarser levels (cheap there, and it buys
    /// iterations).
    pub coarse_smoother_degree: usize,
    /// Ratio of the largest to the smallest eigenvalue the smoother damps.
    pub eigen_ratio: f64,
}

impl Default for AmgOptions {
    fn default() -> Self {
        AmgOptions {
            strength_threshold: 0.03,
            max_coarse: 400,
            max_levels: 20,
            smoother_degree: 1,
            coarse_smoother_degree: 1,
            eigen_ratio: 20.0,
        }
    }
}

/// Why a hierarchy could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AmgError {
    /// The coarsest matrix has no Cholesky factor (not positive definite).
    #[error("the coarsest multigrid level ({rows} rows) is not positive definite")]
    CoarseNotDefinite {
        /// Rows of the coarsest level.
        rows: usize,
    },
    /// A transfer operator has more entries than 32-bit offsets address.
    #[error("a multigrid transfer operator has {entries} entries, more than 32-bit offsets address")]
    TooLarge {
        /// Its entries.
        entries: usize,
    },
    /// Coarsening stopped while the level was still too large for a dense solve.
    #[error("multigrid coarsening stalled at {rows} rows")]
    Stalled {
        /// Rows where it stalled.
        rows: usize,
    },
}

struct Level<'a> {
    a: Cow<'a, Matrix>,
    inv_diag: Vec<f64>,
    lambda_max: f64,
    p: Transfer,
    r: Transfer,
}

/// A transfer operator between two levels (the prolongator P or the
/// restriction R = Pᵀ), stored compactly for the cycle: 32-bit row offsets
/// and single-precision weights, 8 bytes an entry instead of 12 (it is read
/// twice per cycle, and on the finest level it is the largest matrix after
/// A). The weights are rounded before the Galerkin product, so the coarse
/// operators are those of the rounded P and R is exactly its transpose:
/// the cycle stays symmetric. Only the preconditioner is affected; CG
/// still stops on the true residual of the double-precision system.
struct Transfer {
    indptr: Vec<u32>,
    indices: Vec<u32>,
    data: Vec<f32>,
}

impl Transfer {
    /// The compact copy of `m`, whose values are already single-precision
    /// numbers. `None` when its entries do not fit 32-bit offsets.
    fn of(m: &Matrix) -> Option<Transfer> {
        let indptr = m.indptr();
        let indptr = indptr.raw_storage().iter().map(|&o| u32::try_from(o).ok()).collect::<Option<Vec<u32>>>()?;
        Some(Transfer { indptr, indices: m.indices().to_vec(), data: m.data().iter().map(|&v| v as f32).collect() })
    }

    /// y = T·x (`ADD`: y ← y + T·x), parallel over rows.
    fn apply<T: Lane, const ADD: bool>(&self, x: &[T], y: &mut [T]) {
        let (ip, ix, dv) = (&self.indptr, &self.indices, &self.data);
        y.par_chunks_mut(CHUNK).enumerate().for_each(|(c, out)| {
            for (k, o) in out.iter_mut().enumerate() {
                let row = c * CHUNK + k;
                let (s, e) = (ip[row] as usize, ip[row + 1] as usize);
                let mut acc = T::default();
                for (v, j) in dv[s..e].iter().zip(&ix[s..e]) {
                    acc += x[*j as usize] * f64::from(*v);
                }
                if ADD {
                    *o += acc;
                } else {
                    *o = acc;
                }
            }
        });
    }
}

/// Rounds every value of `m` to the nearest single-precision number.
fn round_to_single(m: &mut Matrix) {
    m.data_mut().iter_mut().for_each(|v| *v = f64::from(*v as f32));
}

struct Scratch<T = f64> {
    b: Vec<T>,
    x: Vec<T>,
    r: Vec<T>,
    d: Vec<T>,
}

/// The dense coarsest-level solve for the kernels' value types.
trait CoarseSolve: Lane {
    fn coarse(chol: &Cholesky<f64, Dyn>, b: &[Self], x: &mut [Self]);
}

impl CoarseSolve for f64 {
    fn coarse(chol: &Cholesky<f64, Dyn>, b: &[f64], x: &mut [f64]) {
        let sol = chol.solve(&DVector::from_column_slice(b));
        x.copy_from_slice(sol.as_slice());
    }
}

impl CoarseSolve for Pair {
    fn coarse(chol: &Cholesky<f64, Dyn>, b: &[Pair], x: &mut [Pair]) {
        let m = DMatrix::from_fn(b.len(), 2, |i, k| b[i].0[k]);
        let sol = chol.solve(&m);
        for (i, x) in x.iter_mut().enumerate() {
            *x = Pair([sol[(i, 0)], sol[(i, 1)]]);
        }
    }
}

/// Scratch vectors of every level (the finest reads its right-hand side
/// from the caller), the coarsest last.
fn scratch_for<T: Lane>(levels: &[Level<'_>], coarse_rows: usize) -> Vec<Scratch<T>> {
    let zero = |n: usize| vec![T::default(); n];
    levels
        .iter()
        .enumerate()
        .map(|(k, l)| {
            let n = l.a.rows();
            Scratch { b: if k == 0 { Vec::new() } else { zero(n) }, x: zero(n), r: zero(n), d: zero(n) }
        })
        .chain(std::iter::once(Scratch { b: zero(coarse_rows), x: zero(coarse_rows), r: Vec::new(), d: Vec::new() }))
        .collect()
}

/// A built multigrid hierarchy. It borrows the finest matrix.
pub struct Amg<'a> {
    levels: Vec<Level<'a>>,
    coarse: Cholesky<f64, Dyn>,
    coarse_rows: usize,
    scratch: Vec<Scratch>,
    /// Scratch of the two-part cycle, made on its first use.
    pair_scratch: Vec<Scratch<Pair>>,
    options: AmgOptions,
    /// Rows and non-zeros of every level, finest first (the dense level last).
    pub shape: Vec<(usize, usize)>,
}

const UNASSIGNED: u32 = u32::MAX;

/// Marks the strong off-diagonal entries of `a` (same layout as `a.data()`).
fn strong_entries(a: &Matrix, theta: f64) -> Vec<bool> {
    let diag: Vec<f64> =
        a.outer_iterator().enumerate().map(|(i, row)| row.get(i).copied().unwrap_or(0.0).abs()).collect();
    let indptr = a.indptr();
    let indptr = indptr.raw_storage();
    let (indices, data) = (a.indices(), a.data());
    let mut strong = vec![false; data.len()];
    strong.par_chunks_mut(1 << 14).enumerate().for_each(|(c, out)| {
        let first = c << 14;
        // rows overlapping this chunk of entries
        let mut row = indptr.partition_point(|&p| p <= first).saturating_sub(1);
        for (k, s) in out.iter_mut().enumerate() {
            let e = first + k;
            while indptr[row + 1] <= e {
                row += 1;
            }
            let j = indices[e] as usize;
            *s = j != row && data[e].abs() >= theta * (diag[row] * diag[j]).sqrt();
        }
    });
    strong
}

/// Standard three-pass aggregation on the strong graph.
fn aggregate(a: &Matrix, strong: &[bool]) -> (Vec<u32>, usize) {
    let n = a.rows();
    let indptr = a.indptr();
    let indptr = indptr.raw_storage();
    let indices = a.indices();
    let neighbours = |i: usize| (indptr[i]..indptr[i + 1]).filter(|&e| strong[e]).map(|e| (e, indices[e] as usize));
    let mut agg = vec![UNASSIGNED; n];
    let mut count = 0u32;
    for i in 0..n {
        if agg[i] != UNASSIGNED {
            continue;
        }
        let mut has = false;
        let mut free = true;
        for (_, j) in neighbours(i) {
            has = true;
            free &= agg[j] == UNASSIGNED;
        }
        if has && free {
            agg[i] = count;
            for (_, j) in neighbours(i) {
                agg[j] = count;
            }
            count += 1;
        }
    }
    let first = agg.clone();
    for (i, slot) in agg.iter_mut().enumerate() {
        if *slot != UNASSIGNED {
            continue;
        }
        let best = neighbours(i)
            .filter(|&(_, j)| first[j] != UNASSIGNED)
            .max_by(|x, y| a.data()[x.0].abs().total_cmp(&a.data()[y.0].abs()));
        if let Some((_, j)) = best {
            *slot = first[j];
        }
    }
    for i in 0..n {
        if agg[i] != UNASSIGNED {
            continue;
        }
        agg[i] = count;
        for (_, j) in neighbours(i) {
            if agg[j] == UNASSIGNED {
                agg[j] = count;
            }
        }
        count += 1;
    }
    (agg, count as usize)
}

/// Smoothed prolongator `P = (I − ω·D_F⁻¹·A_F)·P₀` built row by row:
/// row i has `1 − ω` on its own aggregate and `−ω·a_ij/d_F,i` on the
/// aggregate of every strong neighbour j.
///
/// ρ bounds the spectral radius of D_F⁻¹·A_F: Gershgorin's bound when
/// `rho` is `None` (close on the diagonally dominant finest level), else
/// the given estimate (coarse levels: the power estimate of D⁻¹·A, as in
/// Vaněk et al., where Gershgorin's bound is up to twice too large and
/// would leave the prolongator under-smoothed: on the 1024² benchmark 21
/// iterations against 18).
fn prolongator(a: &Matrix, strong: &[bool], agg: &[u32], coarse: usize, rho: Option<f64>) -> Matrix {
    let n = a.rows();
    let indptr = a.indptr();
    let indptr = indptr.raw_storage();
    let (indices, data) = (a.indices(), a.data());
    // filtered diagonal: weak couplings lumped in, unless that would make it non-positive
    let dfil: Vec<f64> = (0..n)
        .into_par_iter()
        .with_min_len(CHUNK)
        .map(|i| {
            let (mut d, mut weak) = (0.0, 0.0);
            for e in indptr[i]..indptr[i + 1] {
                if indices[e] as usize == i {
                    d = data[e];
                } else if !strong[e] {
                    weak += data[e];
                }
            }
            if d + weak > 0.0 { d + weak } else { d.max(f64::MIN_POSITIVE) }
        })
        .collect();
    let gershgorin = || {
        (0..n)
            .into_par_iter()
            .with_min_len(CHUNK)
            .map(|i| {
                (dfil[i] + (indptr[i]..indptr[i + 1]).filter(|&e| strong[e]).map(|e| data[e].abs()).sum::<f64>())
                    / dfil[i]
            })
            .reduce(|| 1.0, f64::max)
    };
    let omega = 4.0 / (3.0 * rho.unwrap_or_else(gershgorin));
    let blocks: Vec<RowBlock> = (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|c| {
            let mut block = RowBlock {
                counts: Vec::with_capacity(CHUNK),
                cols: Vec::with_capacity(4 * CHUNK),
                vals: Vec::with_capacity(4 * CHUNK),
            };
            let mut row: Vec<(u32, f64)> = Vec::new();
            for i in c * CHUNK..((c + 1) * CHUNK).min(n) {
                row.clear();
                row.push((agg[i], 1.0 - omega));
                for e in indptr[i]..indptr[i + 1] {
                    if strong[e] {
                        row.push((agg[indices[e] as usize], -omega * data[e] / dfil[i]));
                    }
                }
                sort_and_merge(&mut row);
                block.push_row(row.iter().copied());
            }
            block
        })
        .collect();
    from_row_blocks(n, coarse, blocks)
}

/// Pᵀ in CSR by a counting sort over columns; rows of the result list
/// their columns in increasing order.
fn transpose(p: &Matrix) -> Matrix {
    let (rows, cols) = (p.rows(), p.cols());
    let (pip, pix, pdv) = (p.indptr(), p.indices(), p.data());
    let pip = pip.raw_storage();
    let mut ip = vec![0usize; cols + 1];
    for &c in pix {
        ip[c as usize + 1] += 1;
    }
    for k in 0..cols {
        ip[k + 1] += ip[k];
    }
    let mut next = ip.clone();
    let mut ix = vec![0u32; pix.len()];
    let mut dv = vec![0.0; pix.len()];
    for i in 0..rows {
        for e in pip[i]..pip[i + 1] {
            let c = pix[e] as usize;
            ix[next[c]] = i as u32;
            dv[next[c]] = pdv[e];
            next[c] += 1;
        }
    }
    Matrix::new((cols, rows), ip, ix, dv)
}

/// Galerkin product `A_c = R·A·P` (R = Pᵀ) row by row, without forming
/// A·P: for coarse row I, `A_c[I, J] = Σ_i R_Ii Σ_j a_ij·P_jJ`, gathered in a
/// dense accumulator per task (Gustavson's method applied twice). Each row
/// sums in a fixed order, so the result does not depend on threads.
fn galerkin(a: &Matrix, p: &Matrix, r: &Matrix) -> Matrix {
    let nc = p.cols();
    let (aip, aix, adv) = (a.indptr(), a.indices(), a.data());
    let aip = aip.raw_storage();
    let (pip, pix, pdv) = (p.indptr(), p.indices(), p.data());
    let pip = pip.raw_storage();
    let (rip, rix, rdv) = (r.indptr(), r.indices(), r.data());
    let rip = rip.raw_storage();
    // A few blocks per thread, each with its own accumulator of nc entries.
    let blocks = (rayon::current_num_threads() * 4).clamp(1, nc.max(1));
    let rows_per_task = nc.div_ceil(blocks).max(1);
    let blocks: Vec<RowBlock> = (0..nc.div_ceil(rows_per_task))
        .into_par_iter()
        .map_init(
            || (vec![0.0f64; nc], vec![u32::MAX; nc], Vec::<u32>::new()),
            |(acc, mark, touched), c| {
                let guess = 9 * rows_per_task;
                let mut block = RowBlock {
                    counts: Vec::with_capacity(rows_per_task),
                    cols: Vec::with_capacity(guess),
                    vals: Vec::with_capacity(guess),
                };
                for row in c * rows_per_task..((c + 1) * rows_per_task).min(nc) {
                    touched.clear();
                    for e in rip[row]..rip[row + 1] {
                        let (i, rv) = (rix[e] as usize, rdv[e]);
                        for f in aip[i]..aip[i + 1] {
                            let (j, ra) = (aix[f] as usize, rv * adv[f]);
                            for g in pip[j]..pip[j + 1] {
                                let col = pix[g] as usize;
                                if mark[col] != row as u32 {
                                    mark[col] = row as u32;
                                    acc[col] = 0.0;
                                    touched.push(col as u32);
                                }
                                acc[col] += ra * pdv[g];
                            }
                        }
                    }
                    touched.sort_unstable();
                    block.push_row(touched.iter().map(|&col| (col, acc[col as usize])));
                }
                block
            },
        )
        .collect();
    from_row_blocks(nc, nc, blocks)
}

impl<'a> Amg<'a> {
    /// Builds the hierarchy for the symmetric positive definite matrix `a`.
    pub fn new(a: &'a Matrix, options: &AmgOptions) -> Result<Amg<'a>, AmgError> {
        let mut levels = Vec::new();
        let mut current: Cow<'a, Matrix> = Cow::Borrowed(a);
        while current.rows() > options.max_coarse && levels.len() + 1 < options.max_levels {
            let strong = strong_entries(&current, options.strength_threshold);
            let (agg, coarse) = aggregate(&current, &strong);
            if coarse as f64 > 0.85 * current.rows() as f64 {
                break;
            }
            let inv_diag = inverse_diagonal(&current);
            // The finest matrix is diagonally dominant, where Gershgorin's
            // bound is close; coarse Galerkin operators are not, and the
            // bound would overestimate λ and weaken the smoother there —
            // and the prolongator's smoothing, which gets the estimate too.
            let (lambda_max, rho) = if levels.is_empty() {
                (gershgorin_scaled(&current, &inv_diag), None)
            } else {
                let lambda = power_estimate(&current, &inv_diag, 12);
                (lambda, Some(lambda / POWER_MARGIN))
            };
            let mut p = prolongator(&current, &strong, &agg, coarse, rho);
            round_to_single(&mut p);
            let r = transpose(&p);
            let next = galerkin(&current, &p, &r);
            let too_large = || AmgError::TooLarge { entries: p.nnz() };
            let (p, r) = (Transfer::of(&p).ok_or_else(too_large)?, Transfer::of(&r).ok_or_else(too_large)?);
            levels.push(Level { a: current, inv_diag, lambda_max, p, r });
            current = Cow::Owned(next);
        }
        let rows = current.rows();
        if rows > options.max_coarse.max(4000) {
            return Err(AmgError::Stalled { rows });
        }
        let mut dense = DMatrix::<f64>::zeros(rows, rows);
        for (i, row) in current.outer_iterator().enumerate() {
            for (j, v) in row.iter() {
                dense[(i, j)] = *v;
            }
        }
        let coarse = Cholesky::new(dense).ok_or(AmgError::CoarseNotDefinite { rows })?;
        let mut shape: Vec<(usize, usize)> = levels.iter().map(|l| (l.a.rows(), l.a.nnz())).collect();
        shape.push((rows, current.nnz()));
        let scratch = scratch_for(&levels, rows);
        Ok(Amg { levels, coarse, coarse_rows: rows, scratch, pair_scratch: Vec::new(), options: *options, shape })
    }

    /// Number of levels, the dense one included.
    pub fn depth(&self) -> usize {
        self.levels.len() + 1
    }

    /// Σ nnz over all levels / nnz of the finest.
    pub fn operator_complexity(&self) -> f64 {
        let total: usize = self.shape.iter().map(|s| s.1).sum();
        total as f64 / self.shape[0].1.max(1) as f64
    }
}

/// The margin `power_estimate` adds for the iterations' shortfall.
const POWER_MARGIN: f64 = 1.05;

/// Largest eigenvalue of D⁻¹·A by power iteration from a fixed start
/// vector (deterministic), with a 5 % margin for the iterations' shortfall.
fn power_estimate(a: &Matrix, inv_diag: &[f64], iterations: usize) -> f64 {
    let n = a.rows();
    let mut v: Vec<f64> = (0..n).map(|i| 1.0 + ((i * 7919) % 101) as f64 / 101.0).collect();
    let mut w = vec![0.0; n];
    let mut lambda = 0.0;
    for _ in 0..iterations {
        matvec(a, &v, &mut w);
        w.iter_mut().zip(inv_diag).for_each(|(w, d)| *w *= d);
        let norm = super::kernels::norm(&w);
        let vn = super::kernels::norm(&v);
        if norm == 0.0 || vn == 0.0 {
            break;
        }
        lambda = norm / vn;
        std::mem::swap(&mut v, &mut w);
    }
    if lambda > 0.0 { POWER_MARGIN * lambda } else { gershgorin_scaled(a, inv_diag) }
}

/// Chebyshev smoothing of A·x = b in D⁻¹A over `[λ/ratio, 1.1·λ]`
/// (Ifpack2's recurrence). `zero_start` treats x as zero on entry and saves
/// one product.
fn chebyshev<T: Lane>(lvl: &Level<'_>, degree: usize, ratio: f64, b: &[T], x: &mut [T], d: &mut [T], zero_start: bool) {
    let upper = 1.1 * lvl.lambda_max;
    let lower = lvl.lambda_max / ratio;
    let theta = 0.5 * (upper + lower);
    let delta = 2.0 / (upper - lower);
    let s1 = theta * delta;
    let inv = &lvl.inv_diag;
    // d = D⁻¹(b − A·x)/θ
    if zero_start {
        super::kernels::scale(1.0 / theta, inv, b, d);
        x.copy_from_slice(d);
    } else {
        chebyshev_direction(&lvl.a, x, b, inv, 0.0, 1.0 / theta, d);
        super::kernels::axpy(1.0, d, x);
    }
    let mut rho = 1.0 / s1;
    for _ in 1..degree {
        let rho_next = 1.0 / (2.0 * s1 - rho);
        let (c1, c2) = (rho_next * rho, 2.0 * rho_next * delta);
        rho = rho_next;
        chebyshev_direction(&lvl.a, x, b, inv, c1, c2, d);
        super::kernels::axpy(1.0, d, x);
    }
}

/// One V-cycle from a zero initial guess. The finest level works in its
/// own scratch vector and its last smoothing step writes `z`.
fn cycle<T: CoarseSolve>(
    levels: &[Level<'_>],
    coarse: &Cholesky<f64, Dyn>,
    options: &AmgOptions,
    scratch: &mut [Scratch<T>],
    r_in: &[T],
    z: &mut [T],
) {
    let ratio = options.eigen_ratio;
    let (fine_deg, coarse_deg) = (options.smoother_degree, options.coarse_smoother_degree);
    let nl = levels.len();
    if nl == 0 {
        T::coarse(coarse, r_in, z);
        return;
    }
    // descend
    for l in 0..nl {
        let (lo, hi) = scratch.split_at_mut(l + 1);
        let Scratch { b: sb, x, r, d } = &mut lo[l];
        let lvl = &levels[l];
        let b: &[T] = if l == 0 { r_in } else { sb };
        let deg = if l == 0 { fine_deg } else { coarse_deg };
        chebyshev(lvl, deg, ratio, b, x, d, true);
        residual(&lvl.a, x, b, r);
        lvl.r.apply::<T, false>(r, &mut hi[0].b);
    }
    // coarsest
    let last = &mut scratch[nl];
    T::coarse(coarse, &last.b, &mut last.x);
    // ascend
    for l in (0..nl).rev() {
        let (lo, hi) = scratch.split_at_mut(l + 1);
        let Scratch { b: sb, x, d, .. } = &mut lo[l];
        let lvl = &levels[l];
        let b: &[T] = if l == 0 { r_in } else { sb };
        lvl.p.apply::<T, true>(&hi[0].x, x);
        let deg = if l == 0 { fine_deg } else { coarse_deg };
        if deg == 1 {
            // damped Jacobi with the degree-1 Chebyshev weight, into a second buffer
            let c = 2.0 / (1.1 * lvl.lambda_max + lvl.lambda_max / ratio);
            if l == 0 {
                jacobi_into(&lvl.a, x, b, &lvl.inv_diag, c, z);
            } else {
                jacobi_into(&lvl.a, x, b, &lvl.inv_diag, c, d);
                std::mem::swap(x, d);
            }
        } else {
            chebyshev(lvl, deg, ratio, b, x, d, false);
            if l == 0 {
                z.copy_from_slice(x);
            }
        }
    }
}

impl Preconditioner for Amg<'_> {
    /// One V-cycle from a zero initial guess.
    fn apply(&mut self, r_in: &[f64], z: &mut [f64]) {
        cycle(&self.levels, &self.coarse, &self.options, &mut self.scratch, r_in, z);
    }

    /// One V-cycle for both parts at once: each level's matrices are read
    /// once for the two (the same arithmetic as two `apply` calls).
    fn apply_pair(&mut self, r_in: &[Pair], z: &mut [Pair]) {
        if self.pair_scratch.is_empty() {
            self.pair_scratch = scratch_for(&self.levels, self.coarse_rows);
        }
        cycle(&self.levels, &self.coarse, &self.options, &mut self.pair_scratch, r_in, z);
    }

    fn name(&self) -> &str {
        "amg"
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solve::gallery::laplace_1d;

    /// The compact transfer operator multiplies exactly as the rounded
    /// double-precision matrix it was made from (single-precision weights
    /// widen to f64 without error), and transposes with it.
    #[test]
    fn the_compact_transfer_multiplies_as_its_matrix() {
        let a = laplace_1d(9_000);
        let strong = strong_entries(&a, 0.03);
        let (agg, coarse) = aggregate(&a, &strong);
        let mut p = prolongator(&a, &strong, &agg, coarse, None);
        assert!(p.data().iter().any(|&v| v as f32 as f64 != v), "some weight needs rounding");
        round_to_single(&mut p);
        let r = transpose(&p);
        let (tp, tr) = (Transfer::of(&p).expect("fits"), Transfer::of(&r).expect("fits"));
        let xc: Vec<f64> = (0..coarse).map(|i| (i as f64 * 0.37).sin()).collect();
        let xf: Vec<f64> = (0..a.rows()).map(|i| (i as f64 * 0.011).cos()).collect();
        let (mut y1, mut y2) = (vec![0.5; a.rows()], vec![0.5; a.rows()]);
        crate::solve::kernels::matvec_add(&p, &xc, &mut y1);
        tp.apply::<f64, true>(&xc, &mut y2);
        assert!(y1.iter().zip(&y2).all(|(a, b)| a.to_bits() == b.to_bits()), "prolongation");
        let (mut c1, mut c2) = (vec![0.0; coarse], vec![0.0; coarse]);
        matvec(&r, &xf, &mut c1);
        tr.apply::<f64, false>(&xf, &mut c2);
        assert!(c1.iter().zip(&c2).all(|(a, b)| a.to_bits() == b.to_bits()), "restriction");
    }

    /// The two-part V-cycle does the same arithmetic as two single ones:
    /// bit-identical results (what keeps COCG's iterates the same).
    #[test]
    fn the_two_part_cycle_equals_two_single_cycles() {
        let a = laplace_1d(20_000);
        let options = AmgOptions { max_coarse: 50, ..AmgOptions::default() };
        let mut amg = Amg::new(&a, &options).expect("hierarchy");
        assert!(amg.depth() > 2, "a multilevel hierarchy");
        let r: Vec<Pair> = (0..20_000).map(|i| Pair([(i as f64 * 0.01).sin(), (i as f64 * 0.003).cos()])).collect();
        let mut z = vec![Pair::default(); r.len()];
        amg.apply_pair(&r, &mut z);
        for k in 0..2 {
            let part: Vec<f64> = r.iter().map(|p| p.0[k]).collect();
            let mut single = vec![0.0; part.len()];
            amg.apply(&part, &mut single);
            assert!(single.iter().zip(&z).all(|(s, p)| s.to_bits() == p.0[k].to_bits()), "part {k}");
        }
    }
}
