//! Material filling: effective permittivity of each electric node's control
//! volume, and which nodes lie in metal.
//!
//! Each electric node owns a dual cell — the rectangle of the (r, z) plane
//! midway to its neighbours, clipped to the region (at a z plane that is a
//! symmetry plane, the half inside is the mirror image of the half outside,
//! so clipping is exact). The engine's Ampère update for the node is the
//! integral of ∂D/∂t over that cell, so the node's permittivity is an
//! average of ε over it:
//!
//! - along the component's own direction the fields add like capacitors in
//!   series (normal D continuous): harmonic mean;
//! - across it they add in parallel (tangential E continuous): arithmetic
//!   mean, weighted by the volume element r dr dz.
//!
//! `Er`: harmonic along r, then arithmetic over z. `Ez`: harmonic along z,
//! then r-weighted arithmetic over r. `Ephi` is tangential to every
//! interface of a body of revolution: r-weighted arithmetic over the cell.
//! For interfaces normal to r or z — every face of a cylinder or ring, on or
//! off a grid line — this is the exact layered-medium average. The means are
//! integrated exactly over the sub-rectangles that the bodies' edges cut the
//! dual cell into (every shape of this release is a rectangle in (r, z)), so
//! a face's position is represented to round-off, not snapped to a sample.
//!
//! Cells cut by a curved or slanted surface (spheres, cones, polygons) get
//! the full anisotropic average of Kottke, Farjadpour & Johnson (see
//! `curved_cell`): the diagonal entry for the node and the off-diagonal
//! (r, z) entry, which the solver applies as a symmetric coupling between
//! neighbouring E_r and E_z nodes (with a correction that makes it track
//! the consistent, second-order form: solver/src/skew.rs).
//!
//! Metal is staircased: an electric node on or inside a PEC body is held at
//! zero; metal samples in a free node's dual cell are left out of its mean.
use crate::{Body, Component, Grid, Material, Overlap};

/// Options of [`fill`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FillOptions {
    /// Midpoint-rule samples per dual cell along each direction (even, ≥ 2).
    pub samples: usize,
}

impl Default for FillOptions {
    /// Eight samples each way: exact for interfaces on grid lines and within
    /// 1/16 of a cell for any other axis-aligned face.
    fn default() -> Self {
        FillOptions { samples: 8 }
    }
}

/// Permittivity and metal mask of the nodes of one electric component.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeMaterial {
    /// Effective ε_r per node (1 where the node is metal), row-major in i:
    /// the inverse of the diagonal entry of the node's inverse-permittivity
    /// tensor.
    pub eps_r: Vec<f64>,
    /// Off-diagonal (r, z) entry of the node's inverse relative-permittivity
    /// tensor (zero but at curved interfaces; always zero for E_φ).
    pub inv_eps_rz: Vec<f64>,
    /// Whether the node is held at zero by metal.
    pub pec: Vec<bool>,
}

/// Material data of every electric node of a grid.
#[derive(Debug, Clone, PartialEq)]
pub struct MaterialMap {
    /// The grid the map is laid on.
    pub grid: Grid,
    /// `Er` nodes.
    pub er: NodeMaterial,
    /// `Ephi` nodes.
    pub ephi: NodeMaterial,
    /// `Ez` nodes.
    pub ez: NodeMaterial,
}

impl MaterialMap {
    /// The nodes of electric component `c`.
    ///
    /// # Panics
    /// If `c` is magnetic (there are no magnetic materials).
    pub fn component(&self, c: Component) -> &NodeMaterial {
        match c {
            Component::Er => &self.er,
            Component::Ephi => &self.ephi,
            Component::Ez => &self.ez,
            _ => panic!("expected an electric component, got {c:?}"),
        }
    }

    /// Largest ε_r over all free nodes.
    pub fn max_eps_r(&self) -> f64 {
        [&self.er, &self.ephi, &self.ez]
            .iter()
            .flat_map(|n| n.eps_r.iter().zip(&n.pec))
            .filter(|(_, &p)| !p)
            .map(|(&e, _)| e)
            .fold(1.0, f64::max)
    }
}

/// Fills `grid` with `bodies` (later bodies override earlier ones) on a
/// vacuum background.
pub fn fill(grid: &Grid, bodies: &[Body], opts: FillOptions) -> MaterialMap {
    assert!(
        opts.samples >= 2 && opts.samples % 2 == 0,
        "expected an even sample count ≥ 2, got {}",
        opts.samples
    );
    let one = |c| fill_component(grid, bodies, c, opts.samples);
    MaterialMap {
        grid: grid.clone(),
        er: one(Component::Er),
        ephi: one(Component::Ephi),
        ez: one(Component::Ez),
    }
}

