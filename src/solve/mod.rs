//! Stage 4: solving the symmetric positive definite system.
//!
//! Preconditioned conjugate gradients (Hestenes & Stiefel 1952; the
//! preconditioned form as in Saad, *Iterative Methods for Sparse Linear
//! Systems*, 2nd ed. 2003, Alg. 9.1). Setup (building the preconditioner) and
//! solve are separate so one setup can serve many right-hand sides. The
//! solve never returns `Ok` unless the *true* relative residual
//! `‖b − A·x‖₂ / ‖b‖₂` meets the tolerance; when the recursive residual
//! claims convergence first, CG restarts from the true residual.

mod amg;
pub mod complex;
pub mod kernels;
pub mod lattice;
mod lines;

pub use amg::{Amg, AmgError, AmgOptions};
pub use kernels::{dot, matvec, norm};
pub use lattice::{Embedding, Lattice, Structure};
pub use lines::{LineMultigrid, LinesError};

use kernels::{inverse_diagonal, xpby};

/// Standard test matrices (as pyamg's gallery): known, small, SPD.
pub mod gallery {
    use super::Matrix;

    /// The 1D Laplacian tridiag(−1, 2, −1) of size n: symmetric positive
    /// definite, condition number ≈ 4n²/π².
    pub fn laplace_1d(n: usize) -> Matrix {
        let mut t = sprs::TriMat::new((n, n));
        for i in 0..n {
            t.add_triplet(i, i, 2.0);
            if i > 0 {
                t.add_triplet(i, i - 1, -1.0);
            }
            if i + 1 < n {
                t.add_triplet(i, i + 1, -1.0);
            }
        }
        t.to_csr::<usize>().to_other_types()
    }
}

/// Rows of a CSR matrix built by one parallel task: the length of each row,
/// then all their columns and values in row order.
#[derive(Debug, Clone, Default)]
pub struct RowBlock {
    /// Entries in each row.
    pub counts: Vec<usize>,
    /// Column of each entry.
    pub cols: Vec<u32>,
    /// Value of each entry.
    pub vals: Vec<f64>,
}

impl RowBlock {
    /// Appends a row.
    pub fn push_row(&mut self, entries: impl Iterator<Item = (u32, f64)>) {
        let before = self.cols.len();
        for (c, v) in entries {
            self.cols.push(c);
            self.vals.push(v);
        }
        self.counts.push(self.cols.len() - before);
    }
}

/// Sorts `(column, value)` entries by column and sums duplicates.
pub fn sort_and_merge(entries: &mut Vec<(u32, f64)>) {
    entries.sort_unstable_by_key(|e| e.0);
    entries.dedup_by(|later, kept| {
        if later.0 == kept.0 {
            kept.1 += later.1;
            true
        } else {
            false
        }
    });
}

/// Joins row blocks, in order, into a `rows × cols` CSR matrix.
pub fn from_row_blocks(rows: usize, cols: usize, blocks: Vec<RowBlock>) -> Matrix {
    let total: usize = blocks.iter().map(|b| b.cols.len()).sum();
    let (mut ip, mut ix, mut dv) = (Vec::with_capacity(rows + 1), Vec::with_capacity(total), Vec::with_capacity(total));
    ip.push(0);
    for b in blocks {
        for k in b.counts {
            ip.push(ip[ip.len() - 1] + k);
        }
        ix.extend_from_slice(&b.cols);
        dv.extend_from_slice(&b.vals);
    }
    Matrix::new((rows, cols), ip, ix, dv)
}

/// The sparse matrix type of the solvers: CSR with 32-bit column indices
/// (half the index traffic of `usize`; up to 4·10⁹ unknowns).
pub type Matrix = sprs::CsMatI<f64, u32, usize>;

pub use complex::{ComplexMatrix, ComplexVector};

/// Tolerances and limits of one solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveOptions {
    /// Required relative residual ‖b − A·x‖₂ / ‖b‖₂.
    pub rel_tol: f64,
    /// Iteration limit.
    pub max_iterations: usize,
}

