//! Errors of grid construction and material filling.
use thiserror::Error;

/// What can go wrong when a grid is laid or bodies are put on it.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum MeshError {
    /// A length that must be positive and finite is not.
    #[error("{what} must be a positive finite length, got {value} m")]
    BadLength {
        /// Which length.
        what: &'static str,
        /// The value given, in metres.
        value: f64,
    },
    /// The grid would have more cells than allowed.
    #[error("the grid would have {nr} × {nz} cells, more than the limit of {limit}")]
    TooManyCells {
        /// Radial cells.
        nr: usize,
        /// Axial cells.
        nz: usize,
        /// The limit.
        limit: usize,
    },
}
