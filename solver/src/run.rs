//! Executing a plan: the time loop, its guards, and the stopping rule.
//!
//! A run has two phases. While the pulse is on, the sources inject current.
//! After it, the structure rings down freely and the probes are sampled
//! every `decimation` steps; at the planned checks each probe signal goes to
//! harmonic inversion and the poles are merged into modes
//! ([`crate::modes`]). **Stopping rule:** the run stops at the first check
//! whose modes agree with the previous check's — same count, every
//! frequency within 1e-6 relative and every 1/(2Q) = γ/ω within 1e-6 — or
//! when the signals have decayed to round-off (energy below 1e-28 of its
//! peak while the pulse was on), or at the planned maximum length (then
//! the result is flagged as not converged).
//!
//! Guards: every 64 steps the field energy is computed; a non-finite value,
//! or an energy above `growth_limit` times its value when the pulse ended, stops
//! the run with an error naming the order, the step and the ratio. The
//! stepping itself allocates nothing: fields, coefficients, the source table
//! and the probe buffers (with their full capacity) exist before the first
//! step; only the harmonic-inversion checks between chunks allocate.
use crate::coefficients::{Coefficients, SurfaceCorrection};
use crate::consts::MU0;
use crate::error::SolverError;
use crate::excitation::{inject, read};
use crate::fields::Fields;
use crate::fpu::FlushSubnormals;
use crate::harminv::{filter_diagonalisation, FdmOptions};
use crate::kernel::fill_axis;
use crate::modefield::{Accumulator, ModeField};
use crate::modes::{merge, Mode};
use crate::plan::{plan, Problem, RunPlan};
use crate::pml::Pml;
use crate::team::Team;
use lathe_mesh::Component;
use num_complex::Complex64;
use rayon::prelude::*;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

/// Figures of one finished run.
#[derive(Debug, Clone, PartialEq)]
pub struct RunReport {
    /// Azimuthal order.
    pub m: u32,
    /// Radial cells.
    pub nr: usize,
    /// Axial cells.
    pub nz: usize,
    /// Radial step, m.
    pub dr: f64,
    /// Axial step, m.
    pub dz: f64,
    /// Time step, s.
    pub dt: f64,
    /// Stability limit, s.
    pub dt_max: f64,
    /// Rows of the axis rod (E held at r ≤ `axis_rod` Δr; 0 for none; see
    /// [`crate::coefficients::axis_rod_rows`]).
    pub axis_rod: usize,
    /// Time steps taken.
    pub steps: usize,
    /// Cells × steps.
    pub cell_updates: u64,
    /// Time a thread spent on the run (its stretches, summed), harmonic
    /// inversion included, s.
    pub seconds: f64,
    /// Times the run handed its thread to another run and waited for its
    /// turn: 0 when it kept one thread to the end (see
    /// [`crate::RunOptions::stretch_cell_updates`]).
    pub turns: usize,
    /// Probe samples recorded after the pulse.
    pub samples: usize,
    /// Sample spacing, s.
    pub sample_dt: f64,
    /// Harmonic-inversion checks made.
    pub checks: usize,
    /// Whether the stopping rule was met (else the maximum length was hit).
    pub converged: bool,
    /// The curved-surface correction of the off-diagonal permittivity
    /// coupling: `None` when no interface is curved (no coupling), else
    /// whether it was applied or left out, and why (left out, the run's
    /// frequencies converge at first order in the cell, not second).
    pub surface_correction: Option<SurfaceCorrection>,
}

/// The result of one run.
#[derive(Debug, Clone)]
pub struct RunOutput {
    /// Figures.
    pub report: RunReport,
    /// Modes found in the band, by frequency.
    pub modes: Vec<Mode>,
    /// The probe signals (after the pulse), for diagnostics and plots.
    pub signals: Vec<Vec<f64>>,
    /// Fields at the last step (axis values filled in).
    pub fields: Fields,
    /// The field of each mode (same order as `modes`), from a running
    /// transform over the ring-down; `None` where memory did not allow one.
    pub mode_fields: Vec<Option<ModeField>>,
    /// The grid the run was solved on (absorber cells included).
    pub grid: lathe_mesh::Grid,
    /// The walls of the run (absorber thicknesses in cells among them).
    pub walls: crate::boundary::Walls,
}

impl RunOutput {
    /// Mode `index` (in the order of `modes`) with its field, if the run
    /// kept one; `None` when there is no such mode.
    pub fn mode_with_field(&self, index: usize) -> Option<(&Mode, Option<&ModeField>)> {
        let mode = self.modes.get(index)?;
        let field = self.mode_fields.get(index).and_then(|f| f.as_ref());
        Some((mode, field))
    }
}

/// Plans and runs every order of `ms` in parallel (rayon), and labels the
/// modes ([`label_runs`]). Each run is sequential and self-contained, so
/// results are identical for any number of threads; the first failing order
/// (in the order of `ms`) is returned.
pub fn solve(problem: &Problem, ms: &[u32]) -> Result<Vec<RunOutput>, SolverError> {
    solve_with(problem, ms, &Silent)
}

