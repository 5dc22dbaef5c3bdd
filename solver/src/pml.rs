//! Perfectly matched layers on the outer radius and the z planes, for
//! cylindrical waves.
//!
//! # Formulation
//! The absorber is a complex stretching of the coordinate normal to its wall
//! (engineering time convention e^{jωt}):
//!
//! ```text
//! s_z(z) = 1 + σ_z(z)/(α + jωε0),     s_r(r) = 1 + σ_r(r)/(α + jωε0),
//! r̃ = ∫₀^r s_r dr' = r · s̄_r,        s̄_r = 1 + σ̄_r/(α + jωε0),  σ̄_r = (1/r)∫₀^r σ_r dr'.
//! ```
//!
//! In the stretched coordinates every ∂/∂z becomes (1/s_z)∂/∂z, every ∂/∂r
//! becomes (1/s_r)∂/∂r, and every 1/r — the m/r terms and the r E_φ, r H_φ of
//! the axial curl — becomes 1/r̃ = (1/r)(1/s̄_r) (Teixeira & Chew, IEEE MGWL
//! 7(11), 1997). The 1/r terms therefore take their own, averaged profile
//! σ̄_r: using the local σ_r for them (a Cartesian-style layer) would
//! reflect cylindrical waves. With α constant over the layer, σ̄_r keeps the
//! form of a stretching factor exactly.
//!
//! The kernel's radial FIT difference splits exactly as
//! (r_{i+1}u_{i+1} − r_i u_i)/(r_{i+½}Δr) = (u_{i+1} − u_i)/Δr + (u_{i+1} + u_i)/(2 r_{i+½}),
//! a derivative (stretched by s_r) plus a 1/r term (stretched by s̄_r).
//!
//! # Discrete stretching
//! The radial layer is finite integration in the stretched coordinate: with
//! I(r) = ∫₀^r σ_r dr' and p = α + jωε0, every row, integer or half, sits
//! at r̃ = r + I(r)/p. Every length is a difference of r̃ (primal
//! Δr̃_{i+½} = r̃_{i+1} − r̃_i, dual Δr̃_i = r̃_{i+½} − r̃_{i−½}: σ averaged
//! exactly over the cell), every 1/r is 1/r̃ of the node, and the two radial
//! FIT differences keep their exact form:
//!
//! ```text
//! H_z: (r̃_{i+1}u_{i+1} − r̃_i u_i)/(r̃_{i+½}Δr̃) = (r̂/r̃_{i+½})(u_{i+1} − u_i)/Δr̃ + (u_{i+1} + u_i)/(2r̃_{i+½})
//! E_z: (r̃_{i+½}u_{i+½} − r̃_{i−½}u_{i−½})/(r̃_iΔr̃_i) = (r̄_i/r̃_i)(u_{i+½} − u_{i−½})/Δr̃_i + (u_{i+½} + u_{i−½})/(2r̃_i)
//! ```
//!
//! with r̂ = (r̃_i + r̃_{i+1})/2 and r̄_i = (r̃_{i+½} + r̃_{i−½})/2. Kept exact, the discrete curl of a
//! discrete gradient is still zero inside the layer and the E and H curls
//! stay mutual adjoints under the (stretched) volume weights; an
//! approximate split (σ sampled at nodes) breaks both, and static fields
//! then grow slowly in the layer for m ≥ 1. Each factor — 1/s̄ = r/r̃, the
//! length stretches Δr/Δr̃, and the ratios r̂/r̃, r̄/r̃ — has the first-order
//! form 1 + C/(p + D); products are applied as recursions in cascade.
//!
//! # Time domain
//! A term X multiplied by 1 + C/(p + D) becomes X + ψ with the recursive
//! convolution (Roden & Gedney, MOTL 27(5), 2000, with κ = 1, written for
//! the general first-order factor; 1/s is C = −σ, D = σ)
//!
//! ```text
//! ψ ← b ψ + a X,   b = exp(−(α + D)Δt/ε0),   a = C/(α + D) · (1 − b).
//! ```
//!
//! The bulk kernel computes X everywhere; [`Pml::correct_h`] and
//! [`Pml::correct_e`] then, in the layers only, recompute each stretched term,
//! advance its ψ and add it with the term's own factor. Outside the layers σ =
//! 0, so nothing changes there. The stretching is a property of the
//! coordinates, not of the material, so bodies may run into the layer (a
//! ground plane or a substrate reaching the absorber).
use crate::boundary::{Absorber, Walls};
use crate::coefficients::Coefficients;
use crate::consts::{EPS0, ETA0};
use crate::fields::Fields;
use lathe_mesh::Grid;
use std::f64::consts::PI;

