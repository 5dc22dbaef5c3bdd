//! The closed surface of revolution, the equivalent currents on it (with
//! images over a plane), and the Poynting flux through it. The lattices and
//! the sign table are stated in the parent module's documentation.
use super::{FarFieldError, FarFieldOptions, LowerSpace, ModeData, Plane};
use crate::boundary::{OuterWall, Walls};
use crate::modes::Family;
use lathe_mesh::{Component, Grid, MaterialMap};
use num_complex::Complex64 as C;

/// The box of revolution carrying the equivalent currents: side cylinder
/// at `radius_m`, top disk at `z_top_m`, bottom disk (open bottom) or image
/// plane at `z_bottom_m`. All on grid lines.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HuygensBox {
    /// Radius of the side, m.
    pub radius_m: f64,
    /// z of the bottom disk or of the image plane, m.
    pub z_bottom_m: f64,
    /// z of the top disk, m.
    pub z_top_m: f64,
    /// Radial index of the side.
    pub i_side: usize,
    /// Axial index of the bottom.
    pub j_bottom: usize,
    /// Axial index of the top.
    pub j_top: usize,
    /// Whether the bottom is an image plane (no bottom disk).
    pub on_plane: bool,
}

/// The physical region of a grid (absorber cells excluded), in indices:
/// radii 0 … `i_outer`, rows `j_bottom` … `j_top`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Region {
    pub i_outer: usize,
    pub j_bottom: usize,
    pub j_top: usize,
}

impl Region {
    pub fn of(g: &Grid, w: &Walls) -> Region {
        let outer = match w.outer {
            OuterWall::Pml(a) => a.cells,
            OuterWall::Pec => 0,
        };
        let bottom = w.bottom.absorber().map_or(0, |a| a.cells);
        let top = w.top.absorber().map_or(0, |a| a.cells);
        Region {
            i_outer: g.nr.saturating_sub(outer),
            j_bottom: bottom,
            j_top: g.nz.saturating_sub(top),
        }
    }
}

impl HuygensBox {
    /// Places the surface `margin_cells` inside the absorbers.
    pub fn place(g: &Grid, w: &Walls, opts: &FarFieldOptions) -> Result<HuygensBox, FarFieldError> {
        let margin = opts.margin_cells;
        if margin < 1 {
            return Err(FarFieldError::TooSmall {
                what: format!("margin_cells = {margin}; at least 1 is needed (one H node outside the surface)"),
            });
        }
        let reg = Region::of(g, w);
        let bottom = reg.j_bottom;
        let nr_phys = reg.i_outer;
        let jt_phys = reg.j_top;
        let on_plane = opts.lower.plane().is_some();
        let i_side = nr_phys.saturating_sub(margin);
        let j_top = jt_phys.saturating_sub(margin);
        let j_bottom = if on_plane { 0 } else { bottom + margin };
        if i_side < 2 || j_top < j_bottom + 2 {
            return Err(FarFieldError::TooSmall {
                what: format!(
                    "physical region {nr_phys} × {} cells leaves no room for a surface {margin} cells inside the absorbers",
                    jt_phys.saturating_sub(bottom)
                ),
            });
        }
        Ok(HuygensBox {
            radius_m: g.r_int(i_side),
            z_bottom_m: g.z_int(j_bottom),
            z_top_m: g.z_int(j_top),
            i_side,
            j_bottom,
            j_top,
            on_plane,
        })
    }
}

/// One ring of equivalent current at (ρ', z'): coefficients of the cos/sin
/// patterns, area weight per radian.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Ring {
    /// Index into the table of distinct radii.
    pub radius: usize,
    /// z' − origin_z, m.
    pub z: f64,
    /// dS'/dφ' of the quadrature point, m².
    pub weight: f64,
    /// (J_ρ, J_φ, J_z), A/m.
    pub j: [C; 3],
    /// (M_ρ, M_φ, M_z), V/m.
    pub mc: [C; 3],
}

fn idx(g: &Grid, c: Component, i: usize, j: usize) -> usize {
    i * c.shape(g).1 + j
}

/// Whether a material node is something other than vacuum.
fn is_body(e: f64, pec: bool) -> bool {
    pec || (e - 1.0).abs() > 1e-9
}

