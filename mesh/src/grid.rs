//! The uniform staggered (r, z) grid and where each field component sits.
use crate::MeshError;

/// A uniform Yee grid on the rectangle `0 ≤ r ≤ nr·dr`, `z0 ≤ z ≤ z0 + nz·dz`.
///
/// `dr` and `dz` may differ. The outer radius and both z planes lie on
/// integer grid lines, so boundary conditions apply exactly there.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// Number of radial cells.
    pub nr: usize,
    /// Number of axial cells.
    pub nz: usize,
    /// Radial step in metres.
    pub dr: f64,
    /// Axial step in metres.
    pub dz: f64,
    /// z of the bottom plane in metres.
    pub z0: f64,
}

/// Largest grid [`Grid::new`] accepts (cells), a guard against typing errors.
pub const MAX_CELLS: usize = 200_000_000;

impl Grid {
    /// Lays a grid over `[0, radius] × [z_min, z_max]` with steps no larger
    /// than `cell`: each extent is divided into the smallest whole number of
    /// equal steps not exceeding `cell` (a relative slack of 1e-9 keeps a
    /// `radius` that is a multiple of `cell` from gaining a sliver cell).
    pub fn new(radius: f64, z_min: f64, z_max: f64, cell: f64) -> Result<Grid, MeshError> {
        positive("radius", radius)?;
        positive("cell", cell)?;
        positive("z_max − z_min", z_max - z_min)?;
        if !z_min.is_finite() {
            return Err(MeshError::BadLength {
                what: "z_min",
                value: z_min,
            });
        }
        let count = |len: f64| ((len / cell) * (1.0 - 1e-9)).ceil().max(1.0);
        let (nr, nz) = (count(radius), count(z_max - z_min));
        if nr * nz > MAX_CELLS as f64 {
            return Err(MeshError::TooManyCells {
                nr: nr.min(usize::MAX as f64) as usize,
                nz: nz.min(usize::MAX as f64) as usize,
                limit: MAX_CELLS,
            });
        }
        let (nr, nz) = (nr as usize, nz as usize);
        Ok(Grid {
            nr,
            nz,
            dr: radius / nr as f64,
            dz: (z_max - z_min) / nz as f64,
            z0: z_min,
        })
    }

    /// Outer radius `nr·dr`.
    pub fn radius(&self) -> f64 {
        self.nr as f64 * self.dr
    }

    /// Top plane `z0 + nz·dz`.
    pub fn z_top(&self) -> f64 {
        self.z0 + self.nz as f64 * self.dz
    }

    /// Number of Yee cells, `nr·nz` (what cell-update counts are made of).
    pub fn cells(&self) -> usize {
        self.nr * self.nz
    }

    /// Radius of integer radial index `i`: `i·dr`.
    pub fn r_int(&self, i: usize) -> f64 {
        i as f64 * self.dr
    }

    /// Radius of half-integer radial index `i + ½`.
    pub fn r_half(&self, i: usize) -> f64 {
        (i as f64 + 0.5) * self.dr
    }

    /// z of integer axial index `j`.
    pub fn z_int(&self, j: usize) -> f64 {
        self.z0 + j as f64 * self.dz
    }

    /// z of half-integer axial index `j + ½`.
    pub fn z_half(&self, j: usize) -> f64 {
        self.z0 + (j as f64 + 0.5) * self.dz
    }
}

fn positive(what: &'static str, value: f64) -> Result<(), MeshError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(MeshError::BadLength { what, value })
    }
}

