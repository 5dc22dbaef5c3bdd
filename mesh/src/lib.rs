//! `lathe-mesh`: the geometry side of lathe.
//!
//! A structure of revolution is described in the (r, z) half-plane r ≥ 0 by
//! [`Body`]s — a [`Shape`] filled with a [`Material`] — on a vacuum
//! background. This crate turns bodies into what the FDTD engine needs: a
//! uniform staggered [`Grid`] and, for every electric-field node, the
//! effective relative permittivity of its control volume or the fact that the
//! node lies in metal ([`MaterialMap`], built by [`fill`]).
//!
//! # Conventions
//! - Units are SI (metres) throughout this crate; millimetres exist only in
//!   the scenario reader of the `lathe` package.
//! - Index `i` counts radial positions from the axis, `j` axial positions
//!   from `z_min`. Integer positions are `r_i = i·Δr`, `z_j = z_min + j·Δz`;
//!   half-integer positions sit midway. Where each field component lives is
//!   listed in [`Component`].
//! - The solver knows nothing of shapes: it sees only the grid and the
//!   material map. The mesh knows nothing of the solver.
#![deny(missing_docs)]

mod error;
mod fill;
mod grid;
mod material;
mod shape;

pub use error::MeshError;
pub use fill::{fill, FillOptions, MaterialMap};
pub use grid::{Component, Grid};
pub use material::{Body, Material};
pub use shape::{Overlap, Shape};
