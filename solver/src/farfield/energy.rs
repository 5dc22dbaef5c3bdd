//! Stored energy of a radiating mode, and Q from energy and power.
//!
//! # Definition
//! The time-averaged energy of the field, (1/4)∫(ε|E|² + μ|H|²) dV, grows
//! without bound with the volume: it includes the energy of the radiation
//! on its way out. The stored energy is what remains when the radiation
//! field's energy density is removed everywhere (Collin & Rothschild, IEEE
//! TAP 12(1), 1964; Fante, IEEE TAP 17(2), 1969; the limit form of
//! Yaghjian & Best, IEEE TAP 53(4), 2005):
//!
//! ```text
//! W = ∫_all space [ w(r) − U(Ω)/(c r²) ] dV,   w = (1/4)(ε|E|² + μ|H|²),
//! ```
//!
//! with U the radiation intensity (U/(c r²) is the energy density of the far
//! field E = F e^{−jkr}/r: (ε0/4)|E|² + (μ0/4)|H|² = ε0|F|²/(2r²)). It is
//! evaluated in three parts, which makes it independent of where the split
//! is made (tested):
//!
//! 1. **W_ball**: the total energy in the ball B of radius a about the
//!    reference point (the largest ball inside the surface, or a given
//!    fraction of it), from the grid phasors, ε of each electric node, dual
//!    cells clipped to the ball (exact where a cell is wholly inside,
//!    16 × 16 sub-samples where the sphere cuts it). The ball must contain
//!    every body.
//! 2. **W_rad** = ∫_B U/(c r²) dV = P a/c exactly (no quadrature).
//! 3. **W_ext**: the stored energy outside B. There the field is a sum of
//!    outgoing multipoles of degree n ≥ max(m, 1), found by projecting the
//!    far field on the vector spherical harmonics ([`Multipoles`]); the
//!    multipoles are orthogonal on every sphere, so W_ext = Σ_n Q_n(ka)·P_n/ω
//!    with Q_n of [`super::special::exterior_q`] (for n = 1 it reproduces
//!    McLean's 1/(ka) + 1/(ka)³). Degrees up to max(m,1) + ⌈k·reach⌉ + 2
//!    are kept, reach being the bodies' farthest distance from the
//!    reference point (higher degrees carry no power from sources that
//!    close; the share of power they would carry is reported).
//!
//! Q = ω W / P with P the far-field power.
//!
//! # A decaying mode
//! The mode's field comes from a transform over a decaying ring-down; it is
//! the field at ω̃ = ω + jγ, whose radiation at distance r left the body
//! r/c earlier, so its energy density is U(Ω) e^{2γr/c}/(c r²), and its
//! far field is taken with k̃ ([`super`]). The radiation energy in the ball
//! is therefore W_rad = P (e^{2γa/c} − 1)/(2γ) (→ P a/c for γ → 0), and the
//! multipoles' near field at the sphere, emitted at t − a/c, carries the
//! factor e^{2γa/c} in W_ext (steady-state Q_n otherwise: the O(γ/ω)
//! change of the near field itself is left out). This is our own extension
//! of the definition above to a decaying field. Without it (γ = 0 in the
//! transform and in W_rad), the steady-state formulas applied to the
//! transform's field give Q 1–3 % low on the exact ε_r 38 sphere modes
//! (Q ≈ 45), while with it Q matches the exact Q within the grid's
//! sampling error (`solver/tests/farfield.rs`).
//!
//! # Energy at curved interfaces
//! Where a curved or slanted surface cuts a cell the engine applies the full
//! anisotropic inverse permittivity: E = A D with A = diag(1/(ε0 ε_r)) plus
//! the E_r–E_z coupling of [`crate::coefficients::Coupling`], symmetric in
//! the node-volume inner product. The electric energy is then
//! (1/4) Σ w Re(E*·D) with D = A⁻¹E, solved by conjugate gradients (Jacobi
//! preconditioned) on the coupled nodes only; elsewhere D = ε0 ε_r E. This is
//! the energy the scheme itself conserves, so the Poynting balance holds
//! for it.
//!
//! # φ-integrals
//! The energy and the powers carry the same factor Φ = ∫cos² mφ dφ =
//! ∫ sin² mφ dφ ([`super::phi_norm`]: π for m ≥ 1, 2π for m = 0), which
//! cancels in Q.
use super::special::{exterior_q, gauss_legendre, vector_harmonics};
use super::surface::body_nodes;
use super::{phi_norm, FarFieldError, LowerSpace, Radiator};
use crate::boundary::ZWall;
use crate::coefficients::Coupling;
use crate::consts::{C0, EPS0, ETA0, MU0};
use lathe_mesh::Component;
use num_complex::Complex64 as C;

