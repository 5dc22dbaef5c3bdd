//! A mode's field moved from its staggered Yee positions to the cell
//! centres, and the quantities the pictures show.
//!
//! The solver keeps each component on its own node (see
//! [`lathe_mesh::Component`]); a picture needs all six at one place. Cell
//! (i, j) has its centre at r = (i + ½)Δr, z = z0 + (j + ½)Δz; each
//! component is carried there by the mean of its nearest nodes — two for
//! E_r, E_z, H_r, H_z (one step apart), four for E_φ, none for H_φ (already
//! centred). The mean of two neighbours is the linear interpolant, accurate
//! to O(Δ²) in smooth regions; at a material or metal surface it smears a
//! jump over half a cell, which a picture does not mind.
//!
//! For m = 1 the solver stores E_φ and H_r on the axis only in its final
//! fields (`lathe_solver::kernel::fill_axis`), not in the mode's running
//! transform, so the same rule is applied here: e_φ(0) = −e_r(0),
//! h_r(0) = h_φ(0), with e_r and h_φ extrapolated to r = 0 from their even
//! extension, f(0) ≈ (9 f(½Δr) − f(3/2 Δr))/8.
//!
//! Phasors follow the crate's convention u(t) = Re{U e^{jωt}}; azimuthal
//! dependence E_r, E_z, H_φ ∝ cos mφ and E_φ, H_r, H_z ∝ sin mφ.
use super::PlotError;
use lathe_mesh::{Component, Grid};
use lathe_solver::{ModeField, ZWall};
use num_complex::Complex64;

/// Which field a picture shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FieldKind {
    /// The electric field E.
    Electric,
    /// The magnetic field H.
    Magnetic,
}

impl FieldKind {
    /// The (radial, azimuthal, axial) components of this field.
    pub fn components(self) -> [Component; 3] {
        match self {
            FieldKind::Electric => [Component::Er, Component::Ephi, Component::Ez],
            FieldKind::Magnetic => [Component::Hr, Component::Hphi, Component::Hz],
        }
    }

    /// "E" or "H".
    pub fn symbol(self) -> &'static str {
        match self {
            FieldKind::Electric => "E",
            FieldKind::Magnetic => "H",
        }
    }
}

/// Which part of the field sets the colour of a map.
///
/// Each is an amplitude envelope: every component is taken at its own
/// largest value over time (the phasor modulus |U|) and, for m ≥ 1, over
/// the azimuth (the peak of its cos mφ or sin mφ), then combined.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shown {
    /// √(|U_r|² + |U_φ|² + |U_z|²): all three components. For m ≥ 1 this
    /// counts E_φ (or H_φ), which peaks at the azimuth φ = π/(2m) where the
    /// in-plane components vanish, so it is the envelope over φ, not the
    /// field in any one plane. At m = 0 it is |U| itself.
    Total,
    /// √(|U_r|² + |U_z|²): the components in the (r, z) plane, as they are
    /// in the meridian plane φ = 0 for E (cos mφ) or φ = π/(2m) for H at
    /// m ≥ 1 (sin mφ).
    InPlane,
    /// |U_φ| alone, at the azimuth where it peaks.
    Azimuthal,
}

impl Shown {
    /// A short description for titles, e.g. "|E| of Er, Eφ, Ez".
    pub fn describe(self, kind: FieldKind) -> String {
        let f = kind.symbol();
        match self {
            Shown::Total => format!("|{f}| of {f}r, {f}φ, {f}z"),
            Shown::InPlane => format!("|{f}| of {f}r, {f}z"),
            Shown::Azimuthal => format!("|{f}φ|"),
        }
    }
}

/// The six components of a mode at the cell centres of its grid.
#[derive(Debug, Clone, PartialEq)]
pub struct CentredField {
    /// Cells along r.
    pub nr: usize,
    /// Cells along z.
    pub nz: usize,
    /// Radial step, m.
    pub dr: f64,
    /// Axial step, m.
    pub dz: f64,
    /// z of the lattice's lower edge, m (cell j has its centre at
    /// z0 + (j + ½)Δz).
    pub z0: f64,
    /// Azimuthal order.
    pub m: u32,
    /// Components in the order of [`Component::ALL`], each `nr·nz` long,
    /// row by row in i with j contiguous.
    pub components: Vec<Vec<Complex64>>,
}

