//! Exact reference answers for validating the FDTD engine: Bessel functions
//! and their zeros ([`bessel`]) and the closed-form resonances of a circular
//! cylinder cavity built from them ([`cavity`]).

pub mod bessel;
pub mod cavity;

pub use bessel::{
    bessel_j, bessel_j_prime, bessel_j_prime_zeros, bessel_j_prime_zeros_below, bessel_j_zeros,
    bessel_j_zeros_below,
};
pub use cavity::{cylinder_cavity_modes, CavityMode, EndWall, Family};
pub mod sphere;
pub use sphere::{sphere_mode, SphereFamily, SphereMode};
