//! Radiation of a mode: equivalent currents on a closed surface of
//! revolution, the far field, directivity, co-/cross-polar cuts, stored
//! energy and Q.
//!
//! # Fields of a decaying mode
//! A mode found by the ring-down decays as e^{−γt}. Its field, taken from
//! the running transform ([`crate::modefield`]), is a solution of Maxwell's
//! equations at the complex frequency ω̃ = ω + jγ (time factor e^{jω̃t}, so
//! Im ω̃ > 0 decays): outside the body it is a wave e^{−jk̃r}/r with
//! k̃ = ω̃/c, whose amplitude grows outward as e^{γr/c} (the field at r left
//! the body r/c earlier, when the mode was stronger). Every integral below
//! is done with k̃; for γ = 0 it is the ordinary steady-state transform.
//!
//! # Equivalent currents (Love's equivalence principle)
//! On a closed surface S enclosing every body, with outward normal n̂, the
//! surface currents J = n̂ × H and M = −n̂ × E radiate, in free space, the
//! field outside S (Balanis, *Antenna Theory*, 3rd ed., ch. 12; section
//! and equation numbers here are from memory). S is a box
//! of revolution in the physical region just inside the absorbers
//! ([`HuygensBox`]): a side cylinder ρ = R, a top disk z = z_t and a bottom
//! disk z = z_b; over a PEC or PMC bottom plane the bottom disk is replaced
//! by the mirror image of the side and top (PEC plane: image J' = −𝓜J,
//! M' = +𝓜M with 𝓜 the reflection of a vector in the plane; PMC plane:
//! J' = 𝓜J, M' = −𝓜M), which follows from E' = ∓𝓜E, H' = ±𝓜H and
//! 𝓜a × 𝓜b = −𝓜(a × b).
//!
//! With E_r, E_z, H_φ ∝ cos mφ and E_φ, H_r, H_z ∝ sin mφ, J has the
//! "cos" pattern (J_ρ, J_z ∝ cos mφ, J_φ ∝ sin mφ) and M the "sin" pattern:
//!
//! | face | J | M |
//! |---|---|---|
//! | side, n̂ = ρ̂ | J_z = h_φ, J_φ = −h_z | M_z = −e_φ, M_φ = e_z |
//! | top, n̂ = ẑ | J_ρ = −h_φ, J_φ = h_r | M_ρ = e_φ, M_φ = −e_r |
//! | bottom, n̂ = −ẑ | opposite signs of the top | |
//!
//! For m = 0 both patterns are φ-independent ("cos 0 = sin 0 = 1" below).
//!
//! # Radiation integrals and the analytic φ-integral
//! Far from S (the vector-potential method, Balanis ch. 6 and 12), with
//! r̂·r' = ρ' sin θ cos(φ − φ') +
//! z' cos θ measured from the reference point on the axis (`origin_z`),
//!
//! ```text
//! E_θ ≈ −jk̃ e^{−jk̃r}/(4πr) (L_φ + η N_θ),   E_φ ≈ +jk̃ e^{−jk̃r}/(4πr) (L_θ − η N_φ),
//! N = ∮ J e^{jk̃ r̂·r'} dS',   L = ∮ M e^{jk̃ r̂·r'} dS'.
//! ```
//!
//! The θ̂ and φ̂ projections of ρ̂', φ̂', ẑ are (cos θ cos ψ, −cos θ sin ψ,
//! −sin θ) and (sin ψ, cos ψ, 0) with ψ = φ' − φ. Writing φ' = φ + ψ, the
//! odd parts in ψ vanish and the Jacobi–Anger expansion
//! e^{jκ cos ψ} = Σ_n j^n J_n(κ) e^{jnψ} (DLMF 10.12.1, any complex κ) gives,
//! with κ = k̃ ρ' sin θ,
//!
//! ```text
//! ∫ cos mφ' cos ψ e^{jκcosψ} dφ' = cos mφ · 𝒫,   ∫ sin mφ' sin ψ e^{…} dφ' =  cos mφ · 𝒬,
//! ∫ sin mφ' cos ψ e^{…} dφ' = sin mφ · 𝒫,        ∫ cos mφ' sin ψ e^{…} dφ' = −sin mφ · 𝒬,
//! ∫ cos mφ' e^{…} dφ' = cos mφ · 𝒮,              ∫ sin mφ' e^{…} dφ' = sin mφ · 𝒮,
//! 𝒫 = π j^{m−1} (J_{m−1}(κ) − J_{m+1}(κ)),  𝒬 = π j^{m−1} (J_{m−1}(κ) + J_{m+1}(κ)),
//! 𝒮 = 2π j^m J_m(κ)    (J_{−1} = −J_1).
//! ```
//!
//! So for a ring of currents at (ρ', z') with coefficients (J_ρ, J_φ, J_z)
//! and (M_ρ, M_φ, M_z) and area element dS' = w dφ',
//!
//! ```text
//! N_θ = cos mφ Σ w e^{jk̃z'cosθ} [J_ρ cos θ 𝒫 − J_φ cos θ 𝒬 − J_z sin θ 𝒮]
//! N_φ = sin mφ Σ w e^{jk̃z'cosθ} [−J_ρ 𝒬 + J_φ 𝒫]
//! L_θ = sin mφ Σ w e^{jk̃z'cosθ} [M_ρ cos θ 𝒫 + M_φ cos θ 𝒬 − M_z sin θ 𝒮]
//! L_φ = cos mφ Σ w e^{jk̃z'cosθ} [M_ρ 𝒬 + M_φ 𝒫]
//! ```
//!
//! and the far field of order m is E_θ = F_θ(θ) cos mφ, E_φ = F_φ(θ) sin mφ
//! (the same split as the near field), r e^{−jk̃r} removed ([`FarField`]).
//! Bessel functions of complex argument: [`special::bessel_j_triplet`], by a
//! rectangle rule whose node values each [`Radiator`] tables once
//! ([`special::BesselTriplets`]; the far field's angles then cost one
//! exponential and one sine–cosine pair per four nodes and radius).
//!
//! # Quadrature on the staggered grid (second order)
//! The side lies on an integer radius i_s, the top on an integer row j_t.
//! Each current component is integrated on the lattice where its field
//! lives: on the side, e_φ and h_z at whole z steps (trapezoid rule, end
//! weights ½), e_z and h_φ at half steps (midpoint rule); on the disks
//! e_φ, h_r at whole radii (trapezoid, weight ρ'Δr) and e_r, h_φ at half
//! radii (midpoint). The tangential H, half a cell off the surface on both
//! sides, is the mean of its two neighbours across the surface. Every
//! product E·H* of the Poynting flux then pairs values at the same point.
//! All rules and the mean are second order in the cell; the surface's edges
//! carry the trapezoid end weights of both faces. Tested by refinement in
//! `solver/tests/farfield.rs`.
//!
//! # φ-integrals of power and energy
//! ∫_0^{2π} cos² mφ dφ = ∫ sin² mφ dφ = π for m ≥ 1, and 2π for m = 0 (where
//! both patterns are 1): [`phi_norm`]. It multiplies the Poynting flux, the
//! far-field power and the stored energy alike, so it cancels in
//! directivity and Q, but the absolute figures carry it.
//!
//! # Power
//! - Through S: P_S = (Φ/2) Re ∮ (e × h*)·n̂ dS, from the same lattices.
//! - In the far field: P = ∮ U dΩ, U = (|E_θ|² + |E_φ|²)/(2η) (r e^{−jk̃r}
//!   removed), by Gauss–Legendre in cos θ. For γ = 0 the two agree
//!   (tested). For a decaying mode P is the power referred to the reference
//!   point (the field leaving it), while P_S is larger by about e^{2γR/c}:
//!   the Poynting balance of a decaying mode is P_S = 2γ W(V) exactly for
//!   the energy W(V) inside S ([`Radiator::poynting_balance_q`]).
//!
//! Directivity D = 4πU/P ([`Radiator::directivity`]); over an infinite
//! ground plane P is over the upper half space only.
//!
//! # Fields from a ring-down transform
//! The running transform of a real decaying signal also picks up the
//! mode's negative-frequency image (amplitude ≈ 1/(4Q) at four samples per
//! period), a field that is not a solution at ω̃. It is found from Faraday's
//! law of the scheme and removed before anything else ([`Leakage`]);
//! without that, energy and flux carry a percent-level error that depends
//! on where the surface is. At m = 0 the other family's components are
//! dropped ([`ModeData::family`]), and at m = 1 the axis values
//! e_φ(0) = −e_r(0), h_r(0) = h_φ(0) are filled in.
//!
//! # Stored energy and Q
//! See [`energy`]: W = W_ball − W_rad + W_ext, Q = ω W / P.
pub mod energy;
mod leakage;
pub mod pattern;
pub mod special;
mod surface;