/// Recursive-convolution factors (b, a) for conductivity σ and shift α:
/// the factor 1/s = 1 − σ/(p + σ), p = α + jωε0.
fn factors(sigma: f64, alpha: f64, dt: f64) -> (f64, f64) {
    rational(-sigma, sigma, alpha, dt)
}

/// Factors (b, a) of the general first-order factor 1 + C/(p + D),
/// p = α + jωε0: in time, X ↦ X + ψ with ψ ← bψ + aX,
/// b = exp(−(α + D)Δt/ε0), a = C/(α + D)·(1 − b). Zero when C = 0.
fn rational(c: f64, d: f64, alpha: f64, dt: f64) -> (f64, f64) {
    if c == 0.0 {
        return (0.0, 0.0);
    }
    let b = (-(alpha + d) * dt / EPS0).exp();
    (b, c / (alpha + d) * (1.0 - b))
}

/// One auxiliary field ψ over a rectangle of nodes `[i0, i1) × [j0, j1)`.
#[derive(Debug, Clone)]
struct Psi {
    i0: usize,
    j0: usize,
    nj: usize,
    v: Vec<f64>,
}

impl Psi {
    fn new(i0: usize, i1: usize, j0: usize, j1: usize) -> Psi {
        Psi {
            i0,
            j0,
            nj: j1 - j0,
            v: vec![0.0; (i1 - i0) * (j1 - j0)],
        }
    }
    #[inline]
    fn step(&mut self, i: usize, j: usize, b: f64, a: f64, x: f64) -> f64 {
        let k = (i - self.i0) * self.nj + (j - self.j0);
        let p = b * self.v[k] + a * x;
        self.v[k] = p;
        p
    }
}

/// Per-position factors along one axis, for integer and half-integer nodes.
#[derive(Debug, Clone)]
struct Profile {
    /// (b, a) at integer positions 0..=n.
    int: Vec<(f64, f64)>,
    /// (b, a) at half-integer positions 0..n.
    half: Vec<(f64, f64)>,
}

/// Layer on one z plane.
#[derive(Debug, Clone)]
struct ZLayer {
    /// Integer j range [j0, j1) and half range [h0, h1).
    j0: usize,
    j1: usize,
    h0: usize,
    h1: usize,
    hr: Psi,   // ∂z e_φ in the H_r update
    hphi: Psi, // ∂z e_r in the H_φ update
    er: Psi,   // ∂z h_φ in the E_r update
    ephi: Psi, // ∂z h_r in the E_φ update
}

/// Layer on the outer radius.
#[derive(Debug, Clone)]
struct RLayer {
    /// First integer row and first half row of the layer.
    i0: usize,
    h0: usize,
    /// (b, a) of 1/s̄ (the 1/r̃ terms) at integer and half rows.
    bar: Profile,
    /// (b, a) of the primal-length stretch 1/s_P at half rows (`half`) and
    /// of the dual-length stretch 1/s_D at integer rows (`int`).
    len: Profile,
    /// (b, a) of r̄_i/r̃_i at integer rows (E_z's radial difference).
    ratio: Vec<(f64, f64)>,
    /// (b, a) of r̂/r̃_{i+½} at half rows (H_z's radial difference).
    ratio_half: Vec<(f64, f64)>,
    ez_ratio: Psi, // r̄/r̃ applied after 1/s_D
    hz_ratio: Psi, // r̂/r̃ applied after 1/s_P
    hr_bar: Psi,   // (m/r) e_z
    hphi_d: Psi,   // ∂r e_z
    hz_d: Psi,     // ∂r e_φ
    hz_bar: Psi,   // (e_φ avg + m e_r)/r
    er_bar: Psi,   // (m/r) h_z
    ephi_d: Psi,   // ∂r h_z
    ez_d: Psi,     // ∂r h_φ
    ez_bar: Psi,   // h_φ avg / r − (m/r) h_r
}

/// The absorbers of one run with their auxiliary fields.
#[derive(Debug, Clone)]
pub struct Pml {
    z_prof: Profile,
    bottom: Option<ZLayer>,
    top: Option<ZLayer>,
    outer: Option<RLayer>,
}

/// σ_max of an absorber of thickness `d` metres.
fn sigma_max(a: &Absorber, d: f64) -> f64 {
    -(a.order + 1.0) * a.reflection.ln() / (2.0 * ETA0 * d)
}