/// [`solve`] reporting progress: every plan is made first (so a plan that
/// cannot run fails before anything steps), then the runs step.
pub fn solve_with(
    problem: &Problem,
    ms: &[u32],
    progress: &dyn Progress,
) -> Result<Vec<RunOutput>, SolverError> {
    let mut all = solve_each_with(&[problem], ms, progress)?;
    let mut runs = all.pop().expect("one problem");
    label_runs(&mut runs.iter_mut().collect::<Vec<_>>());
    Ok(runs)
}

/// Plans and runs every order of `ms` of each of `problems` (e.g. the two
/// symmetry halves of one structure) together, all runs sharing the pool
/// (longest first; with more runs than threads, the threads take turns on
/// them, [`runs_under_way`] at a time), and returns each problem's runs in
/// the order of `ms`, unlabelled. The first failing plan or run (problems in order, then
/// orders) is returned.
pub fn solve_each_with(
    problems: &[&Problem],
    ms: &[u32],
    progress: &dyn Progress,
) -> Result<Vec<Vec<RunOutput>>, SolverError> {
    // Plans and runs start in the default floating-point mode (gradual
    // underflow) whichever thread takes them: a thread that takes one while
    // it waits inside another run's harmonic inversion is in that run's
    // flush-to-zero mode, and the bits must not depend on who takes the
    // work. Each run then sets flush-to-zero for its own stepping.
    let jobs: Vec<(usize, u32)> = (0..problems.len())
        .flat_map(|p| ms.iter().map(move |&m| (p, m)))
        .collect();
    let plans: Vec<Result<RunPlan, SolverError>> = jobs
        .par_iter()
        .map(|&(p, m)| crate::fpu::with_gradual_underflow(|| plan(problems[p], m)))
        .collect();
    // In order, so that the error reported is the first, whichever thread
    // finished first.
    let plans: Vec<RunPlan> = plans.into_iter().collect::<Result<_, _>>()?;
    let runs: Vec<(&Problem, &RunPlan)> = jobs
        .iter()
        .zip(&plans)
        .map(|(&(p, _), plan)| (problems[p], plan))
        .collect();
    let mut done = run_all(&runs, progress).into_iter();
    let mut out = Vec::with_capacity(problems.len());
    for _ in problems {
        out.push(
            done.by_ref()
                .take(ms.len())
                .collect::<Result<Vec<_>, _>>()?,
        );
    }
    Ok(out)
}

/// How many of `runs` runs [`solve_each_with`] has under way at once in the
/// current rayon pool (stepping, or waiting for their turn): one more than
/// the threads when there are more runs than threads, and one on a single
/// thread (handing one thread round would only reload its caches). Each
/// holds its arrays meanwhile, so memory caps divide by this.
pub fn runs_under_way(runs: usize) -> usize {
    let threads = rayon::current_num_threads();
    let live = if threads > 1 { threads + 1 } else { 1 };
    live.min(runs).max(1)
}

