//! hvstack: electrostatic screening of layered insulation cross-sections.
//!
//! A YAML case goes in; the 2D electrostatic field (planar or
//! axisymmetric), where it concentrates, the stored and polarisation
//! energy, the margin of every material to its typical breakdown strength,
//! and a verdict with findings come out. The pipeline runs forward only:
//!
//! `case` (parse, validate) → `grid` (graded grid, painting: geometry) →
//! `coefficients` (material models at each part's temperature, water and
//! frequency) → `assemble` (box integration: factors and pattern once,
//! values per evaluation) → `solve` (PCG, setup reused) → `fields` (E,
//! energy, charge) → `meshcheck` (the same on coarser grids, Richardson
//! estimates) → `assess` (margins, verdicts, findings, stress shift) →
//! `report` (result model, JSON, text).
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
pub mod coefficients;
pub mod conduction;
pub mod discharge;
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
pub mod study;
pub mod units;

use assemble::{AssembleError, Factors, Pattern, Stencil, System};
use case::{Case, CaseError};
use coefficients::{Coefficients, Conditions};
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
    /// The DC conduction state could not be found; no verdict may be given.
    #[error("{file}: {source}")]
    Dc {
        /// Case file name.
        file: String,
        /// The problem.
        source: conduction::DcError,
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

/// One evaluation of a prepared case: the coefficients of every region at
/// one state, and the stencil and system they give.
#[derive(Debug, Clone)]
pub struct Evaluation {
    /// Which state.
    pub conditions: Conditions,
    /// Relative permittivity ε′ of every region and cut cell.
    pub coefficients: Coefficients<f64>,
    /// Edge conductances of ε′.
    pub stencil: Stencil,
    /// The real system: the one solved, or for an AC case with losses the
    /// operator of the magnitudes |κ| whose multigrid hierarchy
    /// preconditions the complex solve.
    pub system: System,
    /// The stencil of `system` where it is not `stencil` (the |κ|
    /// operator of an AC case with losses).
    pub system_stencil: Option<Stencil>,
    /// AC cases: each region's losses.
    pub ac: Option<coefficients::AcLosses>,
    /// AC cases whose losses change the field (loss tangents that differ by
    /// more than `coefficients::LOSSLESS_SPREAD`): the complex system.
    pub lossy: Option<Lossy>,
}

/// The complex system of an AC case with losses.
#[derive(Debug, Clone)]
pub struct Lossy {
    /// Complex relative admittivity κ of every region and cut cell.
    pub coefficients: Coefficients<coefficients::Complex64>,
    /// Complex edge admittances.
    pub stencil: Stencil<coefficients::Complex64>,
    /// The complex symmetric matrix.
    pub matrix: solve::ComplexMatrix,
    /// Its right-hand side.
    pub rhs: solve::ComplexVector,
}

/// A case made ready to solve: geometry (grid, layout, factors, pattern)
/// built once, and the evaluations that reuse it.
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
    /// Geometric factors of the stencil.
    pub factors: Factors,
    /// Numbering of the unknowns and the matrix pattern.
    pub pattern: Pattern,
    /// The fixed electrode potentials, V, by electrode index.
    pub potentials: Vec<f64>,
    /// The case at its service conditions.
    pub service: Evaluation,
    /// The case dry at the reference temperature, when the case differs
    /// from that (for the stress-shift comparison).
    pub reference: Option<Evaluation>,
}

/// The solved potential.
#[derive(Debug, Clone)]
pub struct Solution {
    /// Potential at every node in V (the in-phase part of an AC phasor).
    pub phi: Vec<f64>,
    /// AC with losses: the quadrature part of the phasor at every node, V.
    pub quadrature: Option<Vec<f64>>,
    /// DC: the capacitive field and the temperatures.
    pub dc: Option<conduction::DcState>,
    /// What the solver did.
    pub report: SolveReport,
    /// The dry-reference potential and its solve, when the case has one.
    pub reference: Option<(Vec<f64>, SolveReport)>,
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
    // DC cases are compared with their own capacitive field instead
    let reference = coefficients::differs_from_reference(&case) && case.operation.mode != case::Mode::Dc;
    prepare_evaluations(case, file, grid, reference)
}

