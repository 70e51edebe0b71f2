//! The allowable level of a case whose field does not scale with the
//! potentials (DC with field- or temperature-dependent conduction): found
//! by solving again at scaled levels of the fixed potentials and bisecting
//! on the level where the limiting margin is just kept.
//!
//! Each solve at a level L gives every part's level-if-linear A_p(L)
//! (`assess::PartAssessment::allowable_if_linear`: the level at which its
//! margin would be exhausted if the field scaled from L on). A part keeps
//! its margin at L when A_p(L) ≥ L. The next level tried is the local
//! linear extrapolation A(L) of the last solve, just past it, so a field
//! close to linear brackets the answer in three solves; when the
//! extrapolation leaves the bracket or creeps from one side the bracket is
//! halved (geometrically). A level with no steady state (thermal runaway,
//! no settling) does not keep the margin.

use crate::{Error, Options, Prepared, SelfCheck, Solution};

/// Relative width of the bracket at which a bisection stops: the level
/// returned keeps every margin, and a level higher by this fraction does
/// not.
pub const ALLOWABLE_TOLERANCE: f64 = 0.005;
/// Most solves one case's bisections may take together.
pub const MAX_LEVEL_SOLVES: usize = 60;
/// The level is sought between the working level divided and multiplied
/// by this; beyond, no allowable level is given.
pub const LEVEL_RANGE: f64 = 1000.0;

/// What one solve at a level gives: each part's level-if-linear, by layout
/// region (`None` inside: the part has no margin), or `None` where the case
/// has no steady state at that level.
type Outcome = Option<Vec<(usize, Option<f64>)>>;

/// The allowable levels found by bisection.
#[derive(Debug, Clone, PartialEq)]
pub struct Levels {
    /// Per part (layout region) the level it alone allows, V.
    pub parts: Vec<(usize, Option<f64>)>,
    /// The level every part allows and the part that sets it.
    pub case: Option<(f64, usize)>,
    /// Solves taken.
    pub solves: usize,
}

/// Solves at scaled levels, each level once.
struct Solves<'a> {
    prepared: &'a Prepared,
    options: &'a Options,
    working: f64,
    done: Vec<(f64, Outcome)>,
}

impl Solves<'_> {
    fn at(&mut self, level: f64) -> Result<Outcome, Error> {
        if let Some((_, o)) = self.done.iter().find(|(l, _)| *l == level) {
            return Ok(o.clone());
        }
        let scaled = self.prepared.scaled(level / self.working);
        let outcome = match scaled.solve(&self.options.solve) {
            Ok(solution) => Some(parts_at(&scaled, &solution, self.options)?),
            Err(Error::Dc { source, .. }) if no_steady_state(&source) => None,
            Err(e) => return Err(e),
        };
        self.done.push((level, outcome.clone()));
        Ok(outcome)
    }
}

fn no_steady_state(e: &crate::conduction::DcError) -> bool {
    matches!(e, crate::conduction::DcError::NoSteadyState { .. } | crate::conduction::DcError::Runaway { .. })
}

fn parts_at(p: &Prepared, solution: &Solution, options: &Options) -> Result<Vec<(usize, Option<f64>)>, Error> {
    let e = p.evaluate_once(solution, options, SelfCheck::Given(None))?;
    Ok(e.assessment.parts.iter().map(|q| (q.region, q.allowable_if_linear)).collect())
}

/// The lowest level-if-linear of the targeted parts (`None`: every part).
fn estimate(outcome: &Outcome, target: Option<usize>) -> Option<f64> {
    outcome
        .as_ref()?
        .iter()
        .filter(|(r, _)| target.is_none_or(|t| t == *r))
        .filter_map(|(_, a)| *a)
        .min_by(f64::total_cmp)
}

/// Whether the targeted parts keep their margins at `level`.
fn keeps(outcome: &Outcome, target: Option<usize>, level: f64) -> bool {
    outcome.is_some() && estimate(outcome, target).is_none_or(|a| a >= level)
}