impl CentredField {
    /// Moves `field` (solved on `grid` at order `m`) to the cell centres.
    ///
    /// Panics if the field's arrays do not have the shapes of `grid` (a
    /// field from another run).
    pub fn new(grid: &Grid, field: &ModeField, m: u32) -> CentredField {
        let (nr, nz) = (grid.nr, grid.nz);
        for c in Component::ALL {
            let (a, b) = c.shape(grid);
            assert_eq!(
                field.get(c).len(),
                a * b,
                "expected a {} array of {a}×{b} for this grid, got {}",
                c.name(),
                field.get(c).len()
            );
        }
        let mut ephi = field.get(Component::Ephi).to_vec();
        let mut hr = field.get(Component::Hr).to_vec();
        if m == 1 {
            let er = field.get(Component::Er);
            let hphi = field.get(Component::Hphi);
            let at0 = |a: Complex64, b: Complex64| {
                if nr >= 2 {
                    (a * 9.0 - b) / 8.0
                } else {
                    a
                }
            };
            let nj1 = nz + 1;
            for j in 0..nj1 {
                let b = if nr >= 2 { er[nj1 + j] } else { er[j] };
                ephi[j] = -at0(er[j], b);
            }
            for j in 0..nz {
                let b = if nr >= 2 { hphi[nz + j] } else { hphi[j] };
                hr[j] = at0(hphi[j], b);
            }
        }
        let centre = |c: Component, v: &[Complex64]| -> Vec<Complex64> {
            let (rh, zh) = c.staggering();
            let len = if zh { nz } else { nz + 1 };
            let at = |i: usize, j: usize| v[i * len + j];
            let mut out = Vec::with_capacity(nr * nz);
            for i in 0..nr {
                for j in 0..nz {
                    let x = match (rh, zh) {
                        (true, true) => at(i, j),
                        (true, false) => (at(i, j) + at(i, j + 1)) * 0.5,
                        (false, true) => (at(i, j) + at(i + 1, j)) * 0.5,
                        (false, false) => {
                            (at(i, j) + at(i + 1, j) + at(i, j + 1) + at(i + 1, j + 1)) * 0.25
                        }
                    };
                    out.push(x);
                }
            }
            out
        };
        let components = Component::ALL
            .iter()
            .map(|&c| match c {
                Component::Ephi => centre(c, &ephi),
                Component::Hr => centre(c, &hr),
                _ => centre(c, field.get(c)),
            })
            .collect();
        CentredField {
            nr,
            nz,
            dr: grid.dr,
            dz: grid.dz,
            z0: grid.z0,
            m,
            components,
        }
    }

    /// The values of component `c`.
    pub fn get(&self, c: Component) -> &[Complex64] {
        let k = Component::ALL
            .iter()
            .position(|&x| x == c)
            .expect("a component");
        &self.components[k]
    }

    /// Centre (r, z) of cell (i, j), m.
    pub fn centre(&self, i: usize, j: usize) -> (f64, f64) {
        (
            (i as f64 + 0.5) * self.dr,
            self.z0 + (j as f64 + 0.5) * self.dz,
        )
    }