impl Pml {
    /// The absorbers of `walls` on `grid` for time step `dt`, or `None` when
    /// no wall absorbs.
    pub fn new(grid: &Grid, walls: &Walls, dt: f64) -> Option<Pml> {
        let (nr, nz) = (grid.nr, grid.nz);
        let (bot, top, out) = (
            walls.bottom.absorber(),
            walls.top.absorber(),
            walls.outer.absorber(),
        );
        if bot.is_none() && top.is_none() && out.is_none() {
            return None;
        }
        // z profile: σ from each absorbing end, over its depth.
        let zsig = |z_idx: f64| -> (f64, f64) {
            let mut s = 0.0;
            let mut alpha = 0.0;
            if let Some(a) = bot {
                let d = a.cells as f64;
                let depth = (d - z_idx) / d;
                if depth > 0.0 {
                    s += sigma_max(&a, d * grid.dz) * depth.powf(a.order);
                    alpha = 2.0 * PI * EPS0 * a.shift_hz;
                }
            }
            if let Some(a) = top {
                let d = a.cells as f64;
                let depth = (z_idx - (nz as f64 - d)) / d;
                if depth > 0.0 {
                    s += sigma_max(&a, d * grid.dz) * depth.powf(a.order);
                    alpha = 2.0 * PI * EPS0 * a.shift_hz;
                }
            }
            (s, alpha)
        };
        let z_prof = Profile {
            int: (0..=nz)
                .map(|j| {
                    let (s, al) = zsig(j as f64);
                    factors(s, al, dt)
                })
                .collect(),
            half: (0..nz)
                .map(|j| {
                    let (s, al) = zsig(j as f64 + 0.5);
                    factors(s, al, dt)
                })
                .collect(),
        };
        // Radial layer, discretised as finite integration in the stretched
        // coordinate r̃ (see the module docs, "Discrete stretching"):
        // r̃ = r + I(r)/p at every row, integer and half, with
        // I(r) = ∫₀^r σ_r dr' exact.
        let outer = out.map(|a| {
            let d = a.cells.min(nr) as f64;
            let r0 = nr as f64 - d; // the layer starts at this integer row
            let smax = sigma_max(&a, d * grid.dr);
            let alpha = 2.0 * PI * EPS0 * a.shift_hz;
            let dr = grid.dr;
            // I at position x (in cells).
            let big_i = |x: f64| {
                let depth = ((x - r0) / d).max(0.0);
                smax * d * dr / (a.order + 1.0) * depth.powf(a.order + 1.0)
            };
            let at_int = |i: usize| big_i(i as f64);
            let at_half = |i: usize| big_i(i as f64 + 0.5);
            let r_int = |i: usize| i as f64 * dr;
            let r_half = |i: usize| (i as f64 + 0.5) * dr;
            let bar = Profile {
                int: (0..=nr)
                    .map(|i| {
                        let s = if i == 0 { 0.0 } else { at_int(i) / r_int(i) };
                        factors(s, alpha, dt)
                    })
                    .collect(),
                half: (0..nr)
                    .map(|i| factors(at_half(i) / r_half(i), alpha, dt))
                    .collect(),
            };
            // Lengths: primal Δr̃_{i+½} = r̃_{i+1} − r̃_i, dual Δr̃_i = r̃_{i+½} − r̃_{i−½}.
            let len = Profile {
                int: (0..=nr)
                    .map(|i| {
                        let lo = if i == 0 { 0.0 } else { at_half(i - 1) };
                        factors((at_half(i) - lo) / dr, alpha, dt)
                    })
                    .collect(),
                half: (0..nr)
                    .map(|i| factors((at_int(i + 1) - at_int(i)) / dr, alpha, dt))
                    .collect(),
            };
            // E_z: r̄_i/r̃_i with r̄_i = (r̃_{i+½} + r̃_{i−½})/2;
            // H_z: r̂/r̃_{i+½} with r̂ = (r̃_i + r̃_{i+1})/2. Each is
            // (p + J/r)/(p + I/r) = 1 + (J − I)/r / (p + I/r).
            let ratio = (0..=nr)
                .map(|i| {
                    if i == 0 {
                        return (0.0, 0.0);
                    }
                    let j = 0.5 * (at_half(i) + at_half(i - 1));
                    let r = r_int(i);
                    rational((j - at_int(i)) / r, at_int(i) / r, alpha, dt)
                })
                .collect();
            let ratio_half = (0..nr)
                .map(|i| {
                    let j = 0.5 * (at_int(i) + at_int(i + 1));
                    let r = r_half(i);
                    rational((j - at_half(i)) / r, at_half(i) / r, alpha, dt)
                })
                .collect();
            let i0 = nr - a.cells.min(nr);
            let h0 = i0;
            let nj1 = nz + 1;
            RLayer {
                i0,
                h0,
                bar,
                len,
                ratio,
                ratio_half,
                ez_ratio: Psi::new(i0, nr + 1, 0, nz),
                hz_ratio: Psi::new(h0, nr, 0, nj1),
                hr_bar: Psi::new(i0, nr + 1, 0, nz),
                hphi_d: Psi::new(h0, nr, 0, nz),
                hz_d: Psi::new(h0, nr, 0, nj1),
                hz_bar: Psi::new(h0, nr, 0, nj1),
                er_bar: Psi::new(h0, nr, 0, nj1),
                ephi_d: Psi::new(i0, nr + 1, 0, nj1),
                ez_d: Psi::new(i0, nr + 1, 0, nz),
                ez_bar: Psi::new(i0, nr + 1, 0, nz),
            }
        });
        let zlayer = |a: Absorber, at_bottom: bool| {
            let c = a.cells.min(nz);
            let (j0, j1, h0, h1) = if at_bottom {
                (0, c + 1, 0, c)
            } else {
                (nz - c, nz + 1, nz - c, nz)
            };
            ZLayer {
                j0,
                j1,
                h0,
                h1,
                hr: Psi::new(0, nr + 1, h0, h1),
                hphi: Psi::new(0, nr, h0, h1),
                er: Psi::new(0, nr, j0, j1),
                ephi: Psi::new(0, nr + 1, j0, j1),
            }
        };
        Some(Pml {
            z_prof,
            bottom: bot.map(|a| zlayer(a, true)),
            top: top.map(|a| zlayer(a, false)),
            outer,
        })
    }