pub use energy::{EnergyOptions, Multipoles, StoredEnergy};
pub use leakage::Leakage;
pub use pattern::{Cut, Cuts, Peak, Polarisation, FLOOR_DB};
pub use surface::HuygensBox;

use crate::boundary::{OuterWall, Walls, ZWall};
use crate::consts::{C0, ETA0};
use crate::modefield::ModeField;
use crate::modes::Family;
use crate::run::RunOutput;
use lathe_mesh::{Component, Grid, MaterialMap};
use num_complex::Complex64 as C;
use std::f64::consts::PI;
use surface::Ring;
use thiserror::Error;

/// A perfectly conducting plane at the bottom of the region.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Plane {
    /// Perfect electric conductor (tangential E = 0).
    Pec,
    /// Perfect magnetic conductor (tangential H = 0).
    Pmc,
}

/// What lies below the bottom of the region.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LowerSpace {
    /// The bottom wall is an absorber: free space below; the surface is
    /// closed by a bottom disk and the field radiates into the whole space.
    Open,
    /// The bottom wall is an infinite plane that belongs to the structure
    /// (a ground plane): radiation into the upper half space only, computed
    /// with the plane's image.
    Ground(Plane),
    /// The bottom wall is the mid-plane of a symmetric structure solved as
    /// its upper half: the lower half is the mirror image (PEC plane: PEC
    /// image; PMC plane: PMC image), and the field radiates into the whole
    /// space.
    Mirror(Plane),
}