/// Runs every (problem, plan) of `runs` on the threads of the current
/// rayon pool and returns the results in the order of `runs`.
///
/// One worker per thread ([`rayon::broadcast`]) takes runs from a shared
/// list, longest first (runs of one problem share the grid and ring for
/// about the same time, so the cell updates of a step, ∝ cells/Δt, rank
/// them). **The threads are shared in turn:** up to one run more than
/// there are threads is under way at a time, and a run that has stepped
/// [`crate::RunOptions::stretch_cell_updates`] since it last took a
/// thread hands it, at its next probe sample, to a run that is waiting
/// (the one that has waited longest, else the next new one), and waits in
/// its turn (a stretch's
/// start reloads the run's arrays into the core's caches, some 0.1 ms for
/// a grid of 10⁴ cells against the default stretch's 25 ms). So three runs
/// of equal length on two threads all end at about 1.5 run lengths, where
/// one run per thread to its end would end at 2 (or at 1 + 1/1.6 with the
/// last one's rows split). When no run is waiting and none is left, a
/// worker joins the [`Team`] of a run that splits by row
/// ([`crate::RunOptions::row_parallel_cells`]; the one with the fewest
/// helpers) and steps a block of its rows at every half step until it
/// ends, so the last run, or a single one, also uses every core. Once no
/// run waits and no new one is left, none is ever handed on again, so a
/// run with helpers keeps its thread. Which thread steps which
/// stretch or rows never changes a bit.
fn run_all(
    runs: &[(&Problem, &RunPlan)],
    progress: &dyn Progress,
) -> Vec<Result<RunOutput, SolverError>> {
    use std::collections::VecDeque;
    use std::sync::atomic::Ordering;
    use std::sync::Mutex;
    let mut order: Vec<usize> = (0..runs.len()).collect();
    let weight = |k: usize| runs[k].0.materials.grid.cells() as f64 / runs[k].1.dt;
    order.sort_by(|&a, &b| weight(b).total_cmp(&weight(a)));
    let teams: Vec<Team> = runs.iter().map(|_| Team::new()).collect();
    let started: Vec<AtomicBool> = runs.iter().map(|_| AtomicBool::new(false)).collect();
    let slots: Vec<Mutex<Option<Result<RunOutput, SolverError>>>> =
        runs.iter().map(|_| Mutex::new(None)).collect();
    let splits = |k: usize| {
        let (problem, _) = runs[k];
        problem.options.splits_rows(problem.materials.grid.cells())
    };
    let help = (0..runs.len()).any(splits);
    let threads = rayon::current_num_threads();
    let most_live = runs_under_way(usize::MAX);
    // The runs waiting for a thread, the next new run (in `order`) and the
    // runs under way (waiting or stepping), under one lock.
    struct Turns<'a> {
        waiting: VecDeque<(usize, Box<Ring<'a>>)>,
        next: usize,
        live: usize,
    }
    let turns = Mutex::new(Turns {
        waiting: VecDeque::new(),
        next: 0,
        live: 0,
    });
    let lock = || turns.lock().unwrap_or_else(|e| e.into_inner());
    // What a thread takes up: the run that has waited longest, else the
    // next new one (`None` in place of its ring).
    fn take_up<'r>(t: &mut Turns<'r>, order: &[usize]) -> Option<(usize, Option<Box<Ring<'r>>>)> {
        if let Some((k, ring)) = t.waiting.pop_front() {
            return Some((k, Some(ring)));
        }
        let &k = order.get(t.next)?;
        t.next += 1;
        t.live += 1;
        Some((k, None))
    }
    let worker = || {
        // A thread inside a run of its own (one that took this worker while
        // it waited in that run's harmonic inversion) steps what it takes
        // to the end, and must then go back to its own run.
        let nested = crate::team::owning();
        let mut turn = take_up(&mut lock(), &order);
        while let Some((k, ring)) = turn.take() {
            let (problem, plan) = runs[k];
            let team = splits(k).then_some(&teams[k]);
            // Closes the team when the run ends, even by a panic, so that
            // no helper spins on (the panic then reaches the caller through
            // the broadcast); not when the run only waits.
            let mut closing = Closing(&teams[k], true);
            let stretch = if nested || threads == 1 {
                usize::MAX
            } else {
                (problem.options.stretch_cell_updates / problem.materials.grid.cells()).max(1)
            };
            let stepped = crate::fpu::with_gradual_underflow(|| {
                let _owning = crate::team::Owning::new();
                let _ftz = FlushSubnormals::new();
                let mut ring = match ring {
                    Some(mut ring) => {
                        ring.resume();
                        ring
                    }
                    None => {
                        started[k].store(true, Ordering::Release);
                        Box::new(Ring::start(problem, plan, progress, team)?)
                    }
                };
                if ring.advance(stretch)? {
                    ring.finish().map(|out| Stretch::Ended(Box::new(out)))
                } else {
                    ring.pause();
                    Ok(Stretch::Paused(ring))
                }
            });
            let done = match stepped {
                Ok(Stretch::Paused(ring)) => {
                    closing.1 = false;
                    let mut t = lock();
                    let other = if let Some((j, r)) = t.waiting.pop_front() {
                        Some((j, Some(r)))
                    } else if t.live < most_live && t.next < order.len() {
                        take_up(&mut t, &order)
                    } else {
                        None
                    };
                    turn = match other {
                        Some(other) => {
                            let mut ring = ring;
                            ring.turns += 1;
                            t.waiting.push_back((k, ring));
                            Some(other)
                        }
                        None => Some((k, Some(ring))),
                    };
                    continue;
                }
                Ok(Stretch::Ended(out)) => Ok(*out),
                Err(e) => Err(e),
            };
            *slots[k].lock().unwrap_or_else(|e| e.into_inner()) = Some(done);
            drop(closing);
            let mut t = lock();
            t.live -= 1;
            turn = take_up(&mut t, &order);
        }
        if !help || nested {
            return;
        }
        // Every run has been taken and none waits: help those that split
        // by row until their teams close (a run taken but not yet started
        // is waited for; one that does not split needs no help).
        let mut idle = crate::team::Backoff::default();
        while (0..runs.len()).any(|k| splits(k) && !teams[k].is_closed()) {
            let open = (0..runs.len())
                .filter(|&k| {
                    splits(k) && started[k].load(Ordering::Acquire) && !teams[k].is_closed()
                })
                .min_by_key(|&k| teams[k].helpers());
            match open {
                Some(k) => {
                    teams[k].serve();
                    // Back at once from an open team: it is full.
                    if teams[k].is_closed() {
                        idle.reset();
                    } else {
                        idle.pause();
                    }
                }
                None => idle.pause(),
            }
        }
    };
    rayon::broadcast(|_| worker());
    slots
        .into_iter()
        .map(|m| {
            m.into_inner()
                .unwrap_or_else(|e| e.into_inner())
                .expect("every run was taken by a worker")
        })
        .collect()
}

