//! A run described as data before any field is stepped.
//!
//! [`plan`] decides, for one azimuthal order, everything a run will do: the
//! time step (the computed stability limit times a safety factor), the pulse
//! and how long it lasts, how finely probe signals are sampled, when harmonic
//! inversion is tried and when the run gives up, where sources and probes
//! sit, and how much memory it takes. `lathe check` prints it; [`crate::run()`]
//! executes it.
use crate::boundary::Walls;
use crate::coefficients::{axis_rod_rows, Coefficients};
use crate::error::SolverError;
use crate::excitation::{place, Point, Pulse};
use crate::harminv::FdmOptions;
use crate::stability::{stability_limit_with_rod, StabilityLimit};
use lathe_mesh::MaterialMap;

/// The solver's input: a filled grid, its walls, the band and options.
#[derive(Debug, Clone)]
pub struct Problem {
    /// Grid and materials.
    pub materials: MaterialMap,
    /// Walls of the region.
    pub walls: Walls,
    /// Lower band edge, Hz.
    pub f_min: f64,
    /// Upper band edge, Hz.
    pub f_max: f64,
    /// Run options.
    pub options: RunOptions,
}

/// Tunable parts of a run, with documented defaults.
#[derive(Debug, Clone)]
pub struct RunOptions {
    /// Δt as a fraction of the computed stability limit. Default 0.97: the
    /// Lanczos estimate of λ_max is a lower bound converged to ~1e-7, so 3 %
    /// is ample margin, and a larger step means fewer steps.
    pub dt_safety: f64,
    /// Length of the recorded signal at the first harmonic-inversion check,
    /// in periods of f_min. Default 20: the stopping rule (see
    /// [`mod@crate::run`]) then settles every mode of the validation cases at
    /// the second check (30 periods) with the same reported digits as a
    /// first check at 40, for 40 % fewer cell updates
    /// (solver/benches/RESULTS.md); a case that needs longer simply takes
    /// more checks.
    pub min_periods: f64,
    /// Longest recorded signal, in periods of f_min, after which the run
    /// stops and reports what it has (flagged as not converged). Default 4000.
    pub max_periods: f64,
    /// Each later check is made after the signal has grown by this factor.
    /// Default 1.5.
    pub check_growth: f64,
    /// The run stops as unstable when the field energy exceeds this multiple
    /// of its value when the source stopped. Default 100 (a lossless cavity
    /// keeps the ratio near 1).
    pub growth_limit: f64,
    /// Source points. Default 3 (each drives E_r, E_φ and E_z).
    pub sources: usize,
    /// Probe points. Default 5 (each reads all six components).
    pub probes: usize,
    /// In a pool of more than one thread, grids of at least this many cells
    /// split each half step's rows into blocks of equal cost, one per
    /// member of the run's stepping team ([`crate::team`]): its own thread
    /// and every thread that has run out of runs, so the last run of a
    /// study, or a study of one run, keeps every core busy. Results are
    /// bitwise identical either way. Default 4 096.
    pub row_parallel_cells: usize,
    /// When a study has more runs than threads, the threads take turns:
    /// a run that has stepped this many cell updates since it took its
    /// thread hands it, at its next probe sample, to a run that is waiting
    /// (see [`crate::run::solve_each_with`]). Default 2²³ (about 25 ms at
    /// 3 × 10⁸ cell updates/s). Results are bitwise identical for any
    /// value.
    pub stretch_cell_updates: usize,
    /// Memory cap per run, bytes. Default 4 GiB.
    pub max_memory: usize,
    /// Most mode fields (running transforms) a run keeps, default 48; the
    /// transforms of one run also never take more than
    /// [`crate::modefield::MAX_BYTES`].
    pub max_mode_fields: usize,
    /// Hold the E nodes near the axis at zero for orders m ≥ 2 (the axis
    /// rod of [`crate::coefficients::axis_rod_rows`]: r ≤ ⌊m/2⌋ Δr), so
    /// that those orders step at about the m = 1 limit instead of one that
    /// falls as 1/m. Default true.
    pub axis_rod: bool,
    /// Harmonic-inversion options.
    pub fdm: FdmOptions,
}

