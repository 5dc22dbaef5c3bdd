//! Physical constants (SI, CODATA 2018).

/// Speed of light in vacuum, m/s (exact by definition of the metre).
pub const C0: f64 = 299_792_458.0;
/// Vacuum permeability, H/m (CODATA 2018: 1.256 637 062 12 × 10⁻⁶).
pub const MU0: f64 = 1.256_637_062_12e-6;
/// Vacuum permittivity, F/m, from ε0 = 1/(μ0 c0²).
pub const EPS0: f64 = 1.0 / (MU0 * C0 * C0);
/// Impedance of free space, Ω, η0 = μ0 c0.
pub const ETA0: f64 = MU0 * C0;