/// Every non-vacuum electric node (component, position).
pub(crate) fn body_nodes(map: &MaterialMap) -> impl Iterator<Item = (f64, f64)> + '_ {
    let g = &map.grid;
    [Component::Er, Component::Ephi, Component::Ez]
        .into_iter()
        .flat_map(move |c| {
            let nm = map.component(c);
            let len = c.shape(g).1;
            nm.eps_r
                .iter()
                .zip(&nm.pec)
                .enumerate()
                .filter(|(_, (&e, &p))| is_body(e, p))
                .map(move |(k, _)| c.position(g, k / len, k % len))
        })
}

/// Middle of the bodies' z extent, if there are bodies.
pub(crate) fn body_centre(map: &MaterialMap) -> Option<f64> {
    let (lo, hi) = body_nodes(map).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), (_, z)| {
        (a.min(z), b.max(z))
    });
    (lo <= hi).then_some(0.5 * (lo + hi))
}

/// Every body node must lie at least one cell inside the surface.
pub(crate) fn check_bodies(map: &MaterialMap, s: &HuygensBox) -> Result<(), FarFieldError> {
    let g = &map.grid;
    let slack = 1e-9;
    for (r, z) in body_nodes(map) {
        let out = r > s.radius_m - g.dr * (1.0 - slack)
            || z > s.z_top_m - g.dz * (1.0 - slack)
            || (!s.on_plane && z < s.z_bottom_m + g.dz * (1.0 - slack));
        if out {
            return Err(FarFieldError::BodyOnSurface {
                r_mm: r * 1e3,
                z_mm: z * 1e3,
            });
        }
    }
    Ok(())
}

/// A copy of the phasors with the other family removed (m = 0) and the
/// m = 1 axis values filled in.
///
/// m = 1 axis: single-valuedness of the Cartesian field on the axis gives
/// e_φ(0) = −e_r(0), h_r(0) = h_φ(0), with e_r, h_φ extrapolated to r = 0
/// from their even extension, f(0) ≈ (9 f(½Δr) − f(3/2 Δr))/8 (the rule of
/// `kernel::fill_axis`, which the running transform does not apply).
pub(crate) fn clean_components(d: &ModeData) -> Vec<Vec<C>> {
    let g = d.grid;
    let mut comps: Vec<Vec<C>> = d.field.components.clone();
    let zero = |comps: &mut Vec<Vec<C>>, c: Component| {
        let k = Component::ALL.iter().position(|&x| x == c).unwrap();
        comps[k].iter_mut().for_each(|v| *v = C::new(0.0, 0.0));
    };
    if d.m == 0 {
        match d.family {
            Some(Family::Te) => [Component::Er, Component::Ez, Component::Hphi]
                .into_iter()
                .for_each(|c| zero(&mut comps, c)),
            Some(Family::Tm) => [Component::Ephi, Component::Hr, Component::Hz]
                .into_iter()
                .for_each(|c| zero(&mut comps, c)),
            _ => {}
        }
    }
    if d.m == 1 && g.nr >= 2 {
        let at0 = |a: C, b: C| (9.0 * a - b) / 8.0;
        let pos = |c: Component| Component::ALL.iter().position(|&x| x == c).unwrap();
        let (er, ep, hr, hp) = (
            pos(Component::Er),
            pos(Component::Ephi),
            pos(Component::Hr),
            pos(Component::Hphi),
        );
        for j in 0..=g.nz {
            let v = -at0(
                comps[er][idx(g, Component::Er, 0, j)],
                comps[er][idx(g, Component::Er, 1, j)],
            );
            comps[ep][idx(g, Component::Ephi, 0, j)] = v;
        }
        for j in 0..g.nz {
            let v = at0(
                comps[hp][idx(g, Component::Hphi, 0, j)],
                comps[hp][idx(g, Component::Hphi, 1, j)],
            );
            comps[hr][idx(g, Component::Hr, 0, j)] = v;
        }
    }
    comps
}

