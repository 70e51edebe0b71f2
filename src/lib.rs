//! hvstack: electrostatic screening of layered insulation cross-sections.
//!
//! A YAML case goes in; the 2D electrostatic field (planar or
//! axisymmetric), where it concentrates, the stored and polarisation
//! energy, the margin of every material to its typical breakdown strength,
//! and a verdict with findings come out. The pipeline runs forward only:
//!
//! `case` (parse, validate) → `grid` (graded grid, painting) → `assemble`
//! (box integration, sparse system) → `solve` (PCG) → `fields` (E, energy,
//! charge) → `meshcheck` (the same on coarser grids, Richardson estimates)
//! → `assess` (margins, verdicts, findings) → `report` (result model, JSON,
//! text).
//!
//! The library performs no I/O: it takes the case text and returns values.
//!
//! ```
//! let text = "
//! title: two layers
//! stack:
//!   form: planar
//!   voltage_kv: 10
//!   width: 20
//!   layers:
//!     - { material: air, thickness: 1 }
//!     - { material: epoxy, thickness: 1 }
//! ";
//! let report = hvstack::check(text, "example.yaml", &hvstack::Options::default())?;
//! // the air layer takes 10·3.7/4.7 = 7.9 kV/mm, above 3 kV/mm: the case fails
//! assert_eq!(report.verdict, hvstack::report::VerdictOut::Fail);
//! # Ok::<(), hvstack::Error>(())
//! ```
#![deny(missing_docs)]

pub mod assemble;
pub mod assess;
pub mod case;
pub mod export;
pub mod fields;
pub mod grid;
pub mod materials;
pub mod meshcheck;
pub mod picture;
pub mod report;
pub mod review;
pub mod shape;
pub mod solve;
pub mod units;

use assemble::{AssembleError, Stencil, System};
use case::{Case, CaseError};
use grid::{Grid, GridError, GridLimits, Layout};
use solve::{SolveError, SolveReport, SolverConfig};

/// Default node limit: about 2 million nodes keeps a check within a few GB
/// and within minutes on a 2-core machine with the current solver.
pub const DEFAULT_MAX_NODES: usize = 2_000_000;

/// Above this many nodes the mesh self-check uses grids 2 and 4 times
/// coarser (√2 and 2 below).
pub const LARGE_GRID_NODES: usize = 250_000;

/// Solver tolerance of the mesh self-check's coarser grids.
pub const SELF_CHECK_TOLERANCE: f64 = 1e-8;

/// Options of a check.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Options {
    /// Grid size limits.
    pub limits: GridLimits,
    /// Solver tolerance, iteration limit and preconditioner.
    pub solve: SolverConfig,
}

impl Default for Options {
    fn default() -> Self {
        Options { limits: GridLimits { max_nodes: DEFAULT_MAX_NODES }, solve: SolverConfig::default() }
    }
}

/// Why a case could not be evaluated (exit status 2 at the command line).
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The case file is malformed or invalid.
    #[error("{0}")]
    Case(#[from] CaseError),
    /// The grid could not be built or painted.
    #[error("{file}{}: {source}", .source.position())]
    Grid {
        /// Case file name.
        file: String,
        /// The problem.
        source: Box<GridError>,
    },
    /// The system could not be assembled.
    #[error("{file}: {source}")]
    Assemble {
        /// Case file name.
        file: String,
        /// The problem.
        source: AssembleError,
    },
    /// The solve failed; no verdict may be given.
    #[error("{file}: {source}")]
    Solve {
        /// Case file name.
        file: String,
        /// The problem.
        source: SolveError,
    },
    /// The solve converged but a result is not a finite number; no verdict
    /// may be given.
    #[error(
        "{file}: {what} is not a finite number although the solve converged; no verdict is given (check for extreme \
         sizes, potentials or material values)"
    )]
    NonFinite {
        /// Case file name.
        file: String,
        /// Which result.
        what: String,
    },
}

/// A case made ready to solve: grid, layout, stencil and system.
#[derive(Debug, Clone)]
pub struct Prepared {
    /// The validated case.
    pub case: Case,
    /// Case file name (for messages).
    pub file: String,
    /// The graded grid.
    pub grid: Grid,
    /// Parts painted onto the grid.
    pub layout: Layout,
    /// Edge conductances.
    pub stencil: Stencil,
    /// The linear system.
    pub system: System,
}

/// The solved potential.
#[derive(Debug, Clone)]
pub struct Solution {
    /// Potential at every node in V.
    pub phi: Vec<f64>,
    /// What the solver did.
    pub report: SolveReport,
}

