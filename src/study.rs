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
use lathe_solver::{
    solve_each_with, Mode, Problem, Progress, RunOutput, Silent, SolverError, ZWall,
};

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
    /// The scenario's bodies, in file order (for loss and pictures).
    pub bodies: Vec<lathe_mesh::Body>,
}

impl Study {
    /// Every mode with its run and its index in that run, in the order of
    /// [`Study::modes`].
    pub fn mode_refs(&self) -> Vec<(&StudyRun, usize)> {
        let mut v: Vec<(&StudyRun, usize)> = self
            .runs
            .iter()
            .flat_map(|r| (0..r.output.modes.len()).map(move |k| (r, k)))
            .collect();
        v.sort_by(|a, b| {
            let (x, y) = (&a.0.output.modes[a.1], &b.0.output.modes[b.1]);
            x.freq_hz.total_cmp(&y.freq_hz).then(x.m.cmp(&y.m))
        });
        v
    }

    /// The dielectric-loss figures of every mode, in the order of
    /// [`Study::modes`] (`None` for a mode without a field), or `None` when
    /// no body has a loss tangent.
    pub fn losses(&self) -> Option<Vec<Option<crate::loss::LossQ>>> {
        if !crate::loss::any_lossy(&self.bodies) {
            return None;
        }
        Some(
            self.mode_refs()
                .into_iter()
                .map(|(r, k)| crate::loss::loss_q(&self.bodies, &r.output, k))
                .collect(),
        )
    }

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
    /// The study would need more memory than its cap.
    TooBig(String),
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
    run_study_with(s, &StudyOptions::default(), &Silent)
}

/// Default memory cap of a study, bytes (4 GiB); `--max-memory` sets it.
pub const DEFAULT_MAX_MEMORY: usize = 4 << 30;

/// How a study is run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StudyOptions {
    /// Memory cap for all runs that may be under way at once, bytes. Each
    /// run gets an equal share: the cap divided by the number of runs the
    /// thread pool has under way at the same time ([`concurrent_runs`]).
    pub max_memory: usize,
}

impl Default for StudyOptions {
    fn default() -> Self {
        StudyOptions {
            max_memory: DEFAULT_MAX_MEMORY,
        }
    }
}

/// Bytes per grid cell that setting up one run may hold at its peak: the
/// material map (3 × 17 B per node), fields (6 × 8 B), coefficients
/// (3 × 8 B) and the stability analysis' Lanczos vectors (3 × 6 × 8 B),
/// rounded up. Used to refuse a hopeless grid before anything is allocated.
pub const SETUP_BYTES_PER_CELL: usize = 256;

/// Refuses a scenario whose grid cannot be set up within `max_memory`
/// (checked from the grid size alone, before meshing), with a message that
/// quotes the grid and the cap.
pub fn check_size(s: &Scenario, options: &StudyOptions) -> Result<(), StudyError> {
    let g = s.solver_grid().map_err(StudyError::Input)?;
    let need = g.cells().saturating_mul(SETUP_BYTES_PER_CELL);
    let share = options.max_memory / concurrent_runs(s);
    if need > share {
        let key = if s.cell.is_some() {
            "region.cell"
        } else {
            "region.cells_per_wavelength"
        };
        // Cells scale as 1/cell²: the cell that would fit, rounded up.
        let fit = g.dr.max(g.dz) * 1e3 * (need as f64 / share as f64).sqrt() * 1.01;
        let decimals = (2.0 - fit.log10().floor()).max(0.0) as usize;
        let step = 10f64.powi(-(decimals as i32));
        let fit = format!("{:.*}", decimals, (fit / step).ceil() * step);
        return Err(StudyError::TooBig(format!(
            "{key}: a grid of {} × {} = {} cells of {:.4} mm (absorbers included) needs about {:.0} MiB per run to set up, more than the {:.0} MiB a run may use under the memory cap of {:.0} MiB for {} run(s) at once; hint: a cell of {fit} mm would fit, or raise the cap with --max-memory",
            g.nr,
            g.nz,
            g.cells(),
            g.dr.max(g.dz) * 1e3,
            need as f64 / 1048576.0,
            share as f64 / 1048576.0,
            options.max_memory as f64 / 1048576.0,
            concurrent_runs(s)
        )));
    }
    Ok(())
}

/// How many runs of `s` are under way at the same time in the current
/// thread pool, each holding its arrays: one more than the threads when
/// there are more runs than threads, which take turns on them
/// ([`lathe_solver::run::runs_under_way`]).
pub fn concurrent_runs(s: &Scenario) -> usize {
    lathe_solver::run::runs_under_way(run_count(s))
}

/// How many runs of `s` step at the same instant: one per thread, at most
/// the run count.
pub fn stepping_runs(s: &Scenario) -> usize {
    rayon::current_num_threads().min(run_count(s)).max(1)
}

/// The number of runs [`run_study`] makes for `s`: one per order, twice when
/// the structure is solved as two halves.
pub fn run_count(s: &Scenario) -> usize {
    s.m.len() * if halves(s).is_some() { 2 } else { 1 }
}

/// [`run_study`] reporting progress.
pub fn run_study_with(
    s: &Scenario,
    options: &StudyOptions,
    progress: &dyn Progress,
) -> Result<Study, StudyError> {
    check_size(s, options)?;
    let mut probs = problems(s).map_err(StudyError::Input)?;
    let share = options.max_memory / concurrent_runs(s);
    for (_, _, p) in probs.iter_mut() {
        p.options.max_memory = share;
    }
    // Both halves' runs share the pool, longest first (`solve_each_with`).
    let each: Vec<&Problem> = probs.iter().map(|(_, _, p)| p).collect();
    let solved = solve_each_with(&each, &s.m, progress).map_err(StudyError::Run)?;
    let mut runs = Vec::new();
    let mut outputs: Vec<(Option<ZWall>, Vec<RunOutput>)> = Vec::new();
    for ((plane, _, _), r) in probs.iter().zip(solved) {
        outputs.push((*plane, r));
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
    Ok(Study {
        runs,
        bodies: s.bodies.clone(),
    })
}