/// Iterations over which a multigrid-preconditioned solve must gain a
/// factor 10 in residual; otherwise it counts as stalled and the solve falls
/// back to the Jacobi preconditioner. (A healthy hierarchy gains that in
/// under ten iterations.)
pub const STALL_WINDOW: usize = 100;

/// Work allowed to one solve, in stored matrix entries × iterations: about
/// half a minute on a 2-core machine (measured: 1.3 ns per entry and
/// Jacobi-CG iteration at a million unknowns). A solve that needs more is
/// reported as not converged rather than left to run for hours.
pub const WORK_LIMIT: f64 = 2e10;
/// Cost of an algebraic-multigrid-preconditioned iteration in
/// matrix–vector products (DEVELOPERS.md, benchmarks: about 7).
pub const AMG_ITERATION_COST: f64 = 7.0;
/// Cost of a line-multigrid-preconditioned iteration in matrix–vector
/// products (DEVELOPERS.md, benchmarks).
pub const LINES_ITERATION_COST: f64 = 6.0;
/// Iterations always allowed, however large the matrix.
pub const MIN_ITERATIONS: usize = 50;

/// Restarts from the true residual allowed when the recursive residual has
/// drifted below the tolerance but the true one has not; a tolerance below
/// the rounding floor of the system ends in `NoConvergence` after these.
pub const MAX_RESTARTS: usize = 3;

/// Which preconditioner the solve uses.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PreconditionerChoice {
    /// Multigrid: the geometric line multigrid where the system comes with
    /// its lattice ([`Solver::structured`]), smoothed aggregation where it
    /// does not or where the geometric one fails; Jacobi last.
    Multigrid(AmgOptions),
    /// Smoothed-aggregation multigrid only, falling back to Jacobi if its
    /// setup fails or CG stalls with it.
    Amg(AmgOptions),
    /// Jacobi (diagonal) only.
    Jacobi,
}

/// Everything a solve needs to know.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverConfig {
    /// Tolerance and iteration limit.
    pub options: SolveOptions,
    /// Preconditioner.
    pub preconditioner: PreconditionerChoice,
}

impl Default for SolverConfig {
    fn default() -> Self {
        SolverConfig {
            options: SolveOptions::default(),
            preconditioner: PreconditionerChoice::Multigrid(AmgOptions::default()),
        }
    }
}

/// Solves A·x = b with the configured preconditioner (a [`Solver`] set up
/// for one solve).
pub fn solve(a: &Matrix, b: &[f64], config: &SolverConfig) -> Result<(Vec<f64>, SolveReport), SolveError> {
    Solver::new(a, config).solve(b)
}

/// A solver set up once and kept for many solves (build once, solve many):
/// the multigrid hierarchy of its matrix is built when the solver is made,
/// then serves every right-hand side, and as a preconditioner for other
/// matrices of the same pattern (the same case at other material values).
/// A failed setup or a stalled solve falls back to the next preconditioner
/// (line multigrid, smoothed aggregation, Jacobi), and
/// `SolveReport::method` says so; an unconverged answer is never returned.
pub struct Solver<'a> {
    matrix: &'a Matrix,
    config: SolverConfig,
    /// The geometric hierarchy, or why it could not be built or failed;
    /// `None` when the system has no lattice or it was not asked for.
    lines: Option<Result<LineMultigrid, String>>,
    /// The algebraic hierarchy, or why it could not be built; built when
    /// first needed.
    amg: Option<Result<Amg<'a>, AmgError>>,
}

/// What a solve needs to know of the preconditioner it runs with.
struct Attempt {
    /// Iteration limit and tolerance, the work capped.
    options: SolveOptions,
    /// Stall window (multigrid only).
    stall_window: Option<usize>,
}