impl RunOptions {
    /// Whether a grid of `cells` splits its rows over the current rayon
    /// pool (see [`RunOptions::row_parallel_cells`]).
    pub fn splits_rows(&self, cells: usize) -> bool {
        rayon::current_num_threads() > 1 && cells >= self.row_parallel_cells
    }
}

impl Default for RunOptions {
    fn default() -> Self {
        let mut fdm = FdmOptions::default();
        // FDTD signals are noise-free to round-off: keep weakly coupled modes.
        fdm.acceptance.min_relative_amplitude = 1e-8;
        fdm.acceptance.max_error = 1e-4;
        RunOptions {
            dt_safety: 0.97,
            min_periods: 20.0,
            max_periods: 4000.0,
            check_growth: 1.5,
            growth_limit: 100.0,
            sources: 3,
            probes: 5,
            row_parallel_cells: 4096,
            stretch_cell_updates: 1 << 23,
            max_memory: 4 << 30,
            max_mode_fields: 48,
            axis_rod: true,
            fdm,
        }
    }
}

/// Everything one run will do.
#[derive(Debug, Clone)]
pub struct RunPlan {
    /// Azimuthal order.
    pub m: u32,
    /// Rows of the axis rod (E nodes held at r ≤ `axis_rod` Δr; 0 for
    /// none; see [`crate::coefficients::axis_rod_rows`]).
    pub axis_rod: usize,
    /// Stability analysis of the discrete operator.
    pub stability: StabilityLimit,
    /// The time step, s.
    pub dt: f64,
    /// The source pulse.
    pub pulse: Pulse,
    /// Steps while the source is on.
    pub source_steps: usize,
    /// Probe samples are taken every `decimation` steps.
    pub decimation: usize,
    /// Sample spacing of probe signals, s.
    pub sample_dt: f64,
    /// Samples at the first harmonic-inversion check.
    pub first_check: usize,
    /// Growth factor between checks.
    pub check_growth: f64,
    /// Most samples a probe records.
    pub max_samples: usize,
    /// Most time steps the run takes.
    pub max_steps: usize,
    /// Source points.
    pub sources: Vec<Point>,
    /// Probe points.
    pub probes: Vec<Point>,
    /// Band, Hz.
    pub f_min: f64,
    /// Band, Hz.
    pub f_max: f64,
    /// Estimated memory, bytes: [`RunPlan::base_bytes`] plus the running
    /// transforms at their cap.
    pub memory_bytes: usize,
    /// Fields, coefficients, absorber state and probe signals, bytes.
    pub base_bytes: usize,
    /// One mode's running transform (six complex arrays), bytes.
    pub mode_field_bytes: usize,
    /// Most running transforms the run keeps (within its memory budget).
    pub max_mode_fields: usize,
    /// Ring-down samples whose fields are kept, up to a scout check, so
    /// that the transforms opened at the scouts start with the ring-down
    /// (0 when not even the first scout's would fit; see
    /// [`EARLY_MAX_BYTES`]).
    pub early_samples: usize,
    /// Those fields, bytes (part of [`RunPlan::memory_bytes`]).
    pub early_bytes: usize,
}

/// Most bytes a run spends on its early ring-down fields: 32 samples of
/// grids up to about 1.7 × 10⁵ cells, fewer samples of larger grids (down to
/// the first scout's); beyond that the transforms open at the checks
/// without them.
pub const EARLY_MAX_BYTES: usize = 256 << 20;

impl RunPlan {
    /// The scout checks before the first check (sample counts, ascending):
    /// harmonic inversion early in the ring-down that only opens running
    /// transforms, so that strongly damped modes are transformed while they
    /// still ring. At least 32 samples each.
    pub fn scouts(&self) -> Vec<usize> {
        scouts(self.first_check)
    }

    /// The check schedule: sample counts at which harmonic inversion runs.
    pub fn checks(&self) -> Vec<usize> {
        let mut out = vec![self.first_check.min(self.max_samples)];
        while *out.last().unwrap() < self.max_samples {
            let next = ((*out.last().unwrap() as f64) * self.check_growth).ceil() as usize;
            out.push(next.min(self.max_samples));
        }
        out
    }
}

fn scouts(first_check: usize) -> Vec<usize> {
    [8, 4, 2]
        .iter()
        .map(|d| first_check / d)
        .filter(|&n| n >= 32)
        .collect()
}