/// Prepares `case` on `base`'s grid, unknown numbering and matrix pattern
/// when the case grids and paints the same geometry as `base` (a study that
/// changes material values, water, temperature or frequency only);
/// otherwise as [`prepare`]. Either way the result is the one `prepare`
/// gives: the grid and layout are built and compared, and only the
/// geometric factors and the pattern are taken over.
pub fn prepare_like(case: Case, file: &str, options: &Options, base: &Prepared) -> Result<Prepared, Error> {
    let grid =
        Grid::for_case(&case, &options.limits).map_err(|e| Error::Grid { file: file.into(), source: Box::new(e) })?;
    let with_reference = coefficients::differs_from_reference(&case) && case.operation.mode != case::Mode::Dc;
    let layout = Layout::paint(&case, &grid).map_err(|e| Error::Grid { file: file.into(), source: Box::new(e) })?;
    let reuse =
        (grid == base.grid && layout.same_geometry(&base.layout)).then(|| (base.factors.clone(), base.pattern.clone()));
    assemble_evaluations(case, file, grid, layout, reuse, with_reference)
}

/// Paints, numbers and assembles; the dry reference too when asked.
pub(crate) fn prepare_evaluations(case: Case, file: &str, grid: Grid, with_reference: bool) -> Result<Prepared, Error> {
    let layout = Layout::paint(&case, &grid).map_err(|e| Error::Grid { file: file.into(), source: Box::new(e) })?;
    assemble_evaluations(case, file, grid, layout, None, with_reference)
}

/// Numbers and assembles a painted case (with the factors and pattern of a
/// case of the same geometry when given).
fn assemble_evaluations(
    case: Case,
    file: &str,
    grid: Grid,
    layout: Layout,
    reuse: Option<(Factors, Pattern)>,
    with_reference: bool,
) -> Result<Prepared, Error> {
    let potentials = assemble::potentials(&layout);
    let coefficients = coefficients::permittivities(&case, &grid, &layout, Conditions::Service);
    let (factors, pattern) = match reuse {
        Some((f, p)) => (f, Some(p)),
        None => (Factors::new(&grid, case.geometry), None),
    };
    let stencil = Stencil::new(&grid, &layout, &factors, &coefficients);
    let pattern = match pattern {
        Some(p) => p,
        None => Pattern::new(&grid, &stencil, &assemble::constraints(&layout))
            .map_err(|source| Error::Assemble { file: file.into(), source })?,
    };
    let evaluation = |conditions: Conditions, coefficients: Coefficients<f64>, stencil: Stencil| {
        let system = pattern.system(&grid, &stencil, &potentials);
        Evaluation { conditions, coefficients, stencil, system, system_stencil: None, ac: None, lossy: None }
    };
    let mut service = evaluation(Conditions::Service, coefficients, stencil);
    if case.operation.mode == case::Mode::Ac {
        let kappa = coefficients::admittivities(&case, &grid, &layout, Conditions::Service);
        service.ac = Some(coefficients::ac_losses(&case, &layout, &kappa.region));
        if coefficients::needs_complex_solve(&layout, &kappa.region) {
            let magnitude = coefficients::magnitudes(&grid, case.geometry, &layout, &kappa.region);
            let stencil_m = Stencil::new(&grid, &layout, &factors, &magnitude);
            service.system = pattern.system(&grid, &stencil_m, &potentials);
            service.system_stencil = Some(stencil_m);
            let stencil = Stencil::new(&grid, &layout, &factors, &kappa);
            let matrix = pattern.complex_matrix(&grid, &stencil);
            let rhs = solve::ComplexVector::from_values(&pattern.rhs(&grid, &stencil, &potentials));
            service.lossy = Some(Lossy { coefficients: kappa, stencil, matrix, rhs });
        }
    }
    // A case whose materials do not change with its conditions (constant
    // permittivities in a warm environment) needs no second solve.
    let reference = if with_reference {
        let dry = coefficients::permittivities(&case, &grid, &layout, Conditions::DryReference);
        (dry != service.coefficients).then(|| {
            let stencil = Stencil::new(&grid, &layout, &factors, &dry);
            evaluation(Conditions::DryReference, dry, stencil)
        })
    } else {
        None
    };
    Ok(Prepared { case, file: file.into(), grid, layout, factors, pattern, potentials, service, reference })
}