    /// Bytes held by the auxiliary fields.
    pub fn bytes(&self) -> usize {
        let z = |l: &Option<ZLayer>| {
            l.as_ref().map_or(0, |l| {
                8 * (l.hr.v.len() + l.hphi.v.len() + l.er.v.len() + l.ephi.v.len())
            })
        };
        let r = self.outer.as_ref().map_or(0, |l| {
            8 * [
                &l.hr_bar,
                &l.hphi_d,
                &l.hz_d,
                &l.hz_bar,
                &l.er_bar,
                &l.ephi_d,
                &l.ez_d,
                &l.ez_bar,
                &l.ez_ratio,
                &l.hz_ratio,
            ]
            .iter()
            .map(|p| p.v.len())
            .sum::<usize>()
        });
        z(&self.bottom) + z(&self.top) + r
    }

    /// Adds the stretched-coordinate corrections to H after [`crate::kernel::update_h`].
    pub fn correct_h(&mut self, f: &mut Fields, c: &Coefficients) {
        let (nr, nz) = (c.nr, c.nz);
        let nj1 = nz + 1;
        let (ch, idr, idz) = (c.ch, c.inv_dr, c.inv_dz);
        for layer in [&mut self.bottom, &mut self.top].into_iter().flatten() {
            for j in layer.h0..layer.h1 {
                let (b, a) = self.z_prof.half[j];
                if a == 0.0 {
                    continue;
                }
                // μ ∂t h_r ∋ ∂z e_φ, rows 1..nr.
                for i in 1..nr {
                    let x = (f.ephi[i * nj1 + j + 1] - f.ephi[i * nj1 + j]) * idz;
                    f.hr[i * nz + j] += ch * layer.hr.step(i, j, b, a, x);
                }
                // μ ∂t h_φ ∋ −∂z e_r.
                for i in 0..nr {
                    let x = (f.er[i * nj1 + j + 1] - f.er[i * nj1 + j]) * idz;
                    f.hphi[i * nz + j] -= ch * layer.hphi.step(i, j, b, a, x);
                }
            }
        }
        if let Some(l) = &mut self.outer {
            for i in l.i0.max(1)..nr {
                let (b, a) = l.bar.int[i];
                if a == 0.0 {
                    continue;
                }
                let mr = c.m_over_r_int[i];
                for j in 0..nz {
                    let x = mr * f.ez[i * nz + j];
                    f.hr[i * nz + j] += ch * l.hr_bar.step(i, j, b, a, x);
                }
            }
            for i in l.h0..nr {
                let (b, a) = l.len.half[i];
                let (bb, ab) = l.bar.half[i];
                let (br, ar) = l.ratio_half[i];
                let r = (i as f64 + 0.5) / idr;
                let mr = c.m_over_r_half[i];
                for j in 0..nz {
                    if a != 0.0 {
                        let x = (f.ez[(i + 1) * nz + j] - f.ez[i * nz + j]) * idr;
                        f.hphi[i * nz + j] += ch * l.hphi_d.step(i, j, b, a, x);
                    }
                }
                for j in 0..nj1 {
                    let (e0, e1) = (f.ephi[i * nj1 + j], f.ephi[(i + 1) * nj1 + j]);
                    if a != 0.0 || ar != 0.0 {
                        // (r̂/r̃)·(1/s_P)·X − X, two recursions in cascade.
                        let x = (e1 - e0) * idr;
                        let y = x + l.hz_d.step(i, j, b, a, x);
                        let z = y + l.hz_ratio.step(i, j, br, ar, y);
                        f.hz[i * nj1 + j] -= ch * (z - x);
                    }
                    if ab != 0.0 {
                        let x = 0.5 * (e1 + e0) / r + mr * f.er[i * nj1 + j];
                        f.hz[i * nj1 + j] -= ch * l.hz_bar.step(i, j, bb, ab, x);
                    }
                }
            }
        }
    }

