//! Errors of planning and running.
use crate::harminv::HarminvError;
use thiserror::Error;

/// What can stop a run. Messages say which run (azimuthal order) and why.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum SolverError {
    /// The band is not a positive interval.
    #[error("the band [{f_min} Hz, {f_max} Hz] is not an interval 0 < f_min < f_max")]
    BadBand {
        /// Lower edge, Hz.
        f_min: f64,
        /// Upper edge, Hz.
        f_max: f64,
    },
    /// Every electric node is held at zero.
    #[error(
        "run m = {m}: every electric node is held at zero (all metal, or, for m ≥ 2, a grid no wider than the ⌊m/2⌋ cells held at the axis)"
    )]
    NothingToSolve {
        /// Order.
        m: u32,
    },
    /// No source or probe point could be placed.
    #[error("run m = {m}: could not place {what}: no free electric node found")]
    Placement {
        /// Order.
        m: u32,
        /// "sources" or "probes".
        what: &'static str,
    },
    /// Field energy grew after the source stopped.
    #[error(
        "run m = {m}: unstable: field energy grew to {ratio:.3e} times its value when the source stopped (step {step}, t = {time_s:.4e} s)"
    )]
    Unstable {
        /// Order.
        m: u32,
        /// Time step index.
        step: usize,
        /// Time, s.
        time_s: f64,
        /// Energy ratio.
        ratio: f64,
    },
    /// A field value became NaN or infinite.
    #[error("run m = {m}: fields became non-finite at step {step} (t = {time_s:.4e} s)")]
    NonFinite {
        /// Order.
        m: u32,
        /// Time step index.
        step: usize,
        /// Time, s.
        time_s: f64,
    },
    /// Harmonic inversion failed.
    #[error("run m = {m}: harmonic inversion failed: {source}")]
    Harminv {
        /// Order.
        m: u32,
        /// The estimator's error.
        source: HarminvError,
    },
    /// The planned run would need more memory than allowed.
    #[error("run m = {m}: needs about {need_mib:.0} MiB, above its memory cap of {cap_mib:.0} MiB (raise the cap with --max-memory, or coarsen the grid with region.cell or region.cells_per_wavelength)")]
    TooMuchMemory {
        /// Order.
        m: u32,
        /// Estimated need, MiB.
        need_mib: f64,
        /// Cap, MiB.
        cap_mib: f64,
    },
}
