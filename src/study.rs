//! A study: everything `lathe modes` solves for one scenario, using a
//! mid-plane symmetry when the structure has one.
//!
//! An isolated structure (absorbers at both z ends) whose bodies are all
//! symmetric about the region's mid-plane has modes of two families: E
//! tangential zero on the plane (a PEC plane leaves them unchanged) and H
//! tangential zero (a PMC plane). Solving the upper half twice, over a PEC
//! and over a PMC bottom, finds every mode of both families at about half
//! the cost, with each mode's family known. The modes of both halves are
//! labelled together (`lathe_solver::modes::label_modes`). Set
//! `search.symmetry = "none"` to solve the whole region instead.
use crate::scenario::{Scenario, ScenarioError};
use lathe_mesh::Shape;
use lathe_solver::run::label_runs;
use lathe_solver::{solve, Mode, Problem, RunOutput, SolverError, ZWall};

/// One solved run and the symmetry plane it was solved over, if any.
#[derive(Debug, Clone)]
pub struct StudyRun {
    /// `Some(ZWall::Pec)` / `Some(ZWall::Pmc)` for a half solved over that
    /// mid-plane wall; `None` for the whole region.
    pub plane: Option<ZWall>,
    /// The run.
    pub output: RunOutput,
}

/// Every run of a scenario.
#[derive(Debug, Clone)]
pub struct Study {
    /// Runs, in order: halves (PEC, PMC) then orders m.
    pub runs: Vec<StudyRun>,
}

impl Study {
    /// Every mode with the plane of its run, sorted by frequency (then m).
    pub fn modes(&self) -> Vec<(Mode, Option<ZWall>)> {
        let mut v: Vec<(Mode, Option<ZWall>)> = self
            .runs
            .iter()
            .flat_map(|r| r.output.modes.iter().map(move |m| (m.clone(), r.plane)))
            .collect();
        v.sort_by(|a, b| a.0.freq_hz.total_cmp(&b.0.freq_hz).then(a.0.m.cmp(&b.0.m)));
        v
    }
}

/// What stops a study.
#[derive(Debug, Clone)]
pub enum StudyError {
    /// The scenario cannot be meshed as written.
    Input(ScenarioError),
    /// A run failed.
    Run(SolverError),
}

/// The two halves of a scenario that is symmetric about its mid-plane, or
/// `None` (not isolated in z, symmetry switched off, or a body off-centre).
pub fn halves(s: &Scenario) -> Option<(Scenario, Scenario)> {
    if !s.use_symmetry
        || !matches!(s.walls.bottom, ZWall::Pml(_))
        || !matches!(s.walls.top, ZWall::Pml(_))
        || s.bodies.is_empty()
    {
        return None;
    }
    let mid = 0.5 * (s.z_min + s.z_max);
    let tol = 1e-6 * (s.z_max - s.z_min);
    // A body is symmetric when its extent is centred on the plane and its
    // profile is its own mirror image: checked on a 64 × 64 lattice of points
    // over its bounding box (exact for cylinders, rings and spheres; a cone
    // with unequal radii or an unsymmetric polygon fails it).
    let symmetric = s.bodies.iter().all(|b| {
        let (r0, r1, z0, z1) = b.shape.bounds();
        if (0.5 * (z0 + z1) - mid).abs() > tol {
            return false;
        }
        if let Shape::Sphere { .. } = b.shape {
            return true;
        }
        (0..64).all(|i| {
            let r = r0 + (r1 - r0) * (i as f64 + 0.37) / 64.0;
            (0..64).all(|j| {
                let z = z0 + (z1 - z0) * (j as f64 + 0.29) / 64.0;
                b.shape.contains(r, z, 0.0) == b.shape.contains(r, 2.0 * mid - z, 0.0)
            })
        })
    });
    if !symmetric {
        return None;
    }
    let half = |wall: ZWall| {
        let mut h = s.clone();
        h.z_min = mid;
        h.walls.bottom = wall;
        h.use_symmetry = false;
        h
    };
    Some((half(ZWall::Pec), half(ZWall::Pmc)))
}

/// The solver problems of a scenario: one, or two halves with their planes.
pub fn problems(s: &Scenario) -> Result<Vec<(Option<ZWall>, Scenario, Problem)>, ScenarioError> {
    match halves(s) {
        Some((a, b)) => Ok(vec![
            (Some(ZWall::Pec), a.clone(), a.problem()?),
            (Some(ZWall::Pmc), b.clone(), b.problem()?),
        ]),
        None => Ok(vec![(None, s.clone(), s.problem()?)]),
    }
}

/// Solves every order of the scenario (both halves in parallel when it is
/// symmetric) and labels all modes together. Deterministic for any thread
/// count.
pub fn run_study(s: &Scenario) -> Result<Study, StudyError> {
    let probs = problems(s).map_err(StudyError::Input)?;
    let solved: Vec<Result<Vec<RunOutput>, SolverError>> = match probs.as_slice() {
        [(_, _, p)] => vec![solve(p, &s.m)],
        [(_, _, p), (_, _, q)] => {
            let (a, b) = rayon::join(|| solve(p, &s.m), || solve(q, &s.m));
            vec![a, b]
        }
        _ => unreachable!("one or two problems"),
    };
    let mut runs = Vec::new();
    let mut outputs: Vec<(Option<ZWall>, Vec<RunOutput>)> = Vec::new();
    for ((plane, _, _), r) in probs.iter().zip(solved) {
        outputs.push((*plane, r.map_err(StudyError::Run)?));
    }
    label_runs(
        &mut outputs
            .iter_mut()
            .flat_map(|(_, outs)| outs.iter_mut())
            .collect::<Vec<_>>(),
    );
    for (plane, outs) in outputs {
        for output in outs {
            runs.push(StudyRun { plane, output });
        }
    }
    Ok(Study { runs })
}