impl<'a> Solver<'a> {
    /// Sets up the configured preconditioner for `a`.
    pub fn new(a: &'a Matrix, config: &SolverConfig) -> Solver<'a> {
        let mut s = Solver { matrix: a, config: *config, lines: None, amg: None };
        s.build_amg();
        s
    }

    /// Sets up the configured preconditioner for `a`, whose unknowns sit
    /// on the lattice of `structure` (the geometric multigrid's operator,
    /// `assemble::Pattern::structure`).
    pub fn structured(a: &'a Matrix, structure: Structure, config: &SolverConfig) -> Solver<'a> {
        let mut s = Solver { matrix: a, config: *config, lines: None, amg: None };
        match config.preconditioner {
            PreconditionerChoice::Multigrid(_) => {
                s.lines = Some(LineMultigrid::new(structure, a.rows()).map_err(|e| format!("setup failed: {e}")));
            }
            _ => s.build_amg(),
        }
        s
    }

    /// Builds the algebraic hierarchy when the configuration asks for one
    /// and it is not built yet.
    fn build_amg(&mut self) {
        if self.amg.is_none()
            && let PreconditionerChoice::Multigrid(ao) | PreconditionerChoice::Amg(ao) = self.config.preconditioner
        {
            self.amg = Some(Amg::new(self.matrix, &ao));
        }
    }

    /// Sets the relative residual later solves must reach.
    pub fn set_tolerance(&mut self, rel_tol: f64) {
        self.config.options.rel_tol = rel_tol;
    }

    /// Solves A·x = b for the matrix the solver was set up for.
    pub fn solve(&mut self, b: &[f64]) -> Result<(Vec<f64>, SolveReport), SolveError> {
        let a = self.matrix;
        self.solve_with(a, b)
    }

    /// Solves other·x = b, preconditioned by this setup: `other` has the
    /// pattern of the solver's matrix and nearby values. Convergence is
    /// judged on `other`'s true residual, as always.
    pub fn solve_with(&mut self, other: &Matrix, b: &[f64]) -> Result<(Vec<f64>, SolveReport), SolveError> {
        self.solve_from(other, b, None)
    }

    /// [`Solver::solve_with`] from a starting guess (a nearby solution:
    /// the same case at other material values).
    pub fn solve_from(
        &mut self,
        other: &Matrix,
        b: &[f64],
        x0: Option<&[f64]>,
    ) -> Result<(Vec<f64>, SolveReport), SolveError> {
        let reused = !std::ptr::eq(other, self.matrix);
        // a real iteration: one product and one preconditioner application
        self.with_fallbacks(other, 1.0, 0.0, ("pcg", ""), reused, |m, at| {
            pcg_from(other, b, x0, m, &at.options, at.stall_window)
        })
    }

    /// Runs `solve` with each preconditioner in turn until one converges:
    /// the line multigrid, smoothed aggregation, Jacobi (of `jacobi_of`,
    /// the real matrix solved or preconditioned). An iteration costs
    /// `products` matrix–vector products of `jacobi_of`'s entries besides
    /// `applications` × the preconditioner's cost.
    fn with_fallbacks<R>(
        &mut self,
        jacobi_of: &Matrix,
        applications: f64,
        products: f64,
        (method, of): (&str, &str),
        reused: bool,
        mut solve: impl FnMut(&mut dyn Preconditioner, &Attempt) -> Result<(R, SolveReport), SolveError>,
    ) -> Result<(R, SolveReport), SolveError> {
        let opts = self.config.options;
        let attempt = |cost: f64, stall_window| Attempt {
            options: work_capped(&opts, applications * cost + products, jacobi_of.nnz()),
            stall_window,
        };
        let reused = if reused { ", hierarchy reused" } else { "" };
        let mut failed: Vec<String> = Vec::new();
        if let Some(lines) = &mut self.lines {
            match lines {
                Ok(mg) => match solve(mg, &attempt(LINES_ITERATION_COST, Some(STALL_WINDOW))) {
                    Ok((x, mut rep)) => {
                        rep.method = format!(
                            "{method}+line multigrid{of} ({} levels, semicoarsening in y, x-line relaxation{reused})",
                            mg.depth()
                        );
                        return Ok((x, rep));
                    }
                    Err(e) => {
                        let reason = format!("line multigrid failed: {e}");
                        failed.push(reason.clone());
                        *lines = Err(reason);
                    }
                },
                Err(e) => failed.push(format!("line multigrid {e}")),
            }
            self.build_amg();
        }
        let fallback = |failed: &[String]| {
            if failed.is_empty() { String::new() } else { format!(" (fallback: {})", failed.join("; ")) }
        };
        match &mut self.amg {
            Some(Ok(amg)) => match solve(amg, &attempt(AMG_ITERATION_COST, Some(STALL_WINDOW))) {
                Ok((x, mut rep)) => {
                    rep.method = format!(
                        "{method}+amg{of} ({} levels, operator complexity {:.2}{reused}){}",
                        amg.depth(),
                        amg.operator_complexity(),
                        fallback(&failed)
                    );
                    return Ok((x, rep));
                }
                Err(e) => failed.push(format!("multigrid-preconditioned {} failed: {e}", method.to_uppercase())),
            },
            Some(Err(e)) => failed.push(format!("multigrid setup failed: {e}")),
            None => {}
        }
        let (x, mut rep) = solve(&mut Jacobi::new(jacobi_of), &attempt(1.0, None))?;
        rep.method = format!("{method}+jacobi{}", fallback(&failed));
        Ok((x, rep))
    }
}

impl Solver<'_> {
    /// Solves the complex symmetric system a·x = b (AC with losses) by COCG,
    /// preconditioned by this setup: the solver's matrix is the real
    /// operator with the magnitudes of the complex coefficients, on the
    /// pattern of `a`. Falls back as the real solve does.
    pub fn solve_complex(
        &mut self,
        a: &ComplexMatrix,
        b: &ComplexVector,
        x0: Option<&ComplexVector>,
    ) -> Result<(ComplexVector, SolveReport), SolveError> {
        // a complex iteration: two preconditioner applications and a
        // product of twice the values
        let magnitude = self.matrix;
        self.with_fallbacks(magnitude, 2.0, 2.0, ("cocg", " of |κ|"), false, |m, at| {
            complex::cocg(a, b, x0, m, &at.options, at.stall_window)
        })
    }
}

/// `opts` with the iteration limit lowered so that the solve's work stays
/// within `WORK_LIMIT` (iterations × `cost_per_iteration` matrix products
/// of `nnz` entries; at least `MIN_ITERATIONS`): a hopeless solve ends in
/// seconds, not hours.
fn work_capped(opts: &SolveOptions, cost_per_iteration: f64, nnz: usize) -> SolveOptions {
    let affordable = (WORK_LIMIT / (cost_per_iteration * nnz.max(1) as f64)) as usize;
    SolveOptions { max_iterations: opts.max_iterations.min(affordable.max(MIN_ITERATIONS)), ..*opts }
}

impl Default for SolveOptions {
    fn default() -> Self {
        // 1e-10 leaves the discretisation error (≥ 1e-6 on practical grids)
        // as the only error that shows in reported figures.
        SolveOptions { rel_tol: 1e-10, max_iterations: 100_000 }
    }
}

/// What a solve did.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveReport {
    /// Method and preconditioner.
    pub method: String,
    /// Iterations taken.
    pub iterations: usize,
    /// True relative residual of the returned solution.
    pub relative_residual: f64,
    /// Number of unknowns.
    pub unknowns: usize,
    /// Recursive relative residual after each iteration.
    pub history: Vec<f64>,
}

