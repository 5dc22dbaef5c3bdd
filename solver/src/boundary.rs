//! Boundary conditions on the edges of the (r, z) region.
//!
//! The axis r = 0 is never a boundary: its rules come from regularity and
//! live in the kernel. The other three edges each carry a wall:
//!
//! - **PEC** (perfect electric conductor): tangential E = 0. The electric
//!   nodes on the wall are held at zero; the normal H node there then stays
//!   zero by Faraday's law.
//! - **PMC** (perfect magnetic conductor, a symmetry plane on which the
//!   field is even in E-tangential): tangential H = 0. Tangential H sits half
//!   a cell inside, so the Ampère update of the tangential E nodes on the
//!   plane uses the odd image H(−Δz/2) = −H(+Δz/2); their control volume is
//!   the half cell inside the region mirrored, which is why the fill of
//!   `lathe-mesh` clips dual cells at the region edge.
//!
//! - **PML** (perfectly matched layer): the outermost cells of the grid are
//!   an absorber, terminated by PEC. It is a complex stretching of the
//!   coordinate normal to the wall, applied as a correction pass after the
//!   bulk update ([`crate::pml`]); the grid handed to the solver already
//!   includes the absorber's cells.

/// A perfectly matched layer: thickness and grading.
///
/// Conductivity profile σ(x) = σ_max x^order over the depth fraction
/// x ∈ [0, 1], with σ_max = −(order+1) ln(reflection) / (2 η0 d) so that a
/// wave crossing the layer twice at normal incidence is attenuated to
/// `reflection` (d = cells × step); on the outer radius the layer is graded
/// for `reflection`² (twice σ_max), where with its second-order recursion
/// it reflects least (`crate::pml`, `RADIAL_GRADING`). A constant complex-frequency shift
/// α = 2π ε0 `shift_hz` keeps the layer from absorbing quasi-static fields
/// that never leave (Kuzuoglu & Mittra, IEEE MGWL 6(12), 1996).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Absorber {
    /// Layer thickness in cells.
    pub cells: usize,
    /// Polynomial grading order.
    pub order: f64,
    /// Design reflection at normal incidence.
    pub reflection: f64,
    /// Frequency shift α/(2π ε0), Hz.
    pub shift_hz: f64,
}

impl Absorber {
    /// The default layer: 16 cells, cubic grading, design reflection 1e-8,
    /// shift one tenth of `f_min` (measured reflection: solver/tests/pml_reflection.rs).
    pub fn default_for(f_min: f64) -> Absorber {
        Absorber {
            cells: 16,
            order: 3.0,
            reflection: 1e-8,
            shift_hz: 0.1 * f_min,
        }
    }
}

/// Wall on a z plane.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ZWall {
    /// Perfect electric conductor.
    Pec,
    /// Perfect magnetic conductor (symmetry plane).
    Pmc,
    /// Absorber of the given cells (inside the grid), then PEC.
    Pml(Absorber),
}

/// Wall on the outer radius.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum OuterWall {
    /// Perfect electric conductor.
    Pec,
    /// Absorber of the given cells (inside the grid), then PEC.
    Pml(Absorber),
}

/// The three walls of the region.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Walls {
    /// At z = z_min.
    pub bottom: ZWall,
    /// At z = z_max.
    pub top: ZWall,
    /// At r = radius.
    pub outer: OuterWall,
}

impl ZWall {
    /// Absorber thickness in cells (0 for a PEC or PMC wall).
    pub fn cells(self) -> usize {
        match self {
            ZWall::Pml(a) => a.cells,
            _ => 0,
        }
    }

    /// The wall's name in scenario files.
    pub fn name(self) -> &'static str {
        match self {
            ZWall::Pec => "pec",
            ZWall::Pmc => "pmc",
            ZWall::Pml(_) => "pml",
        }
    }
}

impl ZWall {
    /// Whether the grid edge behind this wall is held at zero (PEC, or the
    /// PEC that terminates an absorber).
    pub fn is_conducting(self) -> bool {
        !matches!(self, ZWall::Pmc)
    }

    /// The absorber, if any.
    pub fn absorber(self) -> Option<Absorber> {
        match self {
            ZWall::Pml(a) => Some(a),
            _ => None,
        }
    }
}

impl OuterWall {
    /// The absorber, if any.
    pub fn absorber(self) -> Option<Absorber> {
        match self {
            OuterWall::Pml(a) => Some(a),
            OuterWall::Pec => None,
        }
    }

    /// Absorber thickness in cells (0 for a PEC wall).
    pub fn cells(self) -> usize {
        match self {
            OuterWall::Pml(a) => a.cells,
            OuterWall::Pec => 0,
        }
    }

    /// The wall's name in scenario files.
    pub fn name(self) -> &'static str {
        match self {
            OuterWall::Pec => "pec",
            OuterWall::Pml(_) => "pml",
        }
    }
}