impl LowerSpace {
    /// The image plane, if any.
    pub fn plane(self) -> Option<Plane> {
        match self {
            LowerSpace::Open => None,
            LowerSpace::Ground(p) | LowerSpace::Mirror(p) => Some(p),
        }
    }
}

/// Options of a far-field transform.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FarFieldOptions {
    /// What lies below the region (must match the bottom wall).
    pub lower: LowerSpace,
    /// Cells between the surface and the absorbers. Default 2: the surface
    /// must lie in the physical region and keep one H node on each side.
    pub margin_cells: usize,
    /// Reference point on the axis, m (phase centre of the pattern and
    /// origin of the decaying mode's retardation). Default: the image plane;
    /// with an open bottom, the middle of the bodies' z extent (or of the
    /// surface when the region is empty).
    pub origin_z: Option<f64>,
}

impl FarFieldOptions {
    /// Defaults for the given lower space.
    pub fn new(lower: LowerSpace) -> FarFieldOptions {
        FarFieldOptions {
            lower,
            margin_cells: 2,
            origin_z: None,
        }
    }
}

/// What prevents a far-field transform. Lengths in the messages are in mm.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum FarFieldError {
    /// The mode has no field (memory did not allow a running transform).
    #[error("mode {index} has no recorded field (the running transform was not kept)")]
    NoField {
        /// Index of the mode in its run.
        index: usize,
    },
    /// No mode of that index.
    #[error("no mode {index}: the run has {count}")]
    NoMode {
        /// Index asked for.
        index: usize,
        /// Modes in the run.
        count: usize,
    },
    /// The structure does not radiate into free space.
    #[error("no far field: the {wall} wall is {kind}; a far field needs absorbers (pml) at the outer radius and at the top")]
    Closed {
        /// Which wall ("outer" or "top").
        wall: &'static str,
        /// Its kind.
        kind: &'static str,
    },
    /// The lower space does not fit the bottom wall.
    #[error("the bottom wall is {bottom}, which does not fit {asked}")]
    LowerSpaceMismatch {
        /// The bottom wall's kind.
        bottom: &'static str,
        /// What was asked.
        asked: String,
    },
    /// The physical region is too small for the surface.
    #[error("the region is too small for the surface: {what}")]
    TooSmall {
        /// What is too small.
        what: String,
    },
    /// A body reaches the surface (it must lie inside it).
    #[error("a body reaches the radiation surface at r = {r_mm:.3} mm, z = {z_mm:.3} mm; leave at least one cell of free space between the bodies and the absorbers (a body running into an absorber, like an infinite substrate, has no far field here)")]
    BodyOnSurface {
        /// Radius of the offending node, mm.
        r_mm: f64,
        /// z of the offending node, mm.
        z_mm: f64,
    },
    /// The bodies do not fit in the sphere used for the stored energy.
    #[error("the bodies reach {reach_mm:.3} mm from the reference point, beyond the energy sphere of radius {radius_mm:.3} mm that fits inside the surface; enlarge the region")]
    NotEnclosed {
        /// Distance of the farthest body node, mm.
        reach_mm: f64,
        /// Radius of the sphere, mm.
        radius_mm: f64,
    },
    /// A grid, field or material map of the wrong shape.
    #[error("inconsistent input: {what}")]
    Inconsistent {
        /// What does not fit.
        what: String,
    },
}