/// The material at a point: `None` for metal, else ε_r. Later bodies win.
fn material_at(bodies: &[Body], r: f64, z: f64) -> Option<f64> {
    for b in bodies.iter().rev() {
        if b.shape.contains(r, z, 0.0) {
            return match b.material {
                Material::Pec => None,
                Material::Dielectric { eps_r, .. } => Some(eps_r),
            };
        }
    }
    Some(1.0)
}

/// Whether a node at (r, z) is held at zero by metal: it lies in the closure
/// of the metal region, i.e. metal (after overrides) occupies the node or a
/// point within `slack` of it in one of the four diagonal directions.
fn node_in_metal(bodies: &[Body], r: f64, z: f64, slack: f64) -> bool {
    if !bodies.iter().any(|b| b.material == Material::Pec) {
        return false;
    }
    [
        (0.0, 0.0),
        (1.0, 1.0),
        (1.0, -1.0),
        (-1.0, 1.0),
        (-1.0, -1.0),
    ]
    .iter()
    .any(|&(a, b)| material_at(bodies, (r + a * slack).max(0.0), z + b * slack).is_none())
}

fn fill_component(grid: &Grid, bodies: &[Body], c: Component, samples: usize) -> NodeMaterial {
    let (ni, nj) = c.shape(grid);
    let mut eps_r = vec![1.0; ni * nj];
    let mut inv_eps_rz = vec![0.0; ni * nj];
    let mut pec = vec![false; ni * nj];
    let slack = 1e-6 * grid.dr.min(grid.dz);
    let (r_lim, z_lo, z_hi) = (grid.radius(), grid.z0, grid.z_top());
    for i in 0..ni {
        for j in 0..nj {
            let (r, z) = c.position(grid, i, j);
            let k = i * nj + j;
            if node_in_metal(bodies, r, z, slack) {
                pec[k] = true;
                continue;
            }
            // Dual cell: half a step each way, clipped to the region.
            let r0 = (r - 0.5 * grid.dr).max(0.0);
            let r1 = (r + 0.5 * grid.dr).min(r_lim);
            let z0 = (z - 0.5 * grid.dz).max(z_lo);
            let z1 = (z + 0.5 * grid.dz).min(z_hi);
            (eps_r[k], inv_eps_rz[k]) = cell_average(bodies, c, (r0, r1, z0, z1), samples);
        }
    }
    NodeMaterial {
        eps_r,
        inv_eps_rz,
        pec,
    }
}

/// The directional mean of ε over one dual cell (see the module docs),
/// integrated exactly: every body of this release is a rectangle of the
/// (r, z) plane, so ε is constant on the sub-rectangles cut by the bodies'
/// edges, and the means are finite sums over them.
fn cell_average(
    bodies: &[Body],
    c: Component,
    (r0, r1, z0, z1): (f64, f64, f64, f64),
    _samples: usize,
) -> (f64, f64) {
    // Fast path: no surface crosses the cell, so ε is uniform on it.
    let mut uniform = true;
    let mut eps = 1.0;
    let mut metal = false;
    for b in bodies {
        match b.shape.classify(r0, r1, z0, z1) {
            Overlap::Outside => {}
            Overlap::Inside => match b.material {
                Material::Pec => metal = true,
                Material::Dielectric { eps_r, .. } => {
                    metal = false;
                    eps = eps_r;
                }
            },
            Overlap::Cut => uniform = false,
        }
    }
    if uniform {
        return (if metal { 1.0 } else { eps }, 0.0);
    }
    if !bodies.iter().all(|b| b.shape.is_rectangle()) {
        return curved_cell(bodies, c, (r0, r1, z0, z1));
    }
    let cuts = |lo: f64, hi: f64, radial: bool| -> Vec<f64> {
        let mut v = vec![lo, hi];
        for b in bodies {
            let (a0, a1, b0, b1) = b.shape.bounds();
            let (x0, x1) = if radial { (a0, a1) } else { (b0, b1) };
            for x in [x0, x1] {
                if x > lo && x < hi {
                    v.push(x);
                }
            }
        }
        v.sort_by(f64::total_cmp);
        v.dedup();
        v
    };
    let rs = cuts(r0, r1, true);
    let zs = cuts(z0, z1, false);
    // ε on sub-rectangle (a, b), None for metal.
    let eps_at = |a: usize, b: usize| {
        material_at(bodies, 0.5 * (rs[a] + rs[a + 1]), 0.5 * (zs[b] + zs[b + 1]))
    };
    let area_r = |a: usize| 0.5 * (rs[a + 1] * rs[a + 1] - rs[a] * rs[a]); // ∫ r dr
    let len_r = |a: usize| rs[a + 1] - rs[a];
    let len_z = |b: usize| zs[b + 1] - zs[b];
    let (mut num, mut den) = (0.0, 0.0);
    match c {
        Component::Er => {
            // Harmonic along r within each z strip, arithmetic over strips.
            for b in 0..zs.len() - 1 {
                let (mut l, mut inv) = (0.0, 0.0);
                for a in 0..rs.len() - 1 {
                    if let Some(e) = eps_at(a, b) {
                        l += len_r(a);
                        inv += len_r(a) / e;
                    }
                }
                if l > 0.0 {
                    num += len_z(b) * l / inv;
                    den += len_z(b);
                }
            }
        }
        Component::Ez => {
            // Harmonic along z within each r strip, r-weighted arithmetic
            // over strips.
            for a in 0..rs.len() - 1 {
                let (mut l, mut inv) = (0.0, 0.0);
                for b in 0..zs.len() - 1 {
                    if let Some(e) = eps_at(a, b) {
                        l += len_z(b);
                        inv += len_z(b) / e;
                    }
                }
                if l > 0.0 {
                    num += area_r(a) * l / inv;
                    den += area_r(a);
                }
            }
        }
        _ => {
            for a in 0..rs.len() - 1 {
                for b in 0..zs.len() - 1 {
                    if let Some(e) = eps_at(a, b) {
                        let w = area_r(a) * len_z(b);
                        num += w * e;
                        den += w;
                    }
                }
            }
        }
    }
    (if den > 0.0 { num / den } else { 1.0 }, 0.0)
}