/// How a run's stretch on a thread ended.
enum Stretch<'a> {
    /// At a probe sample, the run to go on later.
    Paused(Box<Ring<'a>>),
    /// With the run's end.
    Ended(Box<RunOutput>),
}

/// On drop: closes a run's team, if armed (the run has ended).
struct Closing<'a>(&'a Team, bool);

impl Drop for Closing<'_> {
    fn drop(&mut self) {
        if self.1 {
            self.0.close();
        }
    }
}

/// Labels the modes of all `runs` of one structure together (e.g. both
/// symmetry halves); see [`crate::modes::label_modes`] for the rule.
pub fn label_runs(runs: &mut [&mut RunOutput]) {
    use crate::modes::{label_modes, Family};
    let mut all: Vec<(&mut Mode, Family)> = Vec::new();
    for r in runs.iter_mut() {
        for md in r.modes.iter_mut() {
            let fam = md.family.unwrap_or(Family::Unclear);
            all.push((md, fam));
        }
    }
    label_modes(&mut all);
}

/// Runs `plan` on `problem`, its rows split over every thread of the pool
/// when the grid is large enough ([`crate::RunOptions::row_parallel_cells`]).
pub fn run(problem: &Problem, plan: &RunPlan) -> Result<RunOutput, SolverError> {
    run_with(problem, plan, &Silent)
}

/// Receives the progress of runs as they step; called from the worker
/// threads, so it must be `Sync` and cheap (it is called every 64 steps).
pub trait Progress: Sync {
    /// A run of order `m` starts; it will take at most `planned` cell
    /// updates.
    fn started(&self, m: u32, planned: u64);
    /// A run of order `m` has just done `cell_updates` more cell updates.
    fn advance(&self, m: u32, cell_updates: u64);
    /// The run of order `m` has finished after `done` cell updates of the
    /// `planned` most its plan allowed (a run stops early when its modes
    /// have settled, so `done ≤ planned` except for the short closing stretch
    /// that gives late modes a field).
    fn finished(&self, m: u32, done: u64, planned: u64);
}

/// A [`Progress`] that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct Silent;

impl Progress for Silent {
    fn started(&self, _m: u32, _planned: u64) {}
    fn advance(&self, _m: u32, _cell_updates: u64) {}
    fn finished(&self, _m: u32, _done: u64, _planned: u64) {}
}

/// The most cell updates a plan can take: its maximum length in steps times
/// the cells of the grid (what a progress display counts towards).
pub fn planned_cell_updates(problem: &Problem, plan: &RunPlan) -> u64 {
    plan.max_steps as u64 * problem.materials.grid.cells() as u64
}

/// [`run`] reporting its progress to `progress`.
pub fn run_with(
    problem: &Problem,
    plan: &RunPlan,
    progress: &dyn Progress,
) -> Result<RunOutput, SolverError> {
    let parallel = problem.options.splits_rows(problem.materials.grid.cells());
    crate::team::with_team(parallel, |team| run_in(problem, plan, progress, team))
}

/// [`run_with`] stepping with `team` (rows split over it when the grid
/// splits by row; `None`: on this thread alone), on this thread from start
/// to end.
fn run_in(
    problem: &Problem,
    plan: &RunPlan,
    progress: &dyn Progress,
    team: Option<&Team>,
) -> Result<RunOutput, SolverError> {
    let _owning = crate::team::Owning::new();
    let _ftz = FlushSubnormals::new();
    let mut ring = Ring::start(problem, plan, progress, team)?;
    while !ring.advance(usize::MAX)? {}
    ring.finish()
}

/// The frequency a mode rings at on the grid of time step `dt` (before the
/// leapfrog correction of `modes`), where its running transform must be
/// taken.
fn sampled(md: &Mode, dt: f64) -> f64 {
    let w = 2.0 * std::f64::consts::PI * md.freq_hz;
    2.0 * (w * dt / 2.0).min(1.0).asin() / (2.0 * std::f64::consts::PI * dt)
}

/// Whether transform `a` matches mode `md`: within its half bandwidth
/// (1/2Q), at least 1e-4 — scouts see the frequency roughly, which is
/// enough over the few periods a damped mode rings.
fn matches(a: &Accumulator, md: &Mode, dt: f64) -> bool {
    let tol = (0.5 / md.q.max(1.0)).max(1e-4);
    a.samples() > 0 && (a.freq_hz / sampled(md, dt) - 1.0).abs() < tol
}

