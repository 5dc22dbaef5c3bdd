//! `lathe-solver`: body-of-revolution FDTD for the resonances of
//! rotationally symmetric structures, and harmonic inversion of the
//! ring-down.
//!
//! For a structure invariant under rotation about z, Maxwell's equations
//! split into azimuthal orders m = 0, 1, 2, … that do not couple. For each
//! order the fields are real (r, z) coefficients,
//!
//! ```text
//! E_r, E_z, H_φ = e_r, e_z, h_φ (r, z, t) · cos mφ
//! E_φ, H_r, H_z = e_φ, h_r, h_z (r, z, t) · sin mφ
//! ```
//!
//! (the other polarisation, rotated by 90°/m, is degenerate with it for
//! m ≥ 1). A run advances them in time on a staggered grid
//! ([`kernel`]), rings the structure with a broadband pulse from several
//! points ([`excitation`]), records several probes, and turns the ring-down
//! into frequencies and Q ([`harminv`], [`modes`]).
//!
//! # Conventions
//! - **Units**: SI everywhere in this crate (m, s, Hz, V/m, A/m).
//! - **Grid**: uniform Δr, Δz (they may differ); the component positions are
//!   tabulated in [`lathe_mesh::Component`]. The axis is r = 0 and is
//!   treated by regularity rules, see [`kernel`].
//! - **Time**: leapfrog; H lives at half steps, E at whole steps. Δt is the
//!   stability limit of the actual discrete operator (computed, see
//!   [`stability`]) times a safety factor ([`RunOptions::dt_safety`]).
//! - **Complex frequency**: a mode rings as e^{−γt} cos(2πft + φ); harmonic
//!   inversion uses the signal model c_n = Σ d_k e^{−iω_k nΔt} with
//!   ω = 2πf − iγ ([`harminv`]).
//! - **Q** = ω_r W / P = πf/γ, with γ the decay rate of the *field*
//!   amplitude (energy decays at 2γ).
//! - **Frequencies reported** are corrected for the leapfrog's own
//!   dispersion (see [`modes`]), so the remaining error is that of the
//!   spatial discretisation, second order in the cell size.
#![deny(missing_docs)]

pub mod bench;
pub mod boundary;
pub mod coefficients;
pub mod consts;
pub mod error;
pub mod exact;
pub mod excitation;
pub mod farfield;
pub mod fields;
pub mod fpu;
pub mod harminv;
pub mod kernel;
pub mod modefield;
pub mod modes;
pub mod plan;
pub mod pml;
pub mod run;
mod skew;
pub mod stability;
pub mod team;

pub use boundary::{Absorber, OuterWall, Walls, ZWall};
pub use error::SolverError;
pub use fields::Fields;
pub use modefield::ModeField;
pub use modes::Mode;
pub use plan::{plan, Problem, RunOptions, RunPlan};
pub use run::{
    run, run_with, solve, solve_each_with, solve_with, Progress, RunOutput, RunReport, Silent,
};
pub use stability::{stability_limit, StabilityLimit};