/// Why a solve failed. None of these may lead to a verdict.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SolveError {
    /// The tolerance was not reached.
    #[error(
        "the solver did not converge: relative residual {relative_residual:.2e} after {iterations} iterations (needed {rel_tol:.0e}); model near-conductors (relative permittivity above about 1000) as floating electrodes, refine less, or report this case"
    )]
    NoConvergence {
        /// Iterations taken.
        iterations: usize,
        /// Relative residual reached.
        relative_residual: f64,
        /// Tolerance asked for.
        rel_tol: f64,
    },
    /// A search direction had non-positive curvature: the matrix is not SPD.
    #[error(
        "the system matrix is not positive definite (iteration {iteration}); this is a bug, please report the case"
    )]
    NotPositiveDefinite {
        /// Iteration at which it showed.
        iteration: usize,
    },
    /// The complex symmetric recurrence broke down (its bilinear form
    /// vanished).
    #[error(
        "the complex (AC with losses) solve broke down at iteration {iteration}; this is a bug or an extreme case, \
         please report it"
    )]
    Breakdown {
        /// Iteration at which it showed.
        iteration: usize,
    },
    /// A NaN or infinity appeared.
    #[error("the solve produced a non-finite number; check for extreme material values")]
    NonFinite,
}

/// A preconditioner: z ≈ A⁻¹·r.
pub trait Preconditioner {
    /// Applies the preconditioner (it may use internal scratch space).
    fn apply(&mut self, r: &[f64], z: &mut [f64]);
    /// Applies it to two vectors carried together (the parts of a complex
    /// vector). By default two `apply` calls; a preconditioner that reads
    /// large matrices does both in one pass.
    fn apply_pair(&mut self, r: &[kernels::Pair], z: &mut [kernels::Pair]) {
        let n = r.len();
        let (mut a, mut b) = (vec![0.0; n], vec![0.0; n]);
        for k in 0..2 {
            let part: Vec<f64> = r.iter().map(|p| p.0[k]).collect();
            self.apply(&part, if k == 0 { &mut a } else { &mut b });
        }
        for (z, (a, b)) in z.iter_mut().zip(a.into_iter().zip(b)) {
            *z = kernels::Pair([a, b]);
        }
    }
    /// Name for reports.
    fn name(&self) -> &str;
}