    /// The field over the whole structure from a half solved over a
    /// symmetry plane at the lattice's lower edge: the mirror image is
    /// added below it. On a PEC plane tangential E vanishes, so E_r, E_φ
    /// and H_z are odd in z and E_z, H_r, H_φ even; on a PMC plane the
    /// reverse. Any other wall is an error.
    pub fn unfold(&self, plane: ZWall) -> Result<CentredField, PlotError> {
        let pec = match plane {
            ZWall::Pec => true,
            ZWall::Pmc => false,
            ZWall::Pml(_) => {
                return Err(PlotError::Input {
                    what: "symmetry plane".into(),
                    message: "an absorber is not a symmetry plane; expected PEC or PMC".into(),
                })
            }
        };
        let nz2 = 2 * self.nz;
        let components = Component::ALL
            .iter()
            .zip(&self.components)
            .map(|(&c, v)| {
                let odd_on_pec = matches!(c, Component::Er | Component::Ephi | Component::Hz);
                let sign = if odd_on_pec == pec { -1.0 } else { 1.0 };
                let mut out = Vec::with_capacity(self.nr * nz2);
                for i in 0..self.nr {
                    let row = &v[i * self.nz..(i + 1) * self.nz];
                    out.extend(row.iter().rev().map(|x| x * sign));
                    out.extend_from_slice(row);
                }
                out
            })
            .collect();
        Ok(CentredField {
            nz: nz2,
            z0: self.z0 - self.nz as f64 * self.dz,
            components,
            ..self.clone()
        })
    }

    /// The amplitude envelope `shown` of field `kind` at every cell (see
    /// [`Shown`]), V/m or A/m in the solver's arbitrary scale.
    pub fn amplitude(&self, kind: FieldKind, shown: Shown) -> Vec<f64> {
        let [cr, cp, cz] = kind.components();
        let (r, p, z) = (self.get(cr), self.get(cp), self.get(cz));
        (0..self.nr * self.nz)
            .map(|k| match shown {
                Shown::Total => (r[k].norm_sqr() + p[k].norm_sqr() + z[k].norm_sqr()).sqrt(),
                Shown::InPlane => (r[k].norm_sqr() + z[k].norm_sqr()).sqrt(),
                Shown::Azimuthal => p[k].norm(),
            })
            .collect()
    }

    /// The phase ψ = ωt at which the in-plane field of `kind` is strongest
    /// over the cells `inside` accepts (by index): the ψ that maximises
    /// S(ψ) = Σ r·|Re{U e^{jψ}}|² over (U_r, U_z). Since
    /// S = ½Σ r|U|² + ½Re{e^{2jψ} Σ r U²}, the maximum is at
    /// ψ = −½ arg Σ r (U_r² + U_z²). The weight r is the volume of the
    /// ring each cell stands for.
    pub fn strongest_phase(&self, kind: FieldKind, inside: impl Fn(usize, usize) -> bool) -> f64 {
        let [cr, _, cz] = kind.components();
        let (a, b) = (self.get(cr), self.get(cz));
        let mut s = Complex64::new(0.0, 0.0);
        for i in 0..self.nr {
            let r = (i as f64 + 0.5) * self.dr;
            for j in 0..self.nz {
                if inside(i, j) {
                    let k = i * self.nz + j;
                    s += (a[k] * a[k] + b[k] * b[k]) * r;
                }
            }
        }
        -0.5 * s.arg()
    }

    /// The real value Re{U e^{jψ}} of component `c` at every cell.
    pub fn real_at(&self, c: Component, psi: f64) -> Vec<f64> {
        let p = Complex64::from_polar(1.0, psi);
        self.get(c).iter().map(|u| (u * p).re).collect()
    }

    /// Bilinear interpolation of a cell-centred array `v` at (r, z), with
    /// r ≥ 0; outside the outermost centres the nearest centre's value is
    /// kept (so the half cell next to the axis and the edges take their
    /// neighbour's value).
    pub fn sample(&self, v: &[f64], r: f64, z: f64) -> f64 {
        self.lattice().sample(v, r, z)
    }

    /// The lattice's geometry alone.
    pub(crate) fn lattice(&self) -> Lattice {
        Lattice {
            nr: self.nr,
            nz: self.nz,
            dr: self.dr,
            dz: self.dz,
            z0: self.z0,
        }
    }
}

/// The geometry of a cell-centred lattice (see [`CentredField`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Lattice {
    pub nr: usize,
    pub nz: usize,
    pub dr: f64,
    pub dz: f64,
    pub z0: f64,
}

