//! Directivity and its maximum, principal-plane cuts split into co- and
//! cross-polar parts, the front-to-back ratio and directivity maps.
//!
//! # Planes of order m
//! The far field is E_θ = F_θ(θ) cos mφ, E_φ = F_φ(θ) sin mφ. For m ≥ 1 the
//! **E-plane** is φ = 0 (there E_φ = 0: for m = 1 with E_r ∝ cos φ it is the
//! plane of the electric field of the broadside mode, the x–z plane) and
//! the **H-plane** is φ = 90°/m (E_θ = 0; the y–z plane for m = 1). The
//! **diagonal** plane φ = 45°/m is where the cross-polar part of an m = 1
//! field peaks. For m = 0 the pattern is the same in every vertical plane;
//! all three cuts are that plane (φ = 0, 90°, 45°).
//!
//! # Co- and cross-polar parts
//! For m ≥ 1: Ludwig's third definition (A. C. Ludwig, "The definition of
//! cross polarization", IEEE TAP 21(1), 1973) with the reference
//! polarisation x̂, the polarisation of the m = 1 field on the axis (E_r ∝
//! cos φ, E_φ ∝ −sin φ there is E_x):
//! co = E_θ cos φ − E_φ sin φ, cross = E_θ sin φ + E_φ cos φ. In the E- and
//! H-planes of m = 1 the cross-polar part vanishes exactly by symmetry; in
//! the diagonal plane it is (F_θ + F_φ)/2. For m ≥ 2 the same split is a
//! formal one. The definition refers to the forward direction θ = 0: near
//! θ = 180° its co-polar unit vector turns into (−cos 2φ, −sin 2φ, 0), so
//! in the back half space co and cross mix (an x-polarised back lobe shows
//! as cross-polar at φ = 45°). For m = 0: co = E_θ, cross = E_φ when E_θ carries more power
//! (TM-like, a vertical electric dipole), else the other way round.
//!
//! Cut values are partial directivities in dBi, 4π|E_co|²/(2η P) and
//! likewise for cross; an exact zero is written as the floor [`FLOOR_DB`].
use super::{intensity_of, FarField, LowerSpace, Radiator};
use crate::consts::ETA0;
use num_complex::Complex64 as C;
use std::f64::consts::PI;

/// Floor of the dB values of cuts and ratios (an exact zero).
pub const FLOOR_DB: f64 = -300.0;

fn db(x: f64) -> f64 {
    if x > 0.0 {
        (10.0 * x.log10()).max(FLOOR_DB)
    } else {
        FLOOR_DB
    }
}

/// Which polarisation counts as co-polar.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Polarisation {
    /// Ludwig's third definition, reference x̂ (orders m ≥ 1).
    LudwigX,
    /// co = E_θ, cross = E_φ (m = 0, TM-like).
    Theta,
    /// co = E_φ, cross = E_θ (m = 0, TE-like).
    Phi,
}

impl Polarisation {
    /// (co, cross) of the far field (E_θ, E_φ) at azimuth φ.
    pub fn split(self, e_theta: C, e_phi: C, phi: f64) -> (C, C) {
        match self {
            Polarisation::LudwigX => {
                let (s, c) = phi.sin_cos();
                (e_theta * c - e_phi * s, e_theta * s + e_phi * c)
            }
            Polarisation::Theta => (e_theta, e_phi),
            Polarisation::Phi => (e_phi, e_theta),
        }
    }

    /// Name as written in outputs.
    pub fn name(self) -> &'static str {
        match self {
            Polarisation::LudwigX => "Ludwig-3, reference x",
            Polarisation::Theta => "co theta, cross phi",
            Polarisation::Phi => "co phi, cross theta",
        }
    }
}

/// One cut through the pattern in a vertical plane.
#[derive(Debug, Clone, PartialEq)]
pub struct Cut {
    /// Azimuth of the half plane θ ≥ 0, degrees (θ < 0 is φ + 180°).
    pub phi_deg: f64,
    /// Signed polar angles, degrees.
    pub theta_deg: Vec<f64>,
    /// Co-polar partial directivity, dBi.
    pub co_dbi: Vec<f64>,
    /// Cross-polar partial directivity, dBi.
    pub cross_dbi: Vec<f64>,
}