/// One run in progress: everything its time loop carries from one step to
/// the next, so that it can stop at a probe sample and go on later, on
/// this thread or another ([`run_all`] shares the threads among more runs
/// than there are threads this way). [`Ring::start`] plans the arrays and
/// steps the pulse, [`Ring::advance`] steps the ring-down in stretches and
/// makes its checks, [`Ring::finish`] builds the modes' fields. The bits do
/// not depend on where the stretches end: each step and each check is the
/// same expression in the same floating-point mode (flush-to-zero while
/// stepping, set by the caller of every stretch; gradual underflow inside
/// harmonic inversion).
struct Ring<'a> {
    problem: &'a Problem,
    plan: &'a RunPlan,
    progress: &'a dyn Progress,
    team: Option<&'a Team>,
    coeffs: Coefficients,
    f: Fields,
    pml: Option<Pml>,
    energy_w: EnergyWeights,
    signals: Vec<Vec<f64>>,
    step: usize,
    /// Cell updates between two progress reports.
    chunk: u64,
    peak_energy: f64,
    /// The energy when the pulse ended: the growth guard's reference.
    reference: f64,
    /// The largest probe value while the pulse drives the fields: the
    /// scale of the run's round-off (see `invert`'s noise floor).
    drive_peak: f64,
    accs: Vec<Accumulator>,
    previous: Option<Vec<Mode>>,
    modes: Vec<Mode>,
    checks: usize,
    converged: bool,
    /// The fields at every sample up to a scout (`plan.early_samples`),
    /// kept (in arrays allocated before the ring-down) so that the
    /// transforms opened at the scouts start with the ring-down itself: a
    /// mode of Q 4 has decayed to e^{−5} by a first scout 32 samples in,
    /// and its transform from there on is swamped by what the demixing
    /// cannot remove (measured: DEVELOPERS.md, "Mode fields and the noise
    /// floor").
    early: Vec<Fields>,
    early_t: Vec<f64>,
    /// Sample counts at which the signals are inverted, and whether each
    /// is a scout (scout checks early in the ring-down only open running
    /// transforms, so that strongly damped modes are transformed while
    /// they still ring).
    schedule: Vec<(usize, bool)>,
    /// The next entry of `schedule`.
    next: usize,
    /// Whether the energy has decayed to round-off since the last check.
    decayed: bool,
    /// Time spent on this run so far, s, and when its present stretch
    /// began.
    busy: f64,
    since: Instant,
    /// Times the run has waited for a thread.
    turns: usize,
}