/// Options of [`Radiator::stored_energy`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnergyOptions {
    /// Radius of the ball as a fraction of the largest ball that fits
    /// inside the surface (0 < f ≤ 1). Default 1.
    pub ball_fraction: f64,
    /// Multipole degrees kept beyond max(m,1) + ⌈k·reach⌉. Default 2.
    pub extra_degrees: u32,
}

impl Default for EnergyOptions {
    fn default() -> Self {
        EnergyOptions {
            ball_fraction: 1.0,
            extra_degrees: 2,
        }
    }
}

/// Powers of the outgoing multipoles of the far field (whole space, images
/// included).
#[derive(Debug, Clone, PartialEq)]
pub struct Multipoles {
    /// Degrees n.
    pub degrees: Vec<u32>,
    /// Power of the TE (magnetic) multipole of each degree, W.
    pub te_w: Vec<f64>,
    /// Power of the TM (electric) multipole of each degree, W.
    pub tm_w: Vec<f64>,
    /// Far-field power by direct quadrature, W.
    pub total_w: f64,
}

impl Multipoles {
    /// Share of the power carried by the listed degrees.
    pub fn captured(&self) -> f64 {
        let s: f64 = self.te_w.iter().chain(&self.tm_w).sum();
        s / self.total_w
    }
}

/// The parts of the stored energy of a mode (physical space: the upper half
/// over a ground plane), J, and its Q.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredEnergy {
    /// Radius of the ball, m.
    pub radius_m: f64,
    /// Farthest body node from the reference point, m.
    pub reach_m: f64,
    /// Total energy in the ball.
    pub ball_j: f64,
    /// Radiation-field energy in the ball (removed).
    pub radiated_j: f64,
    /// Stored energy outside the ball (multipoles).
    pub exterior_j: f64,
    /// W = ball − radiated + exterior.
    pub stored_j: f64,
    /// Radiated power, W.
    pub power_w: f64,
    /// Q = ω W / P.
    pub q: f64,
    /// The multipoles used, and the share of power beyond them.
    pub multipoles: Multipoles,
    /// Degree of the highest multipole kept in the exterior energy.
    pub top_degree: u32,
    /// Share of the far-field power not carried by the degrees kept (the
    /// exterior energy of that part is left out).
    pub uncaptured: f64,
}

/// Region a node's dual cell is clipped to.
#[derive(Clone, Copy)]
struct Clip {
    r_max: f64,
    z_min: f64,
    z_max: f64,
    /// (centre z, radius) of a ball, if any.
    ball: Option<(f64, f64)>,
}

/// ∫ r dr dz over the dual cell of a node at (r, z), clipped.
fn node_weight(r: f64, z: f64, dr: f64, dz: f64, c: &Clip) -> f64 {
    let r0 = (r - 0.5 * dr).max(0.0);
    let r1 = (r + 0.5 * dr).min(c.r_max);
    let z0 = (z - 0.5 * dz).max(c.z_min);
    let z1 = (z + 0.5 * dz).min(c.z_max);
    if r1 <= r0 || z1 <= z0 {
        return 0.0;
    }
    let full = 0.5 * (r1 * r1 - r0 * r0) * (z1 - z0);
    let Some((zc, a)) = c.ball else {
        return full;
    };
    let far_z = (z0 - zc).abs().max((z1 - zc).abs());
    if r1.hypot(far_z) <= a {
        return full;
    }
    let near_z = if z0 <= zc && zc <= z1 {
        0.0
    } else {
        (z0 - zc).abs().min((z1 - zc).abs())
    };
    if r0.hypot(near_z) >= a {
        return 0.0;
    }
    const S: usize = 16;
    let (hr, hz) = ((r1 - r0) / S as f64, (z1 - z0) / S as f64);
    let mut sum = 0.0;
    for p in 0..S {
        let rr = r0 + (p as f64 + 0.5) * hr;
        for q in 0..S {
            let zz = z0 + (q as f64 + 0.5) * hz;
            if rr.hypot(zz - zc) < a {
                sum += rr;
            }
        }
    }
    sum * hr * hz
}

/// One coupled node of the D-from-E solve: (flat index, is E_r,
/// 1/(ε0 ε_r), volume weight, taps as (unknown, coefficient)).
type Row = (usize, bool, f64, f64, Vec<(usize, f64)>);