/// ∫_0^{2π} cos² mφ dφ = ∫ sin² mφ dφ: π for m ≥ 1, 2π for m = 0.
pub fn phi_norm(m: u32) -> f64 {
    if m == 0 {
        2.0 * PI
    } else {
        PI
    }
}

/// Fractional impedance bandwidth of a resonance of quality factor `q` for
/// a match better than `vswr` (> 1): BW = (VSWR − 1)/(Q √VSWR) (Balanis,
/// *Antenna Theory*, 3rd ed., eq. 14-88a). Returns `None` for Q ≤ 0 or
/// VSWR ≤ 1 or non-finite input.
pub fn bandwidth(q: f64, vswr: f64) -> Option<f64> {
    if !(q.is_finite() && vswr.is_finite() && q > 0.0 && vswr > 1.0) {
        return None;
    }
    Some((vswr - 1.0) / (q * vswr.sqrt()))
}

/// One mode's field and everything needed to radiate it.
#[derive(Debug, Clone, Copy)]
pub struct ModeData<'a> {
    /// Azimuthal order.
    pub m: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Field decay rate γ, 1/s (0 for a steady state).
    pub decay: f64,
    /// For m = 0: the family (TE: E_φ, H_r, H_z; TM: E_r, E_z, H_φ). The two
    /// decouple exactly at m = 0, so the other family's components are
    /// other modes' leakage into the running transform and are dropped.
    pub family: Option<Family>,
    /// The phasors.
    pub field: &'a ModeField,
    /// The grid of the run (absorber cells included).
    pub grid: &'a Grid,
    /// The walls of the run.
    pub walls: &'a Walls,
    /// Materials of the run (ε per electric node).
    pub materials: &'a MaterialMap,
    /// Rows of the run's axis rod (see
    /// [`crate::coefficients::axis_rod_rows`]).
    pub axis_rod: usize,
    /// `Some(Δt)` when the phasors come from a running transform over a
    /// real ring-down stepped at Δt (then the transform's negative-frequency
    /// image is removed, see [`Leakage`]); `None` for exact phasors.
    pub ring_down_dt: Option<f64>,
}

