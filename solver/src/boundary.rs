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
//! Absorbing walls (PML) will be added as another variant with their own
//! auxiliary fields, applied as a correction pass after the bulk update.

/// Wall on a z plane.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ZWall {
    /// Perfect electric conductor.
    Pec,
    /// Perfect magnetic conductor (symmetry plane).
    Pmc,
}

/// Wall on the outer radius.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OuterWall {
    /// Perfect electric conductor.
    Pec,
}

/// The three walls of the region.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Walls {
    /// At z = z_min.
    pub bottom: ZWall,
    /// At z = z_max.
    pub top: ZWall,
    /// At r = radius.
    pub outer: OuterWall,
}

impl ZWall {
    /// Name as in scenario files.
    pub fn name(self) -> &'static str {
        match self {
            ZWall::Pec => "pec",
            ZWall::Pmc => "pmc",
        }
    }
}

impl OuterWall {
    /// Name as in scenario files.
    pub fn name(self) -> &'static str {
        match self {
            OuterWall::Pec => "pec",
        }
    }
}