/// D at the electric nodes (E_r, E_φ, E_z arrays): ε0 ε_r E, or A⁻¹E at the
/// nodes coupled by the off-diagonal permittivity (see the module docs).
pub(crate) fn displacement(rad: &Radiator) -> [Vec<C>; 3] {
    let map = rad.data.materials;
    let g = rad.data.grid;
    let comp = |c: Component| {
        let k = Component::ALL.iter().position(|&x| x == c).unwrap();
        &rad.components[k]
    };
    let diag = |c: Component| -> Vec<C> {
        let nm = map.component(c);
        comp(c)
            .iter()
            .zip(&nm.eps_r)
            .zip(&nm.pec)
            .map(|((e, &eps), &p)| {
                if p {
                    C::new(0.0, 0.0)
                } else {
                    *e * (EPS0 * eps)
                }
            })
            .collect()
    };
    let mut d = [
        diag(Component::Er),
        diag(Component::Ephi),
        diag(Component::Ez),
    ];
    let Some(cp) = Coupling::new(map, rad.data.walls, rad.data.m, 1.0, rad.data.axis_rod) else {
        return d;
    };
    // Unknowns: the coupled E_r nodes, then the coupled E_z nodes (every
    // node with a tap or tapped, in index order).
    let mut set_er = std::collections::BTreeSet::new();
    let mut set_ez = std::collections::BTreeSet::new();
    // Every list's own nodes, and the nodes its taps read.
    for (l, _) in cp.er.iter().chain(&cp.er_er) {
        set_er.insert(*l);
    }
    for (k, _) in cp.ez.iter().chain(&cp.ez_ez) {
        set_ez.insert(*k);
    }
    for (_, taps) in cp.ez.iter().chain(&cp.er_er) {
        set_er.extend(taps.iter().map(|t| t.0));
    }
    for (_, taps) in cp.er.iter().chain(&cp.ez_ez) {
        set_ez.extend(taps.iter().map(|t| t.0));
    }
    let ner = set_er.len();
    let pos_er: std::collections::HashMap<usize, usize> =
        set_er.iter().enumerate().map(|(q, &l)| (l, q)).collect();
    let pos_ez: std::collections::HashMap<usize, usize> = set_ez
        .iter()
        .enumerate()
        .map(|(q, &k)| (k, ner + q))
        .collect();
    let n = ner + set_ez.len();
    let taps_of = |list: &[(usize, Vec<(usize, f64)>)]| -> std::collections::HashMap<usize, Vec<(usize, f64)>> {
        list.iter().cloned().collect()
    };
    let (t_er, t_ez, t_rr, t_zz) = (
        taps_of(&cp.er),
        taps_of(&cp.ez),
        taps_of(&cp.er_er),
        taps_of(&cp.ez_ez),
    );
    // Rows: (flat index, is E_r, 1/(ε0 ε_r), weight, taps as (unknown, coefficient)).
    let nj1 = g.nz + 1;
    let pmc = |j: usize| {
        (j == 0 && rad.data.walls.bottom == ZWall::Pmc)
            || (j == g.nz && rad.data.walls.top == ZWall::Pmc)
    };
    let mut rows: Vec<Row> = Vec::with_capacity(n);
    for &l in &set_er {
        let (i, j) = (l / nj1, l % nj1);
        let w = g.r_half(i) * if pmc(j) { 0.5 } else { 1.0 };
        let a = 1.0 / (EPS0 * map.er.eps_r[l]);
        let mut taps: Vec<(usize, f64)> = Vec::new();
        if let Some(t) = t_er.get(&l) {
            taps.extend(t.iter().map(|&(k, c)| (pos_ez[&k], c)));
        }
        if let Some(t) = t_rr.get(&l) {
            taps.extend(t.iter().map(|&(k, c)| (pos_er[&k], c)));
        }
        rows.push((l, true, a, w, taps));
    }
    for &k in &set_ez {
        let i = k / g.nz;
        let w = if i == 0 { g.dr / 8.0 } else { g.r_int(i) };
        let a = 1.0 / (EPS0 * map.ez.eps_r[k]);
        let mut taps: Vec<(usize, f64)> = Vec::new();
        if let Some(t) = t_ez.get(&k) {
            taps.extend(t.iter().map(|&(l, c)| (pos_er[&l], c)));
        }
        if let Some(t) = t_zz.get(&k) {
            taps.extend(t.iter().map(|&(l, c)| (pos_ez[&l], c)));
        }
        rows.push((k, false, a, w, taps));
    }
    let (er, ez) = (comp(Component::Er), comp(Component::Ez));
    // B = W A is symmetric positive definite; solve B x = W e by
    // Jacobi-preconditioned conjugate gradients.
    let apply = |x: &[C]| -> Vec<C> {
        rows.iter()
            .enumerate()
            .map(|(q, (_, _, a, w, taps))| {
                let s: C = taps.iter().map(|&(u, c)| x[u] * c).sum();
                (x[q] * *a + s) * *w
            })
            .collect()
    };
    let b: Vec<C> = rows
        .iter()
        .map(|(f, is_r, _, w, _)| if *is_r { er[*f] * *w } else { ez[*f] * *w })
        .collect();
    let pre: Vec<f64> = rows.iter().map(|(_, _, a, w, _)| 1.0 / (a * w)).collect();
    let mut x: Vec<C> = b.iter().zip(&pre).map(|(b, p)| b * p).collect();
    let bx = apply(&x);
    let mut r: Vec<C> = b.iter().zip(&bx).map(|(b, y)| b - y).collect();
    let norm_b = b.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt();
    let mut z: Vec<C> = r.iter().zip(&pre).map(|(r, p)| r * p).collect();
    let mut p = z.clone();
    let dotc = |a: &[C], b: &[C]| -> C { a.iter().zip(b).map(|(x, y)| x.conj() * y).sum() };
    let mut rz = dotc(&r, &z);
    for _ in 0..1000 {
        let rn = r.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt();
        if rn <= 1e-14 * norm_b || norm_b == 0.0 {
            break;
        }
        let bp = apply(&p);
        let alpha = rz / dotc(&p, &bp);
        for q in 0..n {
            x[q] += alpha * p[q];
            r[q] -= alpha * bp[q];
        }
        z = r.iter().zip(&pre).map(|(r, p)| r * p).collect();
        let rz_new = dotc(&r, &z);
        let beta = rz_new / rz;
        rz = rz_new;
        for q in 0..n {
            p[q] = z[q] + beta * p[q];
        }
    }
    for (q, (f, is_r, _, _, _)) in rows.iter().enumerate() {
        if *is_r {
            d[0][*f] = x[q];
        } else {
            d[2][*f] = x[q];
        }
    }
    d
}

