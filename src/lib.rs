//! **lathe** computes the resonances — frequency and Q — of rotationally
//! symmetric electromagnetic structures: dielectric resonators in metal
//! enclosures, cavities, isolated resonators, and dielectric-resonator
//! antennas on ground planes. For each azimuthal order m the 3D problem is
//! a 2D problem in (r, z), solved by body-of-revolution FDTD; frequencies
//! and Q come from harmonic inversion of the ring-down, each mode's field
//! from a running transform, and for open structures its radiation
//! (directivity, cuts, Q from energy and power) from a near-to-far-field
//! transformation.
//!
//! This crate is the facade: it re-exports the geometry crate ([`mesh`])
//! and the solver ([`solver`]), and adds the scenario reader
//! ([`scenario`]), studies over symmetry halves ([`study`]), result output
//! ([`output`], [`fieldfile`], [`plots`]), radiation ([`radiation`]),
//! dielectric loss ([`loss`]) and the rest of what the `lathe` command
//! uses. `examples/api.rs` builds a scenario in code instead of parsing
//! one, and reads a mode's field.
//!
//! ```
//! use lathe::scenario::Scenario;
//!
//! // A dielectric puck (ε_r 9.4) on the floor of a closed copper can,
//! // searched for its m = 0 modes between 10 and 14 GHz.
//! let text = r#"
//!     [region]
//!     radius = 7.3
//!     z_min = 0.0
//!     z_max = 9.1
//!     cell = 0.35
//!     [[body]]
//!     shape = "cylinder"
//!     radius = 3.1
//!     height = 2.6
//!     base = 0.0
//!     eps_r = 9.4
//!     [search]
//!     m = [0]
//!     f_min = 10.0
//!     f_max = 14.0
//! "#;
//! let scenario = Scenario::parse(text, "puck.toml").unwrap();
//! let problem = scenario.problem().unwrap();
//! let runs = lathe::solver::solve(&problem, &scenario.m).unwrap();
//! for mode in &runs[0].modes {
//!     println!("m = {}  f = {:.4} GHz  Q ≥ {:.2e}", mode.m, mode.freq_hz / 1e9, mode.q);
//! }
//! assert!(!runs[0].modes.is_empty());
//! ```
#![deny(missing_docs)]

pub mod fieldfile;
pub mod formulas;
pub mod loss;
pub mod output;
pub mod plots;
pub mod progress;
pub mod radiation;
pub mod reference;
pub mod refine;
pub mod scenario;
pub mod study;

pub use lathe_mesh as mesh;
pub use lathe_solver as solver;