impl Evaluation {
    /// The stencil whose matrix is `system`.
    pub fn system_stencil(&self) -> &Stencil {
        self.system_stencil.as_ref().unwrap_or(&self.stencil)
    }
}

impl Prepared {
    /// Solves for the potential (and the dry reference, when the case has
    /// one, with the multigrid hierarchy of the first solve).
    pub fn solve(&self, config: &SolverConfig) -> Result<Solution, Error> {
        self.solve_from(config, None)
    }

    /// [`Prepared::solve`] from a starting guess (a nodal potential on this
    /// case's grid, e.g. a coarser grid's solution interpolated); DC
    /// iterations start from their own capacitive field.
    pub fn solve_from(&self, config: &SolverConfig, start: Option<Start>) -> Result<Solution, Error> {
        let fail = |source| Error::Solve { file: self.file.clone(), source };
        if self.case.operation.mode == case::Mode::Dc {
            let inputs = conduction::Inputs {
                case: &self.case,
                grid: &self.grid,
                layout: &self.layout,
                factors: &self.factors,
                pattern: &self.pattern,
                potentials: &self.potentials,
                capacitive: &self.service.system,
                capacitive_stencil: &self.service.stencil,
            };
            let (phi, report, state) =
                conduction::steady(&inputs, config).map_err(|source| Error::Dc { file: self.file.clone(), source })?;
            return Ok(Solution { phi, quadrature: None, report, reference: None, dc: Some(state) });
        }
        let structure = self.pattern.structure(&self.grid, self.service.system_stencil());
        let mut solver = solve::Solver::structured(&self.service.system.matrix, structure, config);
        // the nodal start is dropped once restricted (memory at the fine solve)
        let (x0, x0_quadrature) = match start {
            Some(s) => (Some(self.pattern.restrict(&s.phi)), s.quadrature.map(|q| self.pattern.restrict(&q))),
            None => (None, None),
        };
        let (u, quadrature, report) = match &self.service.lossy {
            None => {
                let system = &self.service.system;
                let (u, report) = solver.solve_from(&system.matrix, &system.rhs, x0.as_deref()).map_err(fail)?;
                (u, None, report)
            }
            Some(lossy) => {
                let x0 = x0.map(|re| {
                    let im = x0_quadrature.unwrap_or_else(|| vec![0.0; re.len()]);
                    solve::ComplexVector { re, im }
                });
                let (u, report) = solver.solve_complex(&lossy.matrix, &lossy.rhs, x0.as_ref()).map_err(fail)?;
                let (_, im) = self.pattern.expand_phasor(&u, &self.potentials);
                (u.re, Some(im), report)
            }
        };
        let reference = match &self.reference {
            Some(r) => {
                // The dry reference gives comparison peaks, which need far
                // less than the reported solve's tolerance (as the
                // self-check's grids).
                solver.set_tolerance(config.options.rel_tol.max(SELF_CHECK_TOLERANCE));
                // started from the service solution: the dry case is nearby
                let (v, report) = solver.solve_from(&r.system.matrix, &r.system.rhs, Some(&u)).map_err(fail)?;
                Some((self.pattern.expand(&v, &self.potentials), report))
            }
            None => None,
        };
        Ok(Solution { phi: self.pattern.expand(&u, &self.potentials), quadrature, report, reference, dc: None })
    }