impl<'a> ModeData<'a> {
    /// Mode `index` of a finished run, with the run's material map.
    pub fn from_run(
        run: &'a RunOutput,
        index: usize,
        materials: &'a MaterialMap,
    ) -> Result<ModeData<'a>, FarFieldError> {
        let (md, field) = run.mode_with_field(index).ok_or(FarFieldError::NoMode {
            index,
            count: run.modes.len(),
        })?;
        let field = field.ok_or(FarFieldError::NoField { index })?;
        Ok(ModeData {
            m: md.m,
            freq_hz: md.freq_hz,
            decay: if md.q_is_lower_bound { 0.0 } else { md.decay },
            family: md.family,
            field,
            grid: &run.grid,
            walls: &run.walls,
            materials,
            axis_rod: run.report.axis_rod,
            ring_down_dt: Some(run.report.dt),
        })
    }
}

/// The far field of order m at one polar angle: E_θ(θ, φ) = `e_theta`·cos mφ,
/// E_φ(θ, φ) = `e_phi`·sin mφ (both 1 for m = 0), as r·e^{jk̃r}·E, in volts
/// (V/m times m) for fields in V/m and A/m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FarField {
    /// Polar angle, rad.
    pub theta: f64,
    /// Coefficient of cos mφ in r e^{jk̃r} E_θ.
    pub e_theta: C,
    /// Coefficient of sin mφ in r e^{jk̃r} E_φ.
    pub e_phi: C,
}

/// A mode made ready to radiate: its equivalent currents on the surface.
#[derive(Debug, Clone)]
pub struct Radiator<'a> {
    data: ModeData<'a>,
    /// Cleaned field copy (m = 0 family filter, m = 1 axis values).
    components: Vec<Vec<C>>,
    lower: LowerSpace,
    k: C,
    omega: f64,
    origin_z: f64,
    surface: HuygensBox,
    radii: Vec<f64>,
    rings: Vec<Ring>,
    /// J_{m−1}, J_m, J_{m+1} of k ρ sin θ for every radius and angle.
    bessel: special::BesselTriplets,
    p_surface: f64,
    /// Farthest distance of a current from the reference point, m.
    reach: f64,
    leakage: Option<Leakage>,
}