/// Samples per direction for the E_φ mean over a cell cut by a curved surface.
const CURVED_SAMPLES: usize = 32;

/// The anisotropic average for a cell cut by a curved or slanted surface
/// (Kottke, Farjadpour & Johnson, Phys. Rev. E 77, 036611, 2008): with n the
/// unit normal of the interface in the cell, the inverse permittivity tensor
/// in the (r, z) plane is
///
/// ε⁻¹ = ⟨ε⁻¹⟩ n nᵀ + ⟨ε⟩⁻¹ (1 − n nᵀ),
///
/// the means r-weighted over the dual cell by the midpoint rule on 32 × 32
/// points, n the normal of the body surface that cuts the cell, at the
/// surface point nearest the cell's centre ([`crate::Shape::surface_normal`]).
/// Where no single face defines it (a corner of a profile nearest), n is the
/// direction in which ε grows across the cell (the ε-weighted first moment of
/// the samples). The first moment alone is off by up to tens of degrees in a
/// cell the surface only clips at a corner, which made the sphere's errors
/// erratic (DEVELOPERS.md, "Material averaging"). Returned: 1/(ε⁻¹)_uu for the node's own
/// direction u, and the off-diagonal (ε⁻¹)_rz, which the solver applies as a
/// coupling between E_r and E_z nodes. E_φ is tangential to every interface
/// of a body of revolution: its value is the arithmetic mean, no coupling.
fn curved_cell(
    bodies: &[Body],
    c: Component,
    (r0, r1, z0, z1): (f64, f64, f64, f64),
) -> (f64, f64) {
    let n = CURVED_SAMPLES;
    let (dr, dz) = ((r1 - r0) / n as f64, (z1 - z0) / n as f64);
    let (mut w_sum, mut e_sum, mut inv_sum) = (0.0, 0.0, 0.0);
    let (mut cr, mut cz) = (0.0, 0.0);
    let mut samples = Vec::with_capacity(n * n);
    for a in 0..n {
        let r = r0 + (a as f64 + 0.5) * dr;
        for b in 0..n {
            let z = z0 + (b as f64 + 0.5) * dz;
            if let Some(e) = material_at(bodies, r, z) {
                let w = r;
                w_sum += w;
                e_sum += w * e;
                inv_sum += w / e;
                cr += w * r;
                cz += w * z;
                samples.push((r, z, w, e));
            }
        }
    }
    if w_sum <= 0.0 {
        return (1.0, 0.0);
    }
    let (mean, inv_mean) = (e_sum / w_sum, inv_sum / w_sum);
    if c == Component::Ephi {
        return (mean, 0.0);
    }
    let (cr, cz) = (cr / w_sum, cz / w_sum);
    let (mut mr, mut mz) = (0.0, 0.0);
    for &(r, z, w, e) in &samples {
        mr += w * (e - mean) * (r - cr);
        mz += w * (e - mean) * (z - cz);
    }
    let norm = (mr * mr + mz * mz).sqrt();
    if norm == 0.0 {
        return (mean, 0.0);
    }
    // The normal of the nearest dielectric surface that cuts the cell, at
    // the point nearest the cell's centre; the first moment where no single
    // face defines it (a corner of a profile in the cell).
    let (pr, pz) = (0.5 * (r0 + r1), 0.5 * (z0 + z1));
    let exact = bodies
        .iter()
        .filter(|b| matches!(b.material, Material::Dielectric { .. }))
        .filter(|b| b.shape.classify(r0, r1, z0, z1) == Overlap::Cut)
        .filter_map(|b| b.shape.surface_normal(pr, pz))
        .min_by(|a, b| a.0.total_cmp(&b.0));
    let (nr, nz) = match exact {
        Some((_, n)) => n,
        None => (mr / norm, mz / norm),
    };
    let (a, b) = (inv_mean, 1.0 / mean);
    let t_rz = nr * nz * (a - b);
    let t_uu = if c == Component::Er {
        nr * nr * a + (1.0 - nr * nr) * b
    } else {
        nz * nz * a + (1.0 - nz * nz) * b
    };
    (1.0 / t_uu, t_rz)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Shape;

    fn puck(eps_r: f64, radius: f64, height: f64, base: f64) -> Body {
        Body {
            shape: Shape::Cylinder {
                radius,
                height,
                base,
            },
            material: Material::Dielectric {
                eps_r,
                loss_tangent: 0.0,
            },
        }
    }

    #[test]
    fn interfaces_on_grid_lines_average_exactly() {
        // Puck top face on the grid line z = 1; side face on r = 2.
        let g = Grid::new(4.0, 0.0, 3.0, 1.0).unwrap();
        let m = fill(&g, &[puck(9.0, 2.0, 1.0, 0.0)], FillOptions::default());
        let nj = g.nz + 1;
        // Er at (0.5, z=1): tangential to the top face, half in each: arithmetic.
        assert!((m.er.eps_r[1] - 5.0).abs() < 1e-12);
        // Ez at (r=1, z=0.5): fully inside.
        assert!((m.ez.eps_r[g.nz] - 9.0).abs() < 1e-12);
        // Ez at (r=2, z=0.5): on the side face, tangential: r-weighted
        // arithmetic over r in [1.5, 2.5]: (9·∫_{1.5}^{2} r dr + ∫_{2}^{2.5} r dr)/∫ r dr.
        let expect = (9.0 * (4.0 - 2.25) / 2.0 + (6.25 - 4.0) / 2.0) / ((6.25 - 2.25) / 2.0);
        assert!((m.ez.eps_r[2 * g.nz] - expect).abs() < 1e-12);
        // Ephi at (r=2, z=1): corner; arithmetic over the quarter cells.
        let inside = 9.0 * (4.0 - 2.25) / 2.0 * 0.5;
        let total = (6.25 - 2.25) / 2.0;
        let expect = (inside + (total - inside / 9.0)) / total;
        assert!((m.ephi.eps_r[2 * nj + 1] - expect).abs() < 1e-12);
    }

    #[test]
    fn face_off_grid_line_gives_series_mean_for_normal_component() {
        // Top face at z = 0.75: Ez at z = 0.5 spans [0, 1]: 3/4 in ε=4, 1/4 vacuum.
        let g = Grid::new(2.0, 0.0, 2.0, 1.0).unwrap();
        let m = fill(&g, &[puck(4.0, 2.0, 0.75, 0.0)], FillOptions::default());
        let harmonic = 1.0 / (0.75 / 4.0 + 0.25);
        assert!((m.ez.eps_r[g.nz] - harmonic).abs() < 1e-12);
        // Er at z = 1 spans [0.5, 1.5]: 1/4 in ε=4: arithmetic.
        assert!((m.er.eps_r[1] - (0.25 * 4.0 + 0.75)).abs() < 1e-12);
    }

    #[test]
    fn metal_holds_nodes_on_and_inside() {
        let g = Grid::new(4.0, 0.0, 4.0, 1.0).unwrap();
        let post = Body {
            shape: Shape::Cylinder {
                radius: 1.0,
                height: 2.0,
                base: 0.0,
            },
            material: Material::Pec,
        };
        let m = fill(&g, &[post], FillOptions::default());
        let nj = g.nz + 1;
        assert!(m.ephi.pec[nj + 2]); // r = 1, z = 2: on the corner
        assert!(!m.ephi.pec[2 * nj + 2]);
        assert!(m.er.pec[1]); // r = 0.5, z = 1 inside
        assert!(!m.er.pec[3]); // r = 0.5, z = 3 above
                               // A later dielectric body covering part of the post replaces metal.
        let post2 = m.clone();
        let m2 = fill(
            &g,
            &[
                Body {
                    shape: Shape::Cylinder {
                        radius: 1.0,
                        height: 2.0,
                        base: 0.0,
                    },
                    material: Material::Pec,
                },
                puck(2.0, 1.0, 1.0, 1.0),
            ],
            FillOptions::default(),
        );
        // Er at r = 0.5, z = 2 was on the post's top face; now it is on the
        // puck's top face, between dielectric and vacuum.
        assert!(post2.er.pec[2] && !m2.er.pec[2]);
        assert!(m2.er.pec[1]); // z = 1 is on the metal's remaining face
    }
}