/// The next level to try from the bracket and the last solve.
fn next_level(lo: Option<f64>, hi: Option<f64>, last: (f64, Option<f64>, bool), one_sided: usize) -> f64 {
    let (level, est, kept) = last;
    let step = ALLOWABLE_TOLERANCE / 2.0;
    let candidate = match est {
        Some(a) if kept => a * (1.0 + step),
        Some(a) => a * (1.0 - step),
        None => level / 2.0,
    };
    match (lo, hi) {
        (Some(l), Some(h)) if one_sided >= 2 || candidate <= l || candidate >= h => (l * h).sqrt(),
        (Some(l), None) if candidate <= l => 2.0 * l,
        (None, Some(h)) if candidate >= h => h / 2.0,
        _ => candidate,
    }
}

/// The highest level at which the targeted parts (`None`: every part) keep
/// their margins, within `ALLOWABLE_TOLERANCE`; `None` when it lies outside
/// `LEVEL_RANGE` of the working level or the solves ran out.
fn bisect(solves: &mut Solves, target: Option<usize>) -> Result<Option<f64>, Error> {
    let working = solves.working;
    let (mut lo, mut hi): (Option<f64>, Option<f64>) = (None, None);
    let mut level = working;
    let mut one_sided = 0;
    let mut last_kept = None;
    loop {
        if solves.done.len() >= MAX_LEVEL_SOLVES && !solves.done.iter().any(|(l, _)| *l == level) {
            return Ok(None);
        }
        let outcome = solves.at(level)?;
        let est = estimate(&outcome, target);
        if outcome.is_some() && est.is_none() {
            // the targeted parts have no margin to keep
            return Ok(None);
        }
        let kept = keeps(&outcome, target, level);
        if kept {
            lo = Some(lo.map_or(level, |l: f64| l.max(level)));
        } else {
            hi = Some(hi.map_or(level, |h: f64| h.min(level)));
        }
        one_sided = if last_kept == Some(kept) { one_sided + 1 } else { 0 };
        last_kept = Some(kept);
        match (lo, hi) {
            (Some(l), Some(h)) if h - l <= ALLOWABLE_TOLERANCE * l => return Ok(Some(l)),
            (Some(l), None) if l > working * LEVEL_RANGE => return Ok(None),
            (None, Some(h)) if h < working / LEVEL_RANGE => return Ok(None),
            _ => {}
        }
        level = next_level(lo, hi, (level, est, kept), one_sided);
    }
}

/// Every part's allowable level and the case's, by bisection of solves at
/// scaled levels of the fixed potentials (`working`: the case's working
/// level, V).
pub fn by_bisection(prepared: &Prepared, options: &Options, working: f64) -> Result<Levels, Error> {
    let mut solves = Solves { prepared, options, working, done: Vec::new() };
    let regions: Vec<usize> = match solves.at(working)? {
        Some(parts) => parts.iter().filter(|(_, a)| a.is_some()).map(|(r, _)| *r).collect(),
        None => Vec::new(),
    };
    let mut parts = Vec::new();
    for r in regions {
        parts.push((r, bisect(&mut solves, Some(r))?));
    }
    // every part keeps its margin up to the lowest part's level
    let case = parts.iter().filter_map(|(r, a)| a.map(|a| (a, *r))).min_by(|a, b| a.0.total_cmp(&b.0));
    Ok(Levels { parts, case, solves: solves.done.len() })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_next_level_extrapolates_then_halves_the_bracket() {
        // extrapolation just past the estimate, on the side that brackets
        assert!((next_level(Some(10.0), None, (10.0, Some(20.0), true), 0) - 20.0 * 1.0025).abs() < 1e-9);
        assert!((next_level(Some(10.0), Some(20.1), (20.1, Some(19.0), false), 0) - 19.0 * 0.9975).abs() < 1e-9);
        // out of the bracket, or creeping from one side: geometric middle
        assert!((next_level(Some(10.0), Some(40.0), (10.0, Some(50.0), true), 0) - 20.0).abs() < 1e-9);
        assert!((next_level(Some(10.0), Some(40.0), (10.0, Some(12.0), true), 2) - 20.0).abs() < 1e-9);
        // no steady state and nothing below: halve
        assert_eq!(next_level(None, Some(40.0), (40.0, None, false), 0), 20.0);
    }
}