    /// Fields of a potential solved at an evaluation (`quadrature`: the
    /// quadrature part of an AC solution with losses).
    pub fn fields(&self, evaluation: &Evaluation, phi: &[f64], quadrature: Option<&[f64]>) -> fields::Fields {
        let quadrature =
            evaluation.lossy.as_ref().zip(quadrature).map(|(l, q)| fields::Quadrature { phi: q, stencil: &l.stencil });
        fields::compute(
            &self.case,
            &self.grid,
            &self.layout,
            &evaluation.stencil,
            &evaluation.coefficients.region,
            phi,
            quadrature,
        )
    }

    /// The field sampler of a solution.
    pub fn sampler<'a>(&'a self, phi: &'a [f64], quadrature: Option<&'a [f64]>) -> fields::Sampler<'a> {
        fields::Sampler::phasor(&self.case, &self.grid, &self.layout, phi, quadrature)
    }

    /// The DC results of a solved DC state: the capacitive and the
    /// polarity-reversal fields (superposition, both through the fields
    /// stage), where the peaks lie, temperatures and time constants.
    pub fn dc_results(&self, f: &fields::Fields, phi: &[f64], state: &conduction::DcState) -> conduction::DcResults {
        let cap = self.fields(&self.service, &state.capacitive, None);
        let reversed: Vec<f64> = phi.iter().zip(&state.capacitive).map(|(d, c)| d - 2.0 * c).collect();
        let rev = self.fields(&self.service, &reversed, None);
        let (lo, hi) =
            self.potentials.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
        let dc_sampler = self.sampler(phi, None);
        let cap_sampler = self.sampler(&state.capacitive, None);
        let fraction = |s: &fields::Sampler, at: [f64; 2]| {
            if hi > lo && at.iter().all(|v| v.is_finite()) { (s.at(at).potential - lo) / (hi - lo) } else { 0.5 }
        };
        let temperature = match &state.temperature {
            Some(t) => conduction::region_temperatures(&self.grid, &self.layout, t),
            None => vec![None; self.layout.regions.len()],
        };
        conduction::DcResults {
            capacitive_e_max: cap.regions.iter().map(|r| r.e_max).collect(),
            reversal_e_max: rev.regions.iter().map(|r| r.e_max).collect(),
            peak_potential_fraction: f
                .regions
                .iter()
                .zip(&cap.regions)
                .map(|(d, c)| [fraction(&dc_sampler, d.e_max_at), fraction(&cap_sampler, c.e_max_at)])
                .collect(),
            time_constant: conduction::time_constants(
                &self.case,
                &self.layout,
                &self.service.coefficients.region,
                &temperature,
            ),
            temperature,
            iterations: state.iterations,
            linear: conduction::linear_in_voltage(&self.case, &self.layout, state),
            interfaces: conduction::interface_charges(
                &self.grid,
                self.case.geometry,
                &self.layout,
                &self.service.stencil,
                phi,
                f.electrodes.iter().map(|e| e.charge.abs()).fold(0.0, f64::max),
                fields::extensive_scale(self.case.normalisation),
            ),
        }
    }

    /// Partial-discharge inception of every gas part with a discharge
    /// model, from field lines of the solved potential.
    pub fn discharge(&self, sampler: &fields::Sampler, fields: &fields::Fields) -> Vec<discharge::GasInception> {
        discharge::inception(&self.case, sampler, fields, &discharge::Config::default())
    }

    /// Fields, inception, self-check and assessment of a solution; an error
    /// when a field result is not finite.
    pub fn evaluate(&self, solution: &Solution, options: &Options) -> Result<Evaluated, Error> {
        self.evaluate_with(solution, options, SelfCheck::Run)
    }

    /// `evaluate`, with the mesh self-check run or given (`SelfCheck`).
    /// Where the field does not scale with the potentials (DC with field-
    /// or temperature-dependent conduction) the allowable levels come from
    /// solves at scaled levels (`study::allowable::by_bisection`).
    pub fn evaluate_with(&self, solution: &Solution, options: &Options, check: SelfCheck) -> Result<Evaluated, Error> {
        let mut e = self.evaluate_once(solution, options, check)?;
        if e.dc.as_ref().is_some_and(|d| !d.linear) {
            let levels = study::allowable::by_bisection(self, options, e.assessment.working_level)?;
            let a = &mut e.assessment;
            for (region, level) in &levels.parts {
                if let Some(p) = a.parts.iter_mut().find(|p| p.region == *region) {
                    p.allowable = *level;
                }
            }
            a.allowable = levels.case.map(|(level, region)| assess::Allowable {
                level,
                region,
                bisection_tolerance: Some(study::allowable::ALLOWABLE_TOLERANCE),
            });
        }
        Ok(e)
    }

    /// This case with every fixed potential × `s` (a study's level): the
    /// same grid, layout, pattern and matrices; the right-hand sides, which
    /// are linear in the fixed potentials, scaled.
    pub fn scaled(&self, s: f64) -> Prepared {
        let mut p = self.clone();
        let scale = |k: &mut case::ElectrodeKind| {
            if let case::ElectrodeKind::Fixed { potential_v } = k {
                *potential_v *= s;
            }
        };
        for part in &mut p.case.parts {
            if let case::Role::Electrode(k) = &mut part.role {
                scale(k);
            }
        }
        p.layout.electrodes.iter_mut().for_each(|e| scale(&mut e.kind));
        p.potentials.iter_mut().for_each(|v| *v *= s);
        let times = |v: &mut Vec<f64>| v.iter_mut().for_each(|x| *x *= s);
        for ev in std::iter::once(&mut p.service).chain(p.reference.as_mut()) {
            times(&mut ev.system.rhs);
            if let Some(l) = ev.lossy.as_mut() {
                times(&mut l.rhs.re);
                times(&mut l.rhs.im);
            }
        }
        p
    }

    /// One evaluation, with no study above it (the allowable levels of a
    /// field that does not scale with the potentials stay unknown).
    pub fn evaluate_once(&self, solution: &Solution, options: &Options, check: SelfCheck) -> Result<Evaluated, Error> {
        let non_finite = |f: &fields::Fields| match f.first_non_finite() {
            Some(what) => Err(Error::NonFinite { file: self.file.clone(), what }),
            None => Ok(()),
        };
        let f = self.fields(&self.service, &solution.phi, solution.quadrature.as_deref());
        non_finite(&f)?;
        let reference = match (&self.reference, &solution.reference) {
            (Some(ev), Some((phi, _))) => {
                let rf = self.fields(ev, phi, None);
                non_finite(&rf)?;
                let rd = self.discharge(&self.sampler(phi, None), &rf);
                Some((ev, rf, rd))
            }
            _ => None,
        };
        // one sampler (edge values) for the inception search and the junctions
        let sampler = self.sampler(&solution.phi, solution.quadrature.as_deref());
        let discharge = self.discharge(&sampler, &f);
        let junctions = discharge::triple_junctions(&self.case, &sampler, &self.service.coefficients.region);
        if let Some(g) = discharge.iter().find(|g| g.scale.is_some_and(|s| !s.is_finite())) {
            return Err(Error::NonFinite {
                file: self.file.clone(),
                what: format!("the inception level of {}", self.layout.regions[g.region].name),
            });
        }
        let dc = solution.dc.as_ref().map(|state| self.dc_results(&f, &solution.phi, state));
        let check = match check {
            SelfCheck::Given(c) => c.map(|c| *c),
            SelfCheck::Run => study::selfcheck::run(self, &f, &discharge, options),
            SelfCheck::Solved(c) => Some(study::selfcheck::compare(self, &f, &discharge, &c)),
        };
        let assessment = assess::assess(&assess::Inputs {
            case: &self.case,
            layout: &self.layout,
            permittivity: &self.service.coefficients.region,
            fields: &f,
            check: check.as_ref(),
            reference: reference.as_ref().map(|(ev, rf, rd)| assess::Reference {
                permittivity: &ev.coefficients.region,
                fields: rf,
                discharge: rd,
            }),
            discharge: &discharge,
            junctions: &junctions,
            ac: self.service.ac.as_ref(),
            dc: dc.as_ref(),
        });
        let losses = self.service.ac.as_ref().map(|ac| fields::losses(&f, ac, self.case.operation.values));
        let phase_deg = solution.quadrature.as_ref().map(|_| {
            f.regions
                .iter()
                .enumerate()
                .map(|(r, rf)| if rf.e_max > 0.0 { sampler.phase_deg(rf.e_max_at, r as u32) } else { 0.0 })
                .collect()
        });
        Ok(Evaluated { fields: f, discharge, check, assessment, losses, dc, phase_deg })
    }

    /// Solves the self-check's coarser grids first (coarsest first, each
    /// from the one before) and then this grid from the medium grid's
    /// solution interpolated, so the fine solve starts close (full
    /// multigrid's nesting); the self-check to evaluate the solution with
    /// comes along (`SelfCheck::Given(None)` when a coarser grid could not
    /// be solved).
    pub fn solve_nested(&self, options: &Options) -> Result<(Solution, SelfCheck), Error> {
        let coarser = study::selfcheck::solve_coarser(self, options);
        let start = coarser.as_ref().map(|c| c.start_for(&self.grid));
        let solution = self.solve_from(&options.solve, start)?;
        let check = match coarser {
            Some(c) => SelfCheck::Solved(Box::new(c)),
            None => SelfCheck::Given(None),
        };
        Ok((solution, check))
    }

    /// The result model; `seconds` is the solve time measured by the caller.
    pub fn report(&self, solution: &Solution, options: &Options, seconds: f64) -> Result<report::CheckReport, Error> {
        let e = self.evaluate(solution, options)?;
        Ok(self.report_of(solution, &e, seconds))
    }

    /// The result model of an evaluated solution.
    pub fn report_of(&self, solution: &Solution, e: &Evaluated, seconds: f64) -> report::CheckReport {
        report::build(
            &report::Inputs {
                case: &self.case,
                grid: &self.grid,
                layout: &self.layout,
                solve: &solution.report,
                fields: &e.fields,
                discharge: &e.discharge,
                mesh_check: e.check.as_ref(),
                assessment: &e.assessment,
                reference_solve: solution.reference.as_ref().map(|r| &r.1),
                losses: e.losses.as_ref(),
                ac: self.service.ac.as_ref(),
                lossy: self.service.lossy.is_some(),
                dc: e.dc.as_ref(),
                phase_deg: e.phase_deg.as_deref(),
            },
            seconds,
        )
    }

    /// The largest factor by which the fixed potentials of `self` are those
    /// of `base` (`Some(s)` when every fixed potential is s times the base's,
    /// on the same grid and layout, with s ≠ 0): then a field linear in the
    /// potentials is `base`'s times s.
    pub fn potential_multiple_of(&self, base: &Prepared) -> Option<f64> {
        if self.grid != base.grid
            || self.layout.cell_region != base.layout.cell_region
            || self.layout.node_electrode != base.layout.node_electrode
            || self.case.operation.mode == case::Mode::Dc
            || self.potentials.len() != base.potentials.len()
        {
            return None;
        }
        let (k, &largest) = base.potentials.iter().enumerate().max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))?;
        if largest == 0.0 {
            return None;
        }
        let s = self.potentials[k] / largest;
        let tol = 1e-12 * largest.abs().max(self.potentials[k].abs());
        (s != 0.0
            && s.is_finite()
            && self.potentials.iter().zip(&base.potentials).all(|(p, b)| (p - s * b).abs() <= tol))
        .then_some(s)
    }

    /// The report of this case from an evaluated `base` whose potentials
    /// this case's are `s` times (`potential_multiple_of`): the potentials
    /// scaled, no new solve, the base's self-check scaled; every stage after
    /// the solve runs on this case as usual.
    pub fn report_scaled(
        &self,
        base: &Solution,
        base_check: Option<&meshcheck::MeshCheck>,
        s: f64,
        options: &Options,
    ) -> Result<report::CheckReport, Error> {
        let solution = self.scaled_solution(base, s);
        let e = self.evaluate_with(&solution, options, SelfCheck::Given(base_check.map(|c| Box::new(c.scaled(s)))))?;
        Ok(self.report_of(&solution, &e, 0.0))
    }

    /// The solution of this case from `base`'s, whose potentials this
    /// case's are `s` times (`potential_multiple_of`): every potential
    /// scaled, the solve report saying it was not solved again.
    pub fn scaled_solution(&self, base: &Solution, s: f64) -> Solution {
        let times = |v: &[f64]| v.iter().map(|x| x * s).collect::<Vec<f64>>();
        let mut solve = base.report.clone();
        solve.method = format!(
            "{} (not solved again: the sweep's evaluated point, potentials × {})",
            solve.method,
            report::significant(s, 6)
        );
        Solution {
            phi: times(&base.phi),
            quadrature: base.quadrature.as_deref().map(times),
            dc: None,
            report: solve,
            reference: base.reference.as_ref().map(|(phi, rep)| (times(phi), rep.clone())),
        }
    }
}