/// Σ (1/4) Re(E*·D + μ|H|²)·Φ·(r dr dz) over the nodes of the grid, clipped.
fn energy_in(rad: &Radiator, clip: &Clip) -> f64 {
    let g = rad.data.grid;
    let d = displacement(rad);
    let mut total = 0.0;
    for (k, &c) in Component::ALL.iter().enumerate() {
        let (_, len) = c.shape(g);
        let v = &rad.components[k];
        let dv = match c {
            Component::Er => Some(&d[0]),
            Component::Ephi => Some(&d[1]),
            Component::Ez => Some(&d[2]),
            _ => None,
        };
        for (n, x) in v.iter().enumerate() {
            let (i, j) = (n / len, n % len);
            let (r, z) = c.position(g, i, j);
            let w = node_weight(r, z, g.dr, g.dz, clip);
            if w == 0.0 {
                continue;
            }
            let density = match dv {
                Some(dd) => (x.conj() * dd[n]).re,
                None => MU0 * x.norm_sqr(),
            };
            total += w * density;
        }
    }
    0.25 * phi_norm(rad.data.m) * total
}

/// Total energy inside the surface (both halves for a mirror plane).
pub(crate) fn box_energy(rad: &Radiator) -> f64 {
    let s = rad.surface;
    let clip = Clip {
        r_max: s.radius_m,
        z_min: s.z_bottom_m,
        z_max: s.z_top_m,
        ball: None,
    };
    let w = energy_in(rad, &clip);
    match rad.lower {
        LowerSpace::Mirror(_) => 2.0 * w,
        _ => w,
    }
}