impl<'a> Ring<'a> {
    /// Allocates the run's arrays and steps the pulse.
    fn start(
        problem: &'a Problem,
        plan: &'a RunPlan,
        progress: &'a dyn Progress,
        team: Option<&'a Team>,
    ) -> Result<Ring<'a>, SolverError> {
        let since = Instant::now();
        let m = plan.m;
        progress.started(m, planned_cell_updates(problem, plan));
        let map = &problem.materials;
        let g = &map.grid;
        let mut coeffs =
            Coefficients::with_axis_rod(map, &problem.walls, m, plan.dt, plan.axis_rod);
        coeffs.row_parallel = problem.options.splits_rows(g.cells());
        let energy_w = EnergyWeights::new(&coeffs, g);
        let schedule: Vec<(usize, bool)> = plan
            .scouts()
            .iter()
            .map(|&n| (n, true))
            .chain(plan.checks().into_iter().map(|n| (n, false)))
            .collect();
        let mut ring = Ring {
            problem,
            plan,
            progress,
            team,
            f: Fields::zeros(g),
            pml: Pml::new(g, &problem.walls, plan.dt),
            energy_w,
            coeffs,
            signals: plan
                .probes
                .iter()
                .map(|_| Vec::with_capacity(plan.max_samples))
                .collect(),
            step: 0,
            chunk: 64 * g.cells() as u64,
            peak_energy: 0.0,
            reference: 0.0,
            drive_peak: 0.0,
            accs: Vec::new(),
            previous: None,
            modes: Vec::new(),
            checks: 0,
            converged: false,
            early: (0..plan.early_samples).map(|_| Fields::zeros(g)).collect(),
            early_t: Vec::with_capacity(plan.early_samples),
            schedule,
            next: 0,
            decayed: false,
            busy: 0.0,
            since,
            turns: 0,
        };
        let table: Vec<f64> = (0..plan.source_steps)
            .map(|n| plan.pulse.current((n as f64 + 0.5) * plan.dt))
            .collect();
        for &s in &table {
            ring.steps(1);
            inject(&mut ring.f, &ring.coeffs, &plan.sources, s);
            ring.step += 1;
            if ring.step % plan.decimation == 0 {
                for p in &plan.probes {
                    ring.drive_peak = ring.drive_peak.max(read(&ring.f, p).abs());
                }
            }
            if ring.step % 64 == 0 {
                ring.peak_energy = ring.peak_energy.max(ring.guard(0.0)?);
                progress.advance(m, ring.chunk);
            }
        }
        ring.reference = ring.guard(0.0)?;
        ring.peak_energy = ring.peak_energy.max(ring.reference);
        Ok(ring)
    }

    /// `n` full steps (the fused step, same bits as whole passes; see
    /// `kernel::step`).
    fn steps(&mut self, n: usize) {
        crate::kernel::steps_on(&mut self.f, &self.coeffs, self.pml.as_mut(), self.team, n);
    }

    /// The field energy, or the error of a non-finite one or of one above
    /// `growth_limit` × `reference` (when that is positive).
    fn guard(&self, reference: f64) -> Result<f64, SolverError> {
        let e = self.energy_w.energy(&self.f);
        let (m, step) = (self.plan.m, self.step);
        let time_s = step as f64 * self.plan.dt;
        if !e.is_finite() {
            return Err(SolverError::NonFinite { m, step, time_s });
        }
        if reference > 0.0 && e > self.problem.options.growth_limit * reference {
            return Err(SolverError::Unstable {
                m,
                step,
                time_s,
                ratio: e / reference,
            });
        }
        Ok(e)
    }

    /// Marks the start of a stretch on some thread (for the run's time).
    fn resume(&mut self) {
        self.since = Instant::now();
    }

    /// Marks the end of a stretch.
    fn pause(&mut self) {
        self.busy += self.since.elapsed().as_secs_f64();
    }

    /// Steps the ring-down and makes its checks until the run has stopped
    /// (true) or, at the first probe sample at least `budget` steps on,
    /// pauses (false).
    fn advance(&mut self, budget: usize) -> Result<bool, SolverError> {
        let plan = self.plan;
        let m = plan.m;
        let stop_at = self.step.saturating_add(budget);
        while let Some(&(target, scout)) = self.schedule.get(self.next) {
            while self.signals[0].len() < target {
                if self.step >= stop_at {
                    return Ok(false);
                }
                // The steps to the next sample, in stretches that end where
                // the energy is checked (every 64 steps).
                let mut left = plan.decimation;
                while left > 0 {
                    let n = left.min(64 - self.step % 64);
                    self.steps(n);
                    self.step += n;
                    left -= n;
                    if self.step % 64 == 0 {
                        let e = self.guard(self.reference)?;
                        self.decayed |= e < 1e-28 * self.peak_energy;
                        self.progress.advance(m, self.chunk);
                    }
                }
                for (sig, p) in self.signals.iter_mut().zip(&plan.probes) {
                    sig.push(read(&self.f, p));
                }
                let t = self.step as f64 * plan.dt;
                for a in self.accs.iter_mut() {
                    a.add(&self.f, t, plan.dt);
                }
                if let Some(e) = self.early.get_mut(self.early_t.len()) {
                    e.copy_from(&self.f);
                    self.early_t.push(t);
                }
            }
            self.next += 1;
            let decayed = std::mem::take(&mut self.decayed);
            if self.check(scout)? || decayed && !scout {
                self.converged = true;
                return Ok(true);
            }
        }
        Ok(true)
    }

    /// One check at the present sample: harmonic inversion, transforms
    /// opened for modes new to it (and, at a full check, those matching
    /// none dropped). Returns whether a full check's modes agree with the
    /// previous check's (the stopping rule).
    fn check(&mut self, scout: bool) -> Result<bool, SolverError> {
        let (plan, problem) = (self.plan, self.problem);
        if !scout {
            self.checks += 1;
        }
        let families: Vec<_> = plan.probes.iter().map(|p| p.family).collect();
        let found = crate::fpu::with_gradual_underflow(|| {
            invert(
                &self.signals,
                self.drive_peak,
                &families,
                plan.sample_dt,
                plan.dt,
                plan.m,
                plan.f_min,
                plan.f_max,
                &problem.options.fdm,
            )
        })?;
        // While every sample so far is kept, a new transform takes them
        // all, from the first of the ring-down.
        let replay = !self.early_t.is_empty() && self.early_t.len() == self.signals[0].len();
        for md in &found {
            let fs = sampled(md, plan.dt);
            let known = self
                .accs
                .iter()
                .any(|a| (a.freq_hz / fs - 1.0).abs() < 1e-5);
            if !known && self.accs.len() < plan.max_mode_fields {
                let mut a = Accumulator::new(fs, &self.f);
                if replay {
                    for (e, &t) in self.early.iter().zip(&self.early_t) {
                        a.add(e, t, plan.dt);
                    }
                }
                self.accs.push(a);
            }
        }
        if !self.early.is_empty() && self.early_t.len() == self.early.len() {
            // All kept: the early fields are of no more use.
            self.early = Vec::new();
            self.early_t = Vec::new();
        }
        if scout {
            return Ok(false);
        }
        // A transform that matches none of the modes found (a scout's fit
        // that did not survive) is dropped: it would cost work at every
        // sample for nothing.
        self.accs.retain(|a| {
            found.iter().any(|md| {
                let tol = (0.5 / md.q.max(1.0)).max(1e-4);
                (a.freq_hz / sampled(md, plan.dt) - 1.0).abs() < tol
            })
        });
        let agree = self
            .previous
            .as_ref()
            .is_some_and(|p| same_modes(p, &found));
        self.modes = found;
        if !agree {
            self.previous = Some(self.modes.clone());
        }
        Ok(agree)
    }

    /// Rings on briefly for modes that have no transform yet, separates
    /// the modes' fields and reports the run.
    fn finish(mut self) -> Result<RunOutput, SolverError> {
        let plan = self.plan;
        let dt = plan.dt;
        let m = plan.m;
        let g = &self.problem.materials.grid;
        // Modes first seen at the last check have had no transform yet: ring
        // on for a short stretch (a quarter of the first check's length) so
        // each gets one. These steps are counted like any other.
        let modes = std::mem::take(&mut self.modes);
        let missing = modes
            .iter()
            .any(|md| !self.accs.iter().any(|a| matches(a, md, dt)));
        if missing {
            for md in &modes {
                if !self.accs.iter().any(|a| matches(a, md, dt)) {
                    self.accs.push(Accumulator::new(sampled(md, dt), &self.f));
                }
            }
            let extra = (plan.first_check / 4).max(16);
            for _ in 0..extra {
                self.steps(plan.decimation);
                self.step += plan.decimation;
                let t = self.step as f64 * dt;
                for a in self.accs.iter_mut() {
                    a.add(&self.f, t, dt);
                }
            }
        }
        let accs = &self.accs;
        // Each mode's transform (the longest that matches it, each used
        // once), then the modes separated from one another
        // (modefield::demix). The modes choose in order of decreasing Q: a
        // strongly damped mode's match is wide (its half bandwidth), and
        // chosen first it could take the transform of a sharp mode nearby,
        // which would then be missing from the separation and, ringing on,
        // leak into every other mode's field. Measured on a hemisphere
        // searched over a wide band, with its transforms opened late (the
        // early fields kept to the first scout only): a Q 1.6 mode at
        // 17.1 GHz took a Q 1900 mode's transform at 20.3 GHz, and TE1's
        // stored-energy Q came out 2126 against 9.15; with the sharp modes
        // choosing first, 145 (and 9.05 once the early fields reach the
        // second scout: tests/radiation.rs,
        // `a_wide_band_keeps_every_ringing_mode_s_field`).
        let mut used = vec![false; accs.len()];
        let mut pairing: Vec<Option<usize>> = vec![None; modes.len()];
        let mut by_q: Vec<usize> = (0..modes.len()).collect();
        by_q.sort_by(|&a, &b| modes[b].q.total_cmp(&modes[a].q).then(a.cmp(&b)));
        for k in by_q {
            let md = &modes[k];
            let best = (0..accs.len())
                .filter(|&a| !used[a] && matches(&accs[a], md, dt))
                .max_by(|&a, &b| {
                    let off = |x: usize| (accs[x].freq_hz / sampled(md, dt) - 1.0).abs();
                    accs[a]
                        .samples()
                        .cmp(&accs[b].samples())
                        .then(off(b).total_cmp(&off(a)))
                        .then(b.cmp(&a))
                });
            if let Some(a) = best {
                used[a] = true;
            }
            pairing[k] = best;
        }
        let poles: Vec<crate::modefield::Pole> = modes
            .iter()
            .zip(&pairing)
            .filter_map(|(md, a)| {
                a.map(|a| crate::modefield::Pole {
                    acc: &accs[a],
                    s: Complex64::new(-md.decay, 2.0 * std::f64::consts::PI * sampled(md, dt)),
                })
            })
            .collect();
        let separated = crate::modefield::demix(&poles, dt);
        let mut separated = separated.map(|v| v.into_iter());
        let mode_fields: Vec<Option<ModeField>> = modes
            .iter()
            .zip(&pairing)
            .map(|(md, a)| {
                a.map(|a| {
                    let mut mf = match separated.as_mut() {
                        Some(it) => it.next().expect("one field per pole"),
                        None => accs[a].finish(),
                    };
                    mf.freq_hz = md.freq_hz;
                    mf.fill_axis(g.nr, g.nz, m);
                    mf
                })
            })
            .collect();
        fill_axis(&mut self.f, m);
        let samples = self.signals[0].len();
        let step = self.step;
        let cell_updates = (g.cells() as u64) * step as u64;
        self.progress
            .finished(m, cell_updates, planned_cell_updates(self.problem, plan));
        Ok(RunOutput {
            report: RunReport {
                m,
                nr: g.nr,
                nz: g.nz,
                dr: g.dr,
                dz: g.dz,
                dt,
                dt_max: plan.stability.dt_max,
                axis_rod: plan.axis_rod,
                steps: step,
                cell_updates,
                seconds: self.busy + self.since.elapsed().as_secs_f64(),
                turns: self.turns,
                samples,
                sample_dt: plan.sample_dt,
                checks: self.checks,
                converged: self.converged,
                surface_correction: self.coeffs.coupling.as_ref().map(|cp| cp.correction),
            },
            modes,
            signals: self.signals,
            fields: self.f,
            mode_fields,
            grid: g.clone(),
            walls: self.problem.walls,
        })
    }
}

