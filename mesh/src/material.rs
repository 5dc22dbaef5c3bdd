//! Materials and bodies.
use crate::Shape;

/// What a body is made of.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Material {
    /// A lossless or lossy dielectric.
    Dielectric {
        /// Relative permittivity ε_r (≥ 1).
        eps_r: f64,
        /// Loss tangent tan δ (≥ 0); the engine of this release models
        /// lossless dielectrics only and ignores it.
        loss_tangent: f64,
    },
    /// A perfect electric conductor: tangential E vanishes on and inside it.
    Pec,
}

/// A shape filled with a material. Later bodies override earlier ones where
/// they overlap.
#[derive(Debug, Clone, PartialEq)]
pub struct Body {
    /// The profile.
    pub shape: Shape,
    /// The filling.
    pub material: Material,
}