/// The six field components of one azimuthal order and their place on the
/// staggered grid.
///
/// | component | r position | z position | array shape |
/// |---|---|---|---|
/// | `Er`   | (i + ½)Δr | jΔz       | nr × (nz+1) |
/// | `Ephi` | iΔr       | jΔz       | (nr+1) × (nz+1) |
/// | `Ez`   | iΔr       | (j + ½)Δz | (nr+1) × nz |
/// | `Hr`   | iΔr       | (j + ½)Δz | (nr+1) × nz |
/// | `Hphi` | (i + ½)Δr | (j + ½)Δz | nr × nz |
/// | `Hz`   | (i + ½)Δr | jΔz       | nr × (nz+1) |
///
/// Every component is co-located with the components its curl equation
/// needs, so each update is a centred difference. `Ephi`, `Ez` and `Hr`
/// have nodes on the axis `i = 0`; `Er`, `Ephi`, `Hz` have nodes on the z
/// planes `j = 0, nz`; `Ephi`, `Ez`, `Hr` on the outer radius `i = nr`.
/// Arrays are stored row by row in `i`, with `j` contiguous.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Component {
    /// Radial electric field.
    Er,
    /// Azimuthal electric field.
    Ephi,
    /// Axial electric field.
    Ez,
    /// Radial magnetic field.
    Hr,
    /// Azimuthal magnetic field.
    Hphi,
    /// Axial magnetic field.
    Hz,
}

impl Component {
    /// All six, electric first.
    pub const ALL: [Component; 6] = [
        Component::Er,
        Component::Ephi,
        Component::Ez,
        Component::Hr,
        Component::Hphi,
        Component::Hz,
    ];

    /// Whether the component sits at half-integer radius, and at
    /// half-integer z.
    pub fn staggering(self) -> (bool, bool) {
        match self {
            Component::Er | Component::Hz => (true, false),
            Component::Ephi => (false, false),
            Component::Ez | Component::Hr => (false, true),
            Component::Hphi => (true, true),
        }
    }

    /// Array shape `(rows in i, entries in j)` on `grid`.
    pub fn shape(self, grid: &Grid) -> (usize, usize) {
        let (rh, zh) = self.staggering();
        (
            if rh { grid.nr } else { grid.nr + 1 },
            if zh { grid.nz } else { grid.nz + 1 },
        )
    }

    /// Position `(r, z)` in metres of node `(i, j)`.
    pub fn position(self, grid: &Grid, i: usize, j: usize) -> (f64, f64) {
        let (rh, zh) = self.staggering();
        (
            if rh { grid.r_half(i) } else { grid.r_int(i) },
            if zh { grid.z_half(j) } else { grid.z_int(j) },
        )
    }

    /// Short name as printed in plans and files (`Er`, `Ephi`, …).
    pub fn name(self) -> &'static str {
        match self {
            Component::Er => "Er",
            Component::Ephi => "Ephi",
            Component::Ez => "Ez",
            Component::Hr => "Hr",
            Component::Hphi => "Hphi",
            Component::Hz => "Hz",
        }
    }

    /// True for the electric components.
    pub fn is_electric(self) -> bool {
        matches!(self, Component::Er | Component::Ephi | Component::Ez)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_divide_extents_exactly() {
        let g = Grid::new(10e-3, 0.0, 20e-3, 0.25e-3).unwrap();
        assert_eq!((g.nr, g.nz), (40, 80));
        assert!((g.dr - 0.25e-3).abs() < 1e-18);
        let g = Grid::new(10e-3, -1e-3, 2.3e-3, 0.3e-3).unwrap();
        assert_eq!(g.nr, 34);
        assert!(g.dr <= 0.3e-3 && (g.radius() - 10e-3).abs() < 1e-15);
        assert_eq!(g.nz, 11);
        assert!((g.z_top() - 2.3e-3).abs() < 1e-15);
    }

    #[test]
    fn bad_lengths_are_errors() {
        assert!(Grid::new(-1.0, 0.0, 1.0, 0.1).is_err());
        assert!(Grid::new(1.0, 0.0, 1.0, f64::NAN).is_err());
        assert!(Grid::new(1.0, 1.0, 1.0, 0.1).is_err());
        assert!(matches!(
            Grid::new(1.0, 0.0, 1.0, 1e-6),
            Err(MeshError::TooManyCells { .. })
        ));
    }

    #[test]
    fn shapes_follow_the_table() {
        let g = Grid::new(1.0, 0.0, 2.0, 0.5).unwrap();
        assert_eq!(Component::Er.shape(&g), (2, 5));
        assert_eq!(Component::Ephi.shape(&g), (3, 5));
        assert_eq!(Component::Ez.shape(&g), (3, 4));
        assert_eq!(Component::Hphi.shape(&g), (2, 4));
        assert_eq!(Component::Hphi.position(&g, 1, 2), (0.75, 1.25));
    }
}