/// Poles whose RMS is below this fraction of the run's largest probe value
/// (pulse included) are dropped as round-off.
pub const NOISE_FLOOR: f64 = 1e-10;

/// Harmonic inversion of every probe signal and merging into modes.
#[allow(clippy::too_many_arguments)]
pub fn invert(
    signals: &[Vec<f64>],
    drive_peak: f64,
    families: &[Option<crate::modes::Family>],
    sample_dt: f64,
    dt: f64,
    m: u32,
    f_min: f64,
    f_max: f64,
    opts: &FdmOptions,
) -> Result<Vec<Mode>, SolverError> {
    // Noise floor: a pole whose RMS over the record is below NOISE_FLOOR of
    // the largest probe value of the run is round-off, not a mode (FDTD
    // signals carry ~1e-16 relative noise; this leaves six decades of margin
    // for weakly coupled modes). The reference is the run's largest value —
    // over the ring-down and, `drive_peak`, while the pulse drove the fields,
    // since round-off scales with the largest field the run ever held — not
    // each signal's own: a probe that sees nothing (at m = 0 the TE probe of
    // a structure with no TE mode in the band, or a symmetry half that
    // couples to almost nothing) records round-off only.
    let peak = signals
        .iter()
        .flat_map(|s| s.iter())
        .fold(drive_peak, |a, x| a.max(x.abs()));
    let per_probe: Vec<_> = signals
        .iter()
        .map(|s| {
            let c: Vec<Complex64> = s.iter().map(|&x| Complex64::new(x, 0.0)).collect();
            let n = s.len() as f64;
            filter_diagonalisation(&c, sample_dt, f_min, f_max, opts)
                .map(|poles| {
                    poles
                        .into_iter()
                        .filter(|p| {
                            let x = -2.0 * p.decay * sample_dt;
                            let sum = if x == 0.0 {
                                n
                            } else {
                                (x * n).exp_m1() / x.exp_m1()
                            };
                            p.amplitude.norm() * (sum / n).sqrt() >= NOISE_FLOOR * peak
                        })
                        .collect()
                })
                .map_err(|source| SolverError::Harminv { m, source })
        })
        .collect::<Result<_, _>>()?;
    Ok(merge(&per_probe, families, m, dt))
}