impl<'a> Radiator<'a> {
    /// Builds the surface currents of a mode.
    pub fn new(data: ModeData<'a>, opts: &FarFieldOptions) -> Result<Radiator<'a>, FarFieldError> {
        check_walls(data.walls, opts.lower)?;
        let g = data.grid;
        if data.materials.grid != *g {
            return Err(FarFieldError::Inconsistent {
                what: "the material map is laid on another grid than the run".into(),
            });
        }
        for (k, c) in Component::ALL.iter().enumerate() {
            let (a, b) = c.shape(g);
            if data.field.components.get(k).map(|v| v.len()) != Some(a * b) {
                return Err(FarFieldError::Inconsistent {
                    what: format!("field component {} does not match the grid", c.name()),
                });
            }
        }
        if !(data.freq_hz.is_finite() && data.freq_hz > 0.0 && data.decay.is_finite()) {
            return Err(FarFieldError::Inconsistent {
                what: format!("frequency {} Hz, decay {} 1/s", data.freq_hz, data.decay),
            });
        }
        let mut components = surface::clean_components(&data);
        let surface = HuygensBox::place(g, data.walls, opts)?;
        let omega = 2.0 * PI * data.freq_hz;
        let leakage = data.ring_down_dt.map(|dt| {
            let reg = surface::Region::of(g, data.walls);
            leakage::remove_image(
                g,
                &reg,
                data.m,
                C::new(omega, data.decay),
                dt,
                &mut components,
            )
        });
        surface::check_bodies(data.materials, &surface)?;
        let origin_z = match (opts.origin_z, opts.lower.plane()) {
            (Some(z), _) => z,
            (None, Some(_)) => surface.z_bottom_m,
            (None, None) => surface::body_centre(data.materials)
                .unwrap_or(0.5 * (surface.z_bottom_m + surface.z_top_m)),
        };
        let k = C::new(omega, data.decay) / C0;
        let (radii, rings, p_surface) =
            surface::rings(g, &components, &surface, opts.lower, origin_z, data.m);
        let reach = rings
            .iter()
            .map(|r| radii[r.radius].hypot(r.z))
            .fold(0.0, f64::max);
        let rho_max = radii.iter().fold(0.0, |a: f64, &r| a.max(r));
        let bessel = special::BesselTriplets::new(data.m, k.norm() * rho_max, k.im.abs() * rho_max);
        Ok(Radiator {
            data,
            components,
            lower: opts.lower,
            k,
            omega,
            origin_z,
            surface,
            radii,
            rings,
            bessel,
            p_surface,
            reach,
            leakage,
        })
    }

    /// The negative-frequency image removed from a ring-down transform
    /// (`None` for exact phasors).
    pub fn leakage(&self) -> Option<Leakage> {
        self.leakage
    }

    /// Azimuthal order.
    pub fn m(&self) -> u32 {
        self.data.m
    }

    /// The surface.
    pub fn surface(&self) -> HuygensBox {
        self.surface
    }

    /// The lower space.
    pub fn lower(&self) -> LowerSpace {
        self.lower
    }

    /// k̃ = (ω + jγ)/c, 1/m.
    pub fn wavenumber(&self) -> C {
        self.k
    }

    /// ω = 2πf, rad/s.
    pub fn omega(&self) -> f64 {
        self.omega
    }

    /// Field decay rate γ, 1/s.
    pub fn decay(&self) -> f64 {
        self.data.decay
    }

    /// Reference point on the axis, m.
    pub fn origin_z(&self) -> f64 {
        self.origin_z
    }

    /// The far field at polar angle `theta` (rad, 0 … π).
    pub fn far_field(&self, theta: f64) -> FarField {
        let m = self.data.m;
        let (st, ct) = theta.sin_cos();
        let jm1 = j_power(m as i32 - 1);
        let jm = j_power(m as i32);
        // 𝒫, 𝒬, 𝒮 per distinct radius.
        let pqs: Vec<(C, C, C)> = self
            .radii
            .iter()
            .map(|&rho| {
                let (a, b, c) = self.bessel.get(self.k * rho * st);
                (PI * jm1 * (a - c), PI * jm1 * (a + c), 2.0 * PI * jm * b)
            })
            .collect();
        let (mut nth, mut nph, mut lth, mut lph) =
            (C::default(), C::default(), C::default(), C::default());
        for r in &self.rings {
            let (p, q, s) = pqs[r.radius];
            let w = r.weight * (C::i() * self.k * r.z * ct).exp();
            let [jr, jp, jz] = r.j;
            let [mr, mp, mz] = r.mc;
            nth += w * (jr * ct * p - jp * ct * q - jz * st * s);
            nph += w * (-jr * q + jp * p);
            lth += w * (mr * ct * p + mp * ct * q - mz * st * s);
            lph += w * (mr * q + mp * p);
        }
        let f = C::i() * self.k / (4.0 * PI);
        FarField {
            theta,
            e_theta: -f * (lph + ETA0 * nth),
            e_phi: f * (lth - ETA0 * nph),
        }
    }

    /// Radiation intensity U(θ, φ) = (|E_θ|² + |E_φ|²)/(2η), W/sr.
    pub fn intensity(&self, theta: f64, phi: f64) -> f64 {
        let f = self.far_field(theta);
        intensity_of(&f, self.data.m, phi)
    }

    /// Radiated power through the surface, P_S = (Φ/2) Re ∮ (E × H*)·n̂ dS,
    /// W: over both halves for a mirror plane, over the upper half over a
    /// ground plane.
    pub fn surface_power(&self) -> f64 {
        self.p_surface
    }

    /// Gauss–Legendre points in cos θ enough for the far field's angular
    /// band limit (degree ≲ k R + a few tens for currents within R).
    fn quadrature_points(&self) -> usize {
        2 * (self.k.re * self.reach).ceil() as usize + 32
    }

    /// Radiated power from the far field, P = ∮ U dΩ, W (upper half space
    /// only over a ground plane).
    pub fn far_power(&self) -> f64 {
        let (x, w) = special::gauss_legendre(self.quadrature_points());
        let mut total = 0.0;
        for (xi, wi) in x.iter().zip(&w) {
            let f = self.far_field(xi.acos());
            total += wi * (f.e_theta.norm_sqr() + f.e_phi.norm_sqr());
        }
        let full = phi_norm(self.data.m) * total / (2.0 * ETA0);
        match self.lower {
            LowerSpace::Ground(_) => 0.5 * full,
            _ => full,
        }
    }

    /// Directivity D(θ, φ) = 4π U(θ, φ)/P for a known power `p_rad`
    /// ([`Radiator::far_power`]); zero below a ground plane.
    pub fn directivity_with(&self, theta: f64, phi: f64, p_rad: f64) -> f64 {
        if matches!(self.lower, LowerSpace::Ground(_)) && theta > 0.5 * PI + 1e-12 {
            return 0.0;
        }
        4.0 * PI * self.intensity(theta, phi) / p_rad
    }

    /// Directivity D(θ, φ) (computes the far-field power each call).
    pub fn directivity(&self, theta: f64, phi: f64) -> f64 {
        self.directivity_with(theta, phi, self.far_power())
    }

    /// ω W(V)/P_S for the total time-averaged energy W(V) inside the surface
    /// and the power through it. For a decaying mode, Poynting's theorem
    /// splits into the part ∝ e^{−2γt} and the parts oscillating at 2ω;
    /// the first gives P_S = 2γ W(V) exactly, so this ratio equals
    /// ω/(2γ) = Q for any surface: a check of field, energy and flux.
    pub fn poynting_balance_q(&self) -> f64 {
        let w = energy::box_energy(self);
        self.omega * w / self.p_surface
    }
}

/// U for a far-field sample at azimuth φ.
pub(crate) fn intensity_of(f: &FarField, m: u32, phi: f64) -> f64 {
    let (c, s) = if m == 0 {
        (1.0, 1.0)
    } else {
        let (s, c) = (m as f64 * phi).sin_cos();
        (c, s)
    };
    ((f.e_theta * c).norm_sqr() + (f.e_phi * s).norm_sqr()) / (2.0 * ETA0)
}

/// j^n for any integer n.
fn j_power(n: i32) -> C {
    match n.rem_euclid(4) {
        0 => C::new(1.0, 0.0),
        1 => C::new(0.0, 1.0),
        2 => C::new(-1.0, 0.0),
        _ => C::new(0.0, -1.0),
    }
}

fn check_walls(w: &Walls, lower: LowerSpace) -> Result<(), FarFieldError> {
    if let OuterWall::Pec = w.outer {
        return Err(FarFieldError::Closed {
            wall: "outer",
            kind: "pec",
        });
    }
    match w.top {
        ZWall::Pml(_) => {}
        other => {
            return Err(FarFieldError::Closed {
                wall: "top",
                kind: other.name(),
            })
        }
    }
    let fits = matches!(
        (w.bottom, lower),
        (ZWall::Pml(_), LowerSpace::Open)
            | (ZWall::Pec, LowerSpace::Ground(Plane::Pec))
            | (ZWall::Pec, LowerSpace::Mirror(Plane::Pec))
            | (ZWall::Pmc, LowerSpace::Ground(Plane::Pmc))
            | (ZWall::Pmc, LowerSpace::Mirror(Plane::Pmc))
    );
    if !fits {
        return Err(FarFieldError::LowerSpaceMismatch {
            bottom: w.bottom.name(),
            asked: format!("{lower:?}"),
        });
    }
    Ok(())
}
