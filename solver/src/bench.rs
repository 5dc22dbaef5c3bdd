//! Measuring this machine's stepping rate, for run-time estimates and for
//! sizing sweeps.
//!
//! [`step_rate`] times the full leapfrog step of a problem — H and E
//! updates, absorber corrections, the same coefficients a run uses — on
//! scratch fields, in the calling thread pool (so a rayon pool of n threads
//! measures n threads, its rows split over a [`crate::team::Team`]).
//! Nothing of a run is stepped; the figure is cell updates per second, the
//! unit of `cell_updates` in every report.
use crate::coefficients::Coefficients;
use crate::fields::Fields;
use crate::fpu::FlushSubnormals;
use crate::plan::Problem;
use crate::pml::Pml;
use std::time::Instant;

/// Steps taken at once by [`step_rate`] (a run steps in stretches of up to
/// 64, to its next probe sample or energy check).
const STRETCH: usize = 16;

/// Cell updates per second of the full step of `problem` at order `m` and
/// time step `dt`, timed over at least `min_seconds` (and at least three
/// steps) after one warm-up step. Run inside a rayon pool to measure that
/// pool's thread count. Wall-clock based: a loaded machine measures slower.
pub fn step_rate(problem: &Problem, m: u32, dt: f64, min_seconds: f64) -> f64 {
    let map = &problem.materials;
    let g = &map.grid;
    let mut coeffs = Coefficients::new(map, &problem.walls, m, dt);
    coeffs.row_parallel = problem.options.splits_rows(g.cells());
    crate::team::with_team(coeffs.row_parallel, |team| {
        let _ftz = FlushSubnormals::new();
        let mut f = Fields::zeros(g);
        // A non-zero start so every branch of the arithmetic is exercised
        // (values far above the subnormal range; they stay bounded for the
        // few steps taken since dt is within the stability limit).
        for (k, x) in f.ez.iter_mut().enumerate() {
            *x = 1e-3 * ((k % 97) as f64);
        }
        let mut pml = Pml::new(g, &problem.walls, dt);
        // Steps in stretches of `STRETCH`, as a run takes them between two
        // probe samples.
        let mut steps_on =
            |f: &mut Fields, n: usize| crate::kernel::steps_on(f, &coeffs, pml.as_mut(), team, n);
        steps_on(&mut f, 1);
        let start = Instant::now();
        let mut steps = 0u64;
        while steps < 3 || start.elapsed().as_secs_f64() < min_seconds {
            steps_on(&mut f, STRETCH);
            steps += STRETCH as u64;
        }
        let t = start.elapsed().as_secs_f64().max(1e-9);
        steps as f64 * g.cells() as f64 / t
    })
}