/// Jacobi (diagonal) preconditioner.
#[derive(Debug, Clone)]
pub struct Jacobi {
    inv_diag: Vec<f64>,
}

impl Jacobi {
    /// Setup: the inverse diagonal (1 where the diagonal is not positive).
    pub fn new(a: &Matrix) -> Jacobi {
        Jacobi { inv_diag: inverse_diagonal(a) }
    }
}

impl Preconditioner for Jacobi {
    fn apply(&mut self, r: &[f64], z: &mut [f64]) {
        kernels::scale(1.0, &self.inv_diag, r, z);
    }
    fn name(&self) -> &str {
        "jacobi"
    }
}

/// ‖b − A·x‖₂ / ‖b‖₂ (0 when b = 0 and A·x = 0).
pub fn relative_residual(a: &Matrix, x: &[f64], b: &[f64]) -> f64 {
    let mut r = vec![0.0; b.len()];
    kernels::residual(a, x, b, &mut r);
    let (nr, nb) = (norm(&r), norm(b));
    if nb > 0.0 { nr / nb } else { nr }
}

/// Solves A·x = b by preconditioned conjugate gradients from x = 0.
/// With `stall_window = Some(w)` it gives up when w iterations gained less
/// than a factor 10.
pub fn pcg(
    a: &Matrix,
    b: &[f64],
    m: &mut (impl Preconditioner + ?Sized),
    opts: &SolveOptions,
    stall_window: Option<usize>,
) -> Result<(Vec<f64>, SolveReport), SolveError> {
    pcg_from(a, b, None, m, opts, stall_window)
}