/// Plans the run of order `m`.
pub fn plan(problem: &Problem, m: u32) -> Result<RunPlan, SolverError> {
    let (f_min, f_max) = (problem.f_min, problem.f_max);
    if !(f_min > 0.0 && f_max > f_min && f_max.is_finite()) {
        return Err(SolverError::BadBand { f_min, f_max });
    }
    let o = &problem.options;
    let map = &problem.materials;
    let axis_rod = if o.axis_rod { axis_rod_rows(m) } else { 0 };
    let stability = stability_limit_with_rod(map, &problem.walls, m, axis_rod);
    if stability.iterations == 0 {
        return Err(SolverError::NothingToSolve { m });
    }
    let dt = o.dt_safety * stability.dt_max;
    let pulse = Pulse::for_band(f_min, f_max);
    let source_steps = (pulse.duration() / dt).ceil() as usize;
    // Sample fast enough that nothing the pulse excites folds into the band
    // (f_s ≥ f_max + f_top) and with at least four samples per period of f_max.
    let f_s = (f_max + pulse.f_top()).max(4.0 * f_max);
    let decimation = ((1.0 / (f_s * dt)).floor() as usize).max(1);
    let sample_dt = decimation as f64 * dt;
    let samples_for = |periods: f64| (periods / (f_min * sample_dt)).ceil() as usize;
    let max_samples = samples_for(o.max_periods).max(64);
    let first_check = samples_for(o.min_periods).clamp(64, max_samples);
    let coeffs = Coefficients::with_axis_rod(map, &problem.walls, m, dt, axis_rod);
    let (sources, probes) = place(map, &coeffs, o.sources, o.probes);
    if sources.is_empty() {
        return Err(SolverError::Placement { m, what: "sources" });
    }
    if probes.is_empty() {
        return Err(SolverError::Placement { m, what: "probes" });
    }
    let g = &map.grid;
    let nodes = 6 * (g.nr + 1) * (g.nz + 1);
    // Fields (six arrays), the E coefficient arrays (three), the material
    // map of the three E components (two f64 and a flag per node), the
    // absorber's auxiliary fields (at most two per component in the
    // absorber cells), probe signals; the stability analysis' Lanczos
    // vectors are freed before the run starts.
    let (ao, ab, at) = (
        problem.walls.outer.cells(),
        problem.walls.bottom.cells(),
        problem.walls.top.cells(),
    );
    let absorber_nodes = 6 * ((ao + 1) * (g.nz + 1) + (ab + at + 2) * (g.nr + 1)).min(nodes / 6);
    let base_bytes = 8 * (nodes + nodes / 2)
        + 17 * (nodes / 2)
        + 16 * absorber_nodes
        + 8 * probes.len() * max_samples;
    let mode_field_bytes = 16 * nodes;
    let max_mode_fields = o
        .max_mode_fields
        .min(crate::modefield::MAX_BYTES / mode_field_bytes.max(1))
        .max(1);
    let mut memory_bytes = base_bytes + max_mode_fields * mode_field_bytes;
    // The fields at every sample up to the last scout check that fits both
    // their own cap and the run's (six real arrays each): a wide band's
    // first scout may find nothing yet.
    let fits = |n: usize| {
        let b = n * 8 * nodes;
        b <= EARLY_MAX_BYTES && memory_bytes + b <= o.max_memory
    };
    let early_samples = scouts(first_check)
        .into_iter()
        .filter(|&n| fits(n))
        .max()
        .unwrap_or(0);
    let early_bytes = early_samples * 8 * nodes;
    memory_bytes += early_bytes;
    if memory_bytes > o.max_memory {
        return Err(SolverError::TooMuchMemory {
            m,
            need_mib: memory_bytes as f64 / 1048576.0,
            cap_mib: o.max_memory as f64 / 1048576.0,
        });
    }
    Ok(RunPlan {
        m,
        axis_rod,
        stability,
        dt,
        pulse,
        source_steps,
        decimation,
        sample_dt,
        first_check,
        check_growth: o.check_growth,
        max_samples,
        max_steps: source_steps + max_samples * decimation,
        sources,
        probes,
        f_min,
        f_max,
        memory_bytes,
        base_bytes,
        mode_field_bytes,
        max_mode_fields,
        early_samples,
        early_bytes,
    })
}