    /// Adds the stretched-coordinate corrections to E after [`crate::kernel::update_e`].
    pub fn correct_e(&mut self, f: &mut Fields, c: &Coefficients) {
        let (nr, nz) = (c.nr, c.nz);
        let nj1 = nz + 1;
        let (idr, idz) = (c.inv_dr, c.inv_dz);
        for layer in [&mut self.bottom, &mut self.top].into_iter().flatten() {
            for j in layer.j0..layer.j1 {
                let (b, a) = self.z_prof.int[j];
                if a == 0.0 || j == 0 || j == nz {
                    continue; // the terminating PEC nodes are held
                }
                // ε ∂t e_r ∋ −∂z h_φ.
                for i in 0..nr {
                    let x = (f.hphi[i * nz + j] - f.hphi[i * nz + j - 1]) * idz;
                    let cb = c.cb_er[i * nj1 + j];
                    f.er[i * nj1 + j] -= cb * layer.er.step(i, j, b, a, x);
                }
                // ε ∂t e_φ ∋ ∂z h_r, rows 1..nr.
                for i in 1..nr {
                    let x = (f.hr[i * nz + j] - f.hr[i * nz + j - 1]) * idz;
                    let cb = c.cb_ephi[i * nj1 + j];
                    f.ephi[i * nj1 + j] += cb * layer.ephi.step(i, j, b, a, x);
                }
            }
        }
        if let Some(l) = &mut self.outer {
            for i in l.h0..nr {
                let (bb, ab) = l.bar.half[i];
                if ab == 0.0 {
                    continue;
                }
                let mr = c.m_over_r_half[i];
                for j in 0..nj1 {
                    let x = mr * f.hz[i * nj1 + j];
                    let cb = c.cb_er[i * nj1 + j];
                    f.er[i * nj1 + j] += cb * l.er_bar.step(i, j, bb, ab, x);
                }
            }
            for i in l.i0.max(1)..nr {
                let (b, a) = l.len.int[i];
                let (bb, ab) = l.bar.int[i];
                let (br, ar) = l.ratio[i];
                let r = i as f64 / idr;
                let mr = c.m_over_r_int[i];
                if a != 0.0 {
                    for j in 0..nj1 {
                        let x = (f.hz[i * nj1 + j] - f.hz[(i - 1) * nj1 + j]) * idr;
                        let cb = c.cb_ephi[i * nj1 + j];
                        f.ephi[i * nj1 + j] -= cb * l.ephi_d.step(i, j, b, a, x);
                    }
                }
                for j in 0..nz {
                    let (h0, h1) = (f.hphi[(i - 1) * nz + j], f.hphi[i * nz + j]);
                    let cb = c.cb_ez[i * nz + j];
                    if a != 0.0 || ar != 0.0 {
                        // (r̄/r̃)·(1/s_D)·X − X, two recursions in cascade.
                        let x = (h1 - h0) * idr;
                        let y = x + l.ez_d.step(i, j, b, a, x);
                        let z = y + l.ez_ratio.step(i, j, br, ar, y);
                        f.ez[i * nz + j] += cb * (z - x);
                    }
                    if ab != 0.0 {
                        let x = 0.5 * (h1 + h0) / r - mr * f.hr[i * nz + j];
                        f.ez[i * nz + j] += cb * l.ez_bar.step(i, j, bb, ab, x);
                    }
                }
            }
        }
    }
}