/// [`pcg`] from a starting guess `x0` (`None`: zero). The tolerance is on
/// ‖b − A·x‖/‖b‖ whatever the start, so a good guess only saves iterations.
pub fn pcg_from(
    a: &Matrix,
    b: &[f64],
    x0: Option<&[f64]>,
    m: &mut (impl Preconditioner + ?Sized),
    opts: &SolveOptions,
    stall_window: Option<usize>,
) -> Result<(Vec<f64>, SolveReport), SolveError> {
    let n = b.len();
    let mut x = x0.map_or_else(|| vec![0.0; n], <[f64]>::to_vec);
    let norm_b = norm(b);
    let method = format!("pcg+{}", m.name());
    let report = |iterations, relative_residual, history| SolveReport {
        method: method.clone(),
        iterations,
        relative_residual,
        unknowns: n,
        history,
    };
    if !norm_b.is_finite() {
        return Err(SolveError::NonFinite);
    }
    if norm_b == 0.0 {
        return Ok((vec![0.0; n], report(0, 0.0, Vec::new())));
    }
    let mut r = b.to_vec();
    if x0.is_some() {
        kernels::residual(a, &x, b, &mut r);
        let start = norm(&r) / norm_b;
        if !start.is_finite() {
            return Err(SolveError::NonFinite);
        }
        if start <= opts.rel_tol {
            return Ok((x, report(0, start, Vec::new())));
        }
    }
    let mut z = vec![0.0; n];
    m.apply(&r, &mut z);
    let mut p = z.clone();
    let mut q = vec![0.0; n];
    let mut rz = dot(&r, &z);
    let mut history = Vec::new();
    let mut it = 0;
    let mut restarts = 0;
    loop {
        if it >= opts.max_iterations {
            let true_rel = relative_residual(a, &x, b);
            return Err(SolveError::NoConvergence {
                iterations: it,
                relative_residual: true_rel,
                rel_tol: opts.rel_tol,
            });
        }
        it += 1;
        let pq = kernels::matvec_dot(a, &p, &mut q);
        if !pq.is_finite() {
            return Err(SolveError::NonFinite);
        }
        if pq <= 0.0 {
            return Err(SolveError::NotPositiveDefinite { iteration: it });
        }
        let alpha = rz / pq;
        let rel = kernels::cg_update(alpha, &p, &q, &mut x, &mut r).sqrt() / norm_b;
        history.push(rel);
        if rel <= opts.rel_tol {
            // The recursive residual drifts from the true one by rounding:
            // check the true residual, and restart from it when it misses.
            kernels::residual(a, &x, b, &mut r);
            let true_rel = norm(&r) / norm_b;
            if !true_rel.is_finite() || x.iter().any(|v| !v.is_finite()) {
                return Err(SolveError::NonFinite);
            }
            if true_rel <= opts.rel_tol {
                return Ok((x, report(it, true_rel, history)));
            }
            restarts += 1;
            if restarts > MAX_RESTARTS {
                return Err(SolveError::NoConvergence {
                    iterations: it,
                    relative_residual: true_rel,
                    rel_tol: opts.rel_tol,
                });
            }
            m.apply(&r, &mut z);
            rz = dot(&r, &z);
            p.copy_from_slice(&z);
            continue;
        }
        if let Some(w) = stall_window
            && it > w
            && rel > 0.1 * history[it - 1 - w]
        {
            return Err(SolveError::NoConvergence { iterations: it, relative_residual: rel, rel_tol: opts.rel_tol });
        }
        m.apply(&r, &mut z);
        let rz_new = dot(&r, &z);
        let beta = rz_new / rz;
        rz = rz_new;
        xpby(&z, beta, &mut p);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sprs::TriMat;

    use super::gallery::laplace_1d;

    #[test]
    fn solves_a_small_spd_system_to_tolerance() {
        let a = laplace_1d(50);
        let b: Vec<f64> = (0..50).map(|i| (i as f64).sin()).collect();
        let (x, rep) = pcg(&a, &b, &mut Jacobi::new(&a), &SolveOptions::default(), None).unwrap();
        assert!(rep.relative_residual <= 1e-9);
        assert!(relative_residual(&a, &x, &b) <= 1e-9);
        // CG terminates in at most n steps in exact arithmetic (Hestenes & Stiefel 1952)
        assert!(rep.iterations <= 60);
    }

    #[test]
    fn too_few_iterations_is_an_error_not_an_answer() {
        let a = laplace_1d(200);
        let b = vec![1.0; 200];
        let opts = SolveOptions { rel_tol: 1e-12, max_iterations: 5 };
        assert!(matches!(pcg(&a, &b, &mut Jacobi::new(&a), &opts, None), Err(SolveError::NoConvergence { .. })));
    }

    #[test]
    fn indefinite_matrix_is_detected() {
        let mut t = TriMat::new((2, 2));
        t.add_triplet(0, 0, 1.0);
        t.add_triplet(1, 1, -1.0);
        let a: Matrix = t.to_csr::<usize>().to_other_types();
        let r = pcg(&a, &[0.0, 1.0], &mut Jacobi::new(&a), &SolveOptions::default(), None);
        assert!(matches!(r, Err(SolveError::NotPositiveDefinite { .. })));
    }
}