/// Grids, paints and assembles a validated case.
pub fn prepare(case: Case, file: &str, options: &Options) -> Result<Prepared, Error> {
    let grid =
        Grid::for_case(&case, &options.limits).map_err(|e| Error::Grid { file: file.into(), source: Box::new(e) })?;
    prepare_on_grid(case, file, grid)
}

/// Paints and assembles a validated case on a grid given by the caller
/// (benchmarks and convergence studies use this to control the grid).
pub fn prepare_on_grid(case: Case, file: &str, grid: Grid) -> Result<Prepared, Error> {
    let layout = Layout::paint(&case, &grid).map_err(|e| Error::Grid { file: file.into(), source: Box::new(e) })?;
    let stencil = Stencil::for_case(&case, &grid, &layout);
    let system = System::assemble(&grid, &stencil, &assemble::constraints(&layout))
        .map_err(|source| Error::Assemble { file: file.into(), source })?;
    Ok(Prepared { case, file: file.into(), grid, layout, stencil, system })
}

impl Prepared {
    /// Solves for the potential.
    pub fn solve(&self, config: &SolverConfig) -> Result<Solution, Error> {
        let (u, report) = solve::solve(&self.system.matrix, &self.system.rhs, config)
            .map_err(|source| Error::Solve { file: self.file.clone(), source })?;
        Ok(Solution { phi: self.system.expand(&u), report })
    }

    /// Fields of a solution.
    pub fn fields(&self, solution: &Solution) -> fields::Fields {
        fields::compute(&self.case, &self.grid, &self.layout, &self.stencil, &solution.phi)
    }

    /// The mesh self-check: the case solved again on grids √2 and 2 times
    /// coarser (2 and 4 above `LARGE_GRID_NODES`), and each part's peak
    /// compared (see `meshcheck`).
    /// `None` when a coarser grid cannot be solved (then nothing is
    /// bracketed and the assessment says so).
    pub fn self_check(&self, fine: &fields::Fields, options: &Options) -> Option<meshcheck::MeshCheck> {
        let mut coarser = Vec::new();
        // Large grids resolve their features well even twice as coarse, and
        // the check's cost matters there: ratios 2 and 4 instead of √2 and 2.
        let factors = if self.grid.nodes() > LARGE_GRID_NODES { [2.0, 4.0] } else { [std::f64::consts::SQRT_2, 2.0] };
        for factor in factors {
            let mut case = self.case.clone();
            case.grid = self.case.grid.coarsened(factor);
            for b in &mut case.refine_boxes {
                b.max_step *= factor;
            }
            let p = prepare(case, &self.file, options).ok()?;
            // Peaks need far less than the reported solve's tolerance: a
            // relative residual of 1e-8 moves them by well under 1e-6.
            let mut config = options.solve;
            config.options.rel_tol = config.options.rel_tol.max(SELF_CHECK_TOLERANCE);
            let s = p.solve(&config).ok()?;
            coarser.push((p.grid.nodes(), p.fields(&s).regions));
        }
        let nodes = [self.grid.nodes(), coarser[0].0, coarser[1].0];
        Some(meshcheck::compare([&fine.regions, &coarser[0].1, &coarser[1].1], nodes))
    }

    /// Fields, self-check and assessment of a solution; an error when a
    /// field result is not finite.
    pub fn evaluate(
        &self,
        solution: &Solution,
        options: &Options,
    ) -> Result<(fields::Fields, Option<meshcheck::MeshCheck>, assess::Assessment), Error> {
        let f = self.fields(solution);
        if let Some(what) = f.first_non_finite() {
            return Err(Error::NonFinite { file: self.file.clone(), what });
        }
        let check = self.self_check(&f, options);
        let a = assess::assess(&self.case, &self.layout, &f, check.as_ref());
        Ok((f, check, a))
    }

    /// The result model; `seconds` is the solve time measured by the caller.
    pub fn report(&self, solution: &Solution, options: &Options, seconds: f64) -> Result<report::CheckReport, Error> {
        let (f, check, a) = self.evaluate(solution, options)?;
        Ok(report::build(
            &report::Inputs {
                case: &self.case,
                grid: &self.grid,
                layout: &self.layout,
                solve: &solution.report,
                fields: &f,
                mesh_check: check.as_ref(),
                assessment: &a,
            },
            seconds,
        ))
    }
}

/// Runs the whole pipeline on case text (solve time reported as 0).
pub fn check(text: &str, file: &str, options: &Options) -> Result<report::CheckReport, Error> {
    let case = case::parse(text, file)?;
    let prepared = prepare(case, file, options)?;
    let solution = prepared.solve(&options.solve)?;
    prepared.report(&solution, options, 0.0)
}