impl Radiator<'_> {
    /// Projects the far field (whole space, images included) on the outgoing
    /// multipoles of degrees max(m,1) … `top`.
    ///
    /// With the TM and TE angular profiles (τ_n, −π_n) and (π_n, −τ_n) of
    /// [`vector_harmonics`], F_θ = Σ (A_n τ_n + B_n π_n),
    /// F_φ = −Σ (A_n π_n + B_n τ_n), so A_n = ∫(F_θ τ_n − F_φ π_n) dx / n(n+1)
    /// and B_n = ∫(F_θ π_n − F_φ τ_n) dx / n(n+1), x = cos θ, and each
    /// multipole radiates Φ n(n+1) |A_n|²/(2η) (resp. B_n). Gauss–Legendre in x.
    pub fn multipoles(&self, top: u32) -> Multipoles {
        let m = self.data.m;
        let n0 = m.max(1);
        let top = top.max(n0);
        let nodes = self.quadrature_points() + top as usize;
        let (x, w) = gauss_legendre(nodes);
        let count = (top - n0 + 1) as usize;
        let (mut a, mut b) = (vec![C::default(); count], vec![C::default(); count]);
        let mut total = 0.0;
        for (xi, wi) in x.iter().zip(&w) {
            let f = self.far_field(xi.acos());
            total += wi * (f.e_theta.norm_sqr() + f.e_phi.norm_sqr());
            let (tau, pi) = vector_harmonics(m, top, *xi);
            for k in 0..count {
                a[k] += *wi * (f.e_theta * tau[k] - f.e_phi * pi[k]);
                b[k] += *wi * (f.e_theta * pi[k] - f.e_phi * tau[k]);
            }
        }
        let scale = phi_norm(m) / (2.0 * ETA0);
        let degrees: Vec<u32> = (n0..=top).collect();
        let nn = |n: u32| (n * (n + 1)) as f64;
        Multipoles {
            te_w: degrees
                .iter()
                .zip(&b)
                .map(|(&n, v)| scale * v.norm_sqr() / nn(n))
                .collect(),
            tm_w: degrees
                .iter()
                .zip(&a)
                .map(|(&n, v)| scale * v.norm_sqr() / nn(n))
                .collect(),
            degrees,
            total_w: scale * total,
        }
    }

    /// The stored energy and Q of the mode (see the [module](self) docs).
    pub fn stored_energy(&self, opts: &EnergyOptions) -> Result<StoredEnergy, FarFieldError> {
        let f = opts.ball_fraction;
        if !(f > 0.0 && f <= 1.0) {
            return Err(FarFieldError::Inconsistent {
                what: format!("ball_fraction {f} is not in (0, 1]"),
            });
        }
        let s = self.surface;
        let z0 = self.origin_z;
        if s.on_plane && (z0 - s.z_bottom_m).abs() > 1e-9 * (s.z_top_m - s.z_bottom_m) {
            return Err(FarFieldError::Inconsistent {
                what:
                    "over an image plane the stored energy needs the reference point on the plane"
                        .into(),
            });
        }
        let largest = if s.on_plane {
            s.radius_m.min(s.z_top_m - z0)
        } else {
            s.radius_m.min(s.z_top_m - z0).min(z0 - s.z_bottom_m)
        };
        if largest <= 0.0 {
            return Err(FarFieldError::TooSmall {
                what: "the reference point lies outside the surface".into(),
            });
        }
        let a = f * largest;
        let g = self.data.grid;
        let cell = 0.5 * g.dr.hypot(g.dz);
        let reach = body_nodes(self.data.materials)
            .map(|(r, z)| r.hypot(z - z0) + cell)
            .fold(0.0, f64::max);
        if reach >= a {
            return Err(FarFieldError::NotEnclosed {
                reach_mm: reach * 1e3,
                radius_mm: a * 1e3,
            });
        }
        let clip = Clip {
            r_max: s.radius_m,
            z_min: s.z_bottom_m,
            z_max: s.z_top_m,
            ball: Some((z0, a)),
        };
        // Whole-space figures (images included), halved over a ground plane.
        let half = self.lower.plane().is_some();
        let ball = energy_in(self, &clip) * if half { 2.0 } else { 1.0 };
        let n0 = self.data.m.max(1);
        let kr = self.k.re;
        let top = n0 + (kr * reach).ceil() as u32 + opts.extra_degrees;
        let project = n0.max(top) + 6;
        let mp = self.multipoles(project);
        let power = mp.total_w;
        let gamma = self.data.decay;
        let growth = 2.0 * gamma * a / C0;
        let radiated = if gamma == 0.0 {
            power * a / C0
        } else {
            power * growth.exp_m1() / (2.0 * gamma)
        };
        let mut exterior = 0.0;
        let mut kept = 0.0;
        for (k, &n) in mp.degrees.iter().enumerate() {
            if n > top {
                break;
            }
            let (qt, qc) = exterior_q(n, kr * a);
            let pn = mp.te_w[k] + mp.tm_w[k];
            exterior += (qt + qc) * pn / self.omega;
            kept += pn;
        }
        exterior *= growth.exp();
        let stored = ball - radiated + exterior;
        let phys = if let LowerSpace::Ground(_) = self.lower {
            0.5
        } else {
            1.0
        };
        Ok(StoredEnergy {
            radius_m: a,
            reach_m: reach,
            ball_j: phys * ball,
            radiated_j: phys * radiated,
            exterior_j: phys * exterior,
            stored_j: phys * stored,
            power_w: phys * power,
            q: self.omega * stored / power,
            multipoles: mp,
            top_degree: top,
            uncaptured: 1.0 - kept / power,
        })
    }
}