/// The principal-plane cuts and the diagonal plane.
#[derive(Debug, Clone, PartialEq)]
pub struct Cuts {
    /// The co-/cross-polar split used.
    pub polarisation: Polarisation,
    /// E-plane (φ = 0).
    pub e_plane: Cut,
    /// H-plane (φ = 90°/m; φ = 90° for m = 0).
    pub h_plane: Cut,
    /// Diagonal plane (φ = 45°/m; 45° for m = 0).
    pub diagonal: Cut,
}

/// The direction and value of the largest directivity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Peak {
    /// Directivity (linear).
    pub directivity: f64,
    /// Polar angle, rad.
    pub theta: f64,
    /// Azimuth, rad.
    pub phi: f64,
}

impl Peak {
    /// Directivity in dBi.
    pub fn dbi(&self) -> f64 {
        db(self.directivity)
    }
}

impl Radiator<'_> {
    /// E_θ(θ, φ), E_φ(θ, φ) of a far-field sample at azimuth φ.
    pub fn components_at(&self, f: &FarField, phi: f64) -> (C, C) {
        let m = self.m();
        if m == 0 {
            return (f.e_theta, f.e_phi);
        }
        let (s, c) = (m as f64 * phi).sin_cos();
        (f.e_theta * c, f.e_phi * s)
    }

    /// Largest polar angle with free space: π, or π/2 over a ground plane.
    pub fn theta_end(&self) -> f64 {
        match self.lower() {
            LowerSpace::Ground(_) => 0.5 * PI,
            _ => PI,
        }
    }

    /// The co-/cross-polar split for this order (see the [module](self) docs).
    pub fn polarisation(&self) -> Polarisation {
        if self.m() >= 1 {
            return Polarisation::LudwigX;
        }
        let (mut a, mut b) = (0.0, 0.0);
        for k in 0..=90 {
            let t = PI * k as f64 / 90.0;
            let f = self.far_field(t);
            a += f.e_theta.norm_sqr() * t.sin();
            b += f.e_phi.norm_sqr() * t.sin();
        }
        if a >= b {
            Polarisation::Theta
        } else {
            Polarisation::Phi
        }
    }

    /// The largest directivity and its direction: a 1° scan in θ, refined by
    /// golden-section search to 1e-6 rad. For m ≥ 1, U peaks over φ at φ = 0
    /// (|F_θ|²) or φ = 90°/m (|F_φ|²); for m = 0 it does not depend on φ.
    pub fn max_directivity(&self) -> Peak {
        let p = self.far_power();
        let m = self.m();
        let end = self.theta_end();
        let steps = (end.to_degrees().round() as usize).max(2);
        // (value, which component: 0 θ, 1 φ).
        let score = |t: f64| -> (f64, usize) {
            let f = self.far_field(t);
            let (a, b) = (f.e_theta.norm_sqr(), f.e_phi.norm_sqr());
            if m == 0 {
                (a + b, 0)
            } else if a >= b {
                (a, 0)
            } else {
                (b, 1)
            }
        };
        let mut best = (f64::NEG_INFINITY, 0.0, 0);
        for k in 0..=steps {
            let t = end * k as f64 / steps as f64;
            let (v, c) = score(t);
            if v > best.0 {
                best = (v, t, c);
            }
        }
        let comp = best.2;
        let value = |t: f64| {
            let f = self.far_field(t);
            match (m, comp) {
                (0, _) => f.e_theta.norm_sqr() + f.e_phi.norm_sqr(),
                (_, 0) => f.e_theta.norm_sqr(),
                _ => f.e_phi.norm_sqr(),
            }
        };
        let h = end / steps as f64;
        let (mut lo, mut hi) = ((best.1 - h).max(0.0), (best.1 + h).min(end));
        let gr = 0.5 * (5f64.sqrt() - 1.0);
        let (mut x1, mut x2) = (hi - gr * (hi - lo), lo + gr * (hi - lo));
        let (mut f1, mut f2) = (value(x1), value(x2));
        while hi - lo > 1e-6 {
            if f1 < f2 {
                lo = x1;
                x1 = x2;
                f1 = f2;
                x2 = lo + gr * (hi - lo);
                f2 = value(x2);
            } else {
                hi = x2;
                x2 = x1;
                f2 = f1;
                x1 = hi - gr * (hi - lo);
                f1 = value(x1);
            }
        }
        let (t, v) = [(best.1, best.0), (x1, f1), (x2, f2)].into_iter().fold(
            (0.0, f64::NEG_INFINITY),
            |a, b| if b.1 > a.1 { b } else { a },
        );
        let phi = if m >= 1 && comp == 1 {
            0.5 * PI / m as f64
        } else {
            0.0
        };
        Peak {
            directivity: 4.0 * PI * v / (2.0 * ETA0 * p),
            theta: t,
            phi,
        }
    }

    /// The angles of a cut, −end … end in `step_deg` (degrees, clamped to
    /// ±end), as k·step for k = −n … n.
    fn cut_angles(&self, step_deg: f64) -> (i64, impl Fn(i64) -> f64) {
        let end = self.theta_end().to_degrees();
        let n = (end / step_deg).round() as i64;
        (n, move |k: i64| (k as f64 * step_deg).clamp(-end, end))
    }

    /// One cut at azimuth `phi` (rad), θ from −end to end in `step_deg`,
    /// from the far field at θ = |k|·step, k = 0 … n (`fields[k]`): the
    /// angle −θ at φ is θ at φ + π, and the far field's θ dependence is the
    /// same at every φ.
    fn cut(&self, phi: f64, step_deg: f64, pol: Polarisation, p: f64, fields: &[FarField]) -> Cut {
        let (n, angle) = self.cut_angles(step_deg);
        let mut theta_deg = Vec::new();
        let (mut co, mut cross) = (Vec::new(), Vec::new());
        for k in -n..=n {
            let td = angle(k);
            let ph = if td < 0.0 { phi + PI } else { phi };
            let f = &fields[k.unsigned_abs() as usize];
            let (et, ep) = self.components_at(f, ph);
            let (c, x) = pol.split(et, ep, ph);
            let d = |e: C| 4.0 * PI * e.norm_sqr() / (2.0 * ETA0 * p);
            theta_deg.push(td);
            co.push(db(d(c)));
            cross.push(db(d(x)));
        }
        Cut {
            phi_deg: phi.to_degrees(),
            theta_deg,
            co_dbi: co,
            cross_dbi: cross,
        }
    }

    /// E-plane, H-plane and diagonal cuts, θ in steps of `step_deg` (> 0)
    /// over −180° … 180° (−90° … 90° over a ground plane).
    pub fn cuts(&self, step_deg: f64) -> Cuts {
        assert!(
            step_deg > 0.0 && step_deg.is_finite(),
            "expected a positive step, got {step_deg}"
        );
        let p = self.far_power();
        let pol = self.polarisation();
        let m = self.m().max(1) as f64;
        // The far field at each |θ| once, for all three cuts and both signs.
        let (n, angle) = self.cut_angles(step_deg);
        let fields: Vec<FarField> = (0..=n)
            .map(|k| self.far_field(angle(k).to_radians()))
            .collect();
        Cuts {
            polarisation: pol,
            e_plane: self.cut(0.0, step_deg, pol, p, &fields),
            h_plane: self.cut(0.5 * PI / m, step_deg, pol, p, &fields),
            diagonal: self.cut(0.25 * PI / m, step_deg, pol, p, &fields),
        }
    }

    /// Front-to-back ratio, dB: directivity at the peak over directivity in
    /// the opposite direction. Only with an open lower half space.
    pub fn front_to_back_db(&self) -> Option<f64> {
        if self.lower() != LowerSpace::Open {
            return None;
        }
        let peak = self.max_directivity();
        let back = self.intensity(PI - peak.theta, peak.phi + PI);
        let front = self.intensity(peak.theta, peak.phi);
        Some(if back > 0.0 {
            db(front / back)
        } else {
            -FLOOR_DB
        })
    }

    /// Directivity (linear) on the lattice `thetas` × `phis` (rad), row-major
    /// in θ; zero below a ground plane.
    pub fn directivity_map(&self, thetas: &[f64], phis: &[f64]) -> Vec<f64> {
        let p = self.far_power();
        let below = matches!(self.lower(), LowerSpace::Ground(_));
        let mut out = Vec::with_capacity(thetas.len() * phis.len());
        for &t in thetas {
            let f = self.far_field(t);
            for &ph in phis {
                out.push(if below && t > 0.5 * PI + 1e-12 {
                    0.0
                } else {
                    4.0 * PI * intensity_of(&f, self.m(), ph) / p
                });
            }
        }
        out
    }
}
