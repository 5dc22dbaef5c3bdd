//! Storage of the six field components of one azimuthal order.
use lathe_mesh::{Component, Grid};

/// The six real field coefficients on the staggered grid (see
/// [`lathe_mesh::Component`] for where each sits). E in V/m, H in A/m.
/// Each array is row-major in `i` (radius) with `j` (z) contiguous.
#[derive(Debug, Clone)]
pub struct Fields {
    /// Radial cells.
    pub nr: usize,
    /// Axial cells.
    pub nz: usize,
    /// E_r, nr × (nz+1).
    pub er: Vec<f64>,
    /// E_φ, (nr+1) × (nz+1).
    pub ephi: Vec<f64>,
    /// E_z, (nr+1) × nz.
    pub ez: Vec<f64>,
    /// H_r, (nr+1) × nz.
    pub hr: Vec<f64>,
    /// H_φ, nr × nz.
    pub hphi: Vec<f64>,
    /// H_z, nr × (nz+1).
    pub hz: Vec<f64>,
    /// Work space of the E half step: the curls the off-diagonal coupling
    /// reads (sized at the first step that needs it; not a field).
    pub(crate) curls: Vec<f64>,
}

/// Equal when the six components (and the grid size) are.
impl PartialEq for Fields {
    fn eq(&self, o: &Fields) -> bool {
        (self.nr, self.nz) == (o.nr, o.nz)
            && Component::ALL.iter().all(|&c| self.get(c) == o.get(c))
    }
}

impl Fields {
    /// All-zero fields on `grid`.
    pub fn zeros(grid: &Grid) -> Fields {
        let n = |c: Component| {
            let (a, b) = c.shape(grid);
            vec![0.0; a * b]
        };
        Fields {
            nr: grid.nr,
            nz: grid.nz,
            er: n(Component::Er),
            ephi: n(Component::Ephi),
            ez: n(Component::Ez),
            hr: n(Component::Hr),
            hphi: n(Component::Hphi),
            hz: n(Component::Hz),
            curls: Vec::new(),
        }
    }

    /// The array of component `c`.
    pub fn get(&self, c: Component) -> &[f64] {
        match c {
            Component::Er => &self.er,
            Component::Ephi => &self.ephi,
            Component::Ez => &self.ez,
            Component::Hr => &self.hr,
            Component::Hphi => &self.hphi,
            Component::Hz => &self.hz,
        }
    }

    /// The array of component `c`, mutable.
    pub fn get_mut(&mut self, c: Component) -> &mut [f64] {
        match c {
            Component::Er => &mut self.er,
            Component::Ephi => &mut self.ephi,
            Component::Ez => &mut self.ez,
            Component::Hr => &mut self.hr,
            Component::Hphi => &mut self.hphi,
            Component::Hz => &mut self.hz,
        }
    }

    /// Row length (entries in j) of component `c`.
    pub fn row_len(&self, c: Component) -> usize {
        let (_, zh) = c.staggering();
        if zh {
            self.nz
        } else {
            self.nz + 1
        }
    }

    /// Copies the six components of `other` (same grid) into these arrays,
    /// without allocating.
    pub fn copy_from(&mut self, other: &Fields) {
        for c in Component::ALL {
            self.get_mut(c).copy_from_slice(other.get(c));
        }
    }

    /// Sets every entry to zero.
    pub fn clear(&mut self) {
        for c in Component::ALL {
            self.get_mut(c).fill(0.0);
        }
    }

    /// Bytes held.
    pub fn bytes(&self) -> usize {
        Component::ALL.iter().map(|&c| self.get(c).len() * 8).sum()
    }
}