impl Lattice {
    /// See [`CentredField::sample`].
    pub fn sample(&self, v: &[f64], r: f64, z: f64) -> f64 {
        let fi = (r / self.dr - 0.5).clamp(0.0, (self.nr - 1) as f64);
        let fj = ((z - self.z0) / self.dz - 0.5).clamp(0.0, (self.nz - 1) as f64);
        let (i0, j0) = (fi.floor() as usize, fj.floor() as usize);
        let (i1, j1) = ((i0 + 1).min(self.nr - 1), (j0 + 1).min(self.nz - 1));
        let (u, w) = (fi - i0 as f64, fj - j0 as f64);
        let at = |i: usize, j: usize| v[i * self.nz + j];
        (1.0 - u) * ((1.0 - w) * at(i0, j0) + w * at(i0, j1))
            + u * ((1.0 - w) * at(i1, j0) + w * at(i1, j1))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A mode field whose every component is a given linear function of
    /// its node's (r, z), so centring must reproduce it exactly.
    fn linear_field(g: &Grid, f: impl Fn(Component, f64, f64) -> f64) -> ModeField {
        let components = Component::ALL
            .iter()
            .map(|&c| {
                let (a, b) = c.shape(g);
                let mut v = Vec::new();
                for i in 0..a {
                    for j in 0..b {
                        let (r, z) = c.position(g, i, j);
                        v.push(Complex64::new(f(c, r, z), 0.0));
                    }
                }
                v
            })
            .collect();
        ModeField {
            freq_hz: 1e9,
            samples: 1,
            components,
        }
    }

    #[test]
    fn centring_reproduces_a_linear_field_exactly() {
        let g = Grid::new(3e-3, 1e-3, 5e-3, 0.5e-3).unwrap();
        let f = |c: Component, r: f64, z: f64| {
            let k = Component::ALL.iter().position(|&x| x == c).unwrap() as f64;
            1.0 + k + 300.0 * r - 170.0 * z
        };
        let cf = CentredField::new(&g, &linear_field(&g, f), 2);
        for c in Component::ALL {
            for i in 0..cf.nr {
                for j in 0..cf.nz {
                    let (r, z) = cf.centre(i, j);
                    let got = cf.get(c)[i * cf.nz + j].re;
                    assert!((got - f(c, r, z)).abs() < 1e-12, "{c:?} ({i},{j})");
                }
            }
        }
    }

    #[test]
    fn unfolding_over_pec_makes_tangential_e_odd() {
        let g = Grid::new(2e-3, 0.0, 2e-3, 0.5e-3).unwrap();
        let mf = linear_field(&g, |_, r, z| 1.0 + r * 1e3 + z * 1e3);
        let cf = CentredField::new(&g, &mf, 0);
        let u = cf.unfold(ZWall::Pec).unwrap();
        assert_eq!(u.nz, 8);
        assert!((u.z0 + 2e-3).abs() < 1e-15);
        for i in 0..u.nr {
            for j in 0..4 {
                let below = i * 8 + 3 - j;
                let above = i * 8 + 4 + j;
                let er = u.get(Component::Er);
                let ez = u.get(Component::Ez);
                assert_eq!(er[below], -er[above]);
                assert_eq!(ez[below], ez[above]);
            }
        }
        assert!(cf.unfold(ZWall::Pmc).is_ok());
    }

    #[test]
    fn strongest_phase_makes_the_field_real() {
        let g = Grid::new(2e-3, 0.0, 2e-3, 0.5e-3).unwrap();
        let mut mf = linear_field(&g, |_, r, _| 1.0 + r * 1e3);
        let rot = Complex64::from_polar(1.0, 0.7);
        for v in &mut mf.components {
            for x in v.iter_mut() {
                *x *= rot;
            }
        }
        let cf = CentredField::new(&g, &mf, 0);
        let psi = cf.strongest_phase(FieldKind::Electric, |_, _| true);
        // U = |U| e^{0.7j}: the real field peaks at ψ = −0.7 (mod π).
        let d = (psi + 0.7).rem_euclid(std::f64::consts::PI);
        assert!(d.min(std::f64::consts::PI - d) < 1e-12, "ψ = {psi}");
    }
}