/// A starting guess for a solve: a nodal potential on the case's grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Start {
    /// Nodal potential (the in-phase part of an AC phasor), V.
    pub phi: Vec<f64>,
    /// AC with losses: the quadrature part, V.
    pub quadrature: Option<Vec<f64>>,
}

/// Where an evaluation's mesh self-check comes from.
#[derive(Debug, Clone)]
pub enum SelfCheck {
    /// Solved again on the coarser grids (`study::selfcheck::run`).
    Run,
    /// The coarser grids were solved before the fine grid (`solve_nested`).
    Solved(Box<study::selfcheck::Coarser>),
    /// Given: a sweep point whose potentials are a multiple of an evaluated
    /// point's takes that point's check, scaled (`None`: it could not run).
    Given(Option<Box<meshcheck::MeshCheck>>),
}

/// What the stages after the solve made of a solution.
#[derive(Debug, Clone)]
pub struct Evaluated {
    /// Fields at service conditions.
    pub fields: fields::Fields,
    /// Inception of the gas parts.
    pub discharge: Vec<discharge::GasInception>,
    /// The mesh self-check (`None` when it could not run).
    pub check: Option<meshcheck::MeshCheck>,
    /// The judgement.
    pub assessment: assess::Assessment,
    /// AC cases: the losses of every region.
    pub losses: Option<fields::Losses>,
    /// DC cases: reversal, capacitive peaks, temperatures, time constants.
    pub dc: Option<conduction::DcResults>,
    /// AC with losses: the phase of each region's peak field against the
    /// applied voltage, degrees.
    pub phase_deg: Option<Vec<f64>>,
}

/// Runs the whole pipeline on case text (solve time reported as 0).
pub fn check(text: &str, file: &str, options: &Options) -> Result<report::CheckReport, Error> {
    let case = case::parse(text, file)?;
    let prepared = prepare(case, file, options)?;
    let (solution, check) = prepared.solve_nested(options)?;
    let e = prepared.evaluate_with(&solution, options, check)?;
    Ok(prepared.report_of(&solution, &e, 0.0))
}