/// The rings of equivalent current (images included), the table of their
/// distinct radii, and the Poynting flux through the surface (both halves
/// for a mirror plane, the upper half over a ground plane).
pub(crate) fn rings(
    g: &Grid,
    comps: &[Vec<C>],
    s: &HuygensBox,
    lower: LowerSpace,
    origin_z: f64,
    m: u32,
) -> (Vec<f64>, Vec<Ring>, f64) {
    let get = |c: Component, i: usize, j: usize| {
        let k = Component::ALL.iter().position(|&x| x == c).unwrap();
        comps[k][idx(g, c, i, j)]
    };
    let zero = C::new(0.0, 0.0);
    let (is, jb, jt) = (s.i_side, s.j_bottom, s.j_top);
    let (dr, dz) = (g.dr, g.dz);
    let big_r = g.r_int(is);
    // Radii table: 0 = side, 1 + i = whole radius i, 2 + is + i = half radius i + ½.
    let mut radii = vec![big_r];
    radii.extend((0..=is).map(|i| g.r_int(i)));
    radii.extend((0..is).map(|i| g.r_half(i)));
    let whole = |i: usize| 1 + i;
    let half = |i: usize| 2 + is + i;
    let mut out = Vec::new();
    // Σ Re(E × H*)·n̂ w over the physical part (without Φ/2).
    let mut flux = 0.0;
    // Side, whole z steps: J_φ = −h_z, M_z = −e_φ; flux +Re(e_φ h_z*).
    for j in jb..=jt {
        let end = if j == jb || j == jt { 0.5 } else { 1.0 };
        let w = big_r * dz * end;
        let ep = get(Component::Ephi, is, j);
        let hz = 0.5 * (get(Component::Hz, is - 1, j) + get(Component::Hz, is, j));
        flux += w * (ep * hz.conj()).re;
        out.push(Ring {
            radius: 0,
            z: g.z_int(j) - origin_z,
            weight: w,
            j: [zero, -hz, zero],
            mc: [zero, zero, -ep],
        });
    }
    // Side, half z steps: J_z = h_φ, M_φ = e_z; flux −Re(e_z h_φ*).
    for j in jb..jt {
        let w = big_r * dz;
        let ez = get(Component::Ez, is, j);
        let hp = 0.5 * (get(Component::Hphi, is - 1, j) + get(Component::Hphi, is, j));
        flux -= w * (ez * hp.conj()).re;
        out.push(Ring {
            radius: 0,
            z: g.z_half(j) - origin_z,
            weight: w,
            j: [zero, zero, hp],
            mc: [zero, ez, zero],
        });
    }
    // Disks: top (sign +1, n̂ = ẑ) and, with an open bottom, bottom (−1).
    let mut disks = vec![(jt, 1.0)];
    if !s.on_plane {
        disks.push((jb, -1.0));
    }
    for (jd, sg) in disks {
        let zd = g.z_int(jd) - origin_z;
        // Whole radii: J_φ = ±h_r, M_ρ = ±e_φ; flux ∓Re(e_φ h_r*).
        for i in 0..=is {
            let end = if i == is { 0.5 } else { 1.0 };
            let w = g.r_int(i) * dr * end;
            let ep = get(Component::Ephi, i, jd);
            let hr = 0.5 * (get(Component::Hr, i, jd - 1) + get(Component::Hr, i, jd));
            flux -= sg * w * (ep * hr.conj()).re;
            out.push(Ring {
                radius: whole(i),
                z: zd,
                weight: w,
                j: [zero, sg * hr, zero],
                mc: [sg * ep, zero, zero],
            });
        }
        // Half radii: J_ρ = ∓h_φ, M_φ = ∓e_r; flux ±Re(e_r h_φ*).
        for i in 0..is {
            let w = g.r_half(i) * dr;
            let er = get(Component::Er, i, jd);
            let hp = 0.5 * (get(Component::Hphi, i, jd - 1) + get(Component::Hphi, i, jd));
            flux += sg * w * (er * hp.conj()).re;
            out.push(Ring {
                radius: half(i),
                z: zd,
                weight: w,
                j: [-sg * hp, zero, zero],
                mc: [zero, -sg * er, zero],
            });
        }
    }
    // Images in the plane z_p: PEC J' = −𝓜J, M' = 𝓜M; PMC J' = 𝓜J, M' = −𝓜M,
    // with 𝓜 flipping the z component.
    let mut flux_total = flux;
    if let Some(plane) = lower.plane() {
        let zp = s.z_bottom_m - origin_z;
        let (sj, sm) = match plane {
            Plane::Pec => (-1.0, 1.0),
            Plane::Pmc => (1.0, -1.0),
        };
        let images: Vec<Ring> = out
            .iter()
            .map(|r| Ring {
                radius: r.radius,
                z: 2.0 * zp - r.z,
                weight: r.weight,
                j: [sj * r.j[0], sj * r.j[1], -sj * r.j[2]],
                mc: [sm * r.mc[0], sm * r.mc[1], -sm * r.mc[2]],
            })
            .collect();
        out.extend(images);
        if let LowerSpace::Mirror(_) = lower {
            flux_total *= 2.0;
        }
    }
    let p = 0.5 * super::phi_norm(m) * flux_total;
    (radii, out, p)
}