fn same_modes(a: &[Mode], b: &[Mode]) -> bool {
    a.len() == b.len()
        && a.iter().zip(b).all(|(x, y)| {
            let w = 2.0 * std::f64::consts::PI * x.freq_hz;
            (x.freq_hz - y.freq_hz).abs() <= 1e-6 * x.freq_hz
                && (x.decay - y.decay).abs() <= 1e-6 * w
        })
}

/// Row weights for the field energy ½Σ(εE² + μH²)·r·Δr·Δz (up to a constant).
struct EnergyWeights {
    r_int: Vec<f64>,
    r_half: Vec<f64>,
    eps: [Vec<f64>; 3],
}

impl EnergyWeights {
    fn new(c: &Coefficients, g: &lathe_mesh::Grid) -> Self {
        let eps = [Component::Er, Component::Ephi, Component::Ez].map(|k| {
            c.cb(k)
                .iter()
                .map(|&b| if b == 0.0 { 0.0 } else { c.dt / b })
                .collect()
        });
        let mut r_int: Vec<f64> = (0..=g.nr).map(|i| g.r_int(i)).collect();
        r_int[0] = g.dr / 8.0;
        EnergyWeights {
            r_int,
            r_half: (0..g.nr).map(|i| g.r_half(i)).collect(),
            eps,
        }
    }

    fn energy(&self, f: &Fields) -> f64 {
        let mut total = 0.0;
        for (k, comp) in [Component::Er, Component::Ephi, Component::Ez]
            .iter()
            .enumerate()
        {
            let rows = if comp.staggering().0 {
                &self.r_half
            } else {
                &self.r_int
            };
            let len = f.row_len(*comp);
            let v = f.get(*comp);
            for (i, r) in rows.iter().enumerate() {
                let s: f64 = v[i * len..(i + 1) * len]
                    .iter()
                    .zip(&self.eps[k][i * len..(i + 1) * len])
                    .map(|(x, e)| e * x * x)
                    .sum();
                total += r * s;
            }
        }
        for comp in [Component::Hr, Component::Hphi, Component::Hz] {
            let rows = if comp.staggering().0 {
                &self.r_half
            } else {
                &self.r_int
            };
            let len = f.row_len(comp);
            let v = f.get(comp);
            for (i, r) in rows.iter().enumerate() {
                let s: f64 = v[i * len..(i + 1) * len].iter().map(|x| x * x).sum();
                total += r * MU0 * s;
            }
        }
        total
    }
}
