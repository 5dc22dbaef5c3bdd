//! Exact complex resonances of a dielectric sphere in free space, and of a
//! hemisphere on an infinite PEC plane.
//!
//! For a sphere of radius a and index N = √ε_r (μ_r = 1), with x = k0 a and
//! the Riccati–Bessel functions ψ_n(z) = z j_n(z), ξ_n(z) = z h_n⁽¹⁾(z)
//! (outgoing for the time factor e^{−iωt}), the natural modes of degree n
//! satisfy (Stratton, *Electromagnetic Theory*, 1941, §9.22–9.25; Gastine,
//! Courtois & Dormann, IEEE T-MTT 15(12), 1967):
//!
//! ```text
//! TE_n:  N ψ_n'(Nx) ξ_n(x) − ψ_n(Nx) ξ_n'(x) = 0
//! TM_n:  ψ_n'(Nx) ξ_n(x) − N ψ_n(Nx) ξ_n'(x) = 0
//! ```
//!
//! (the ratios of the usual form, cleared of denominators). The roots are
//! complex with Im x < 0 (decaying in time); f = Re(x)·c/(2πa) and
//! Q = Re(x)/(2|Im x|). A mode of degree n appears at every azimuthal order
//! |m| ≤ n. On a PEC plane through the centre, the modes with zero
//! tangential E on the equator survive with the same f and Q: TE_nm with
//! n + m even and TM_nm with n + m odd; on a PMC plane, the others.
//!
//! j_n and h_n⁽¹⁾ are elementary; they are evaluated here in closed form for
//! n ≤ 3.
use crate::consts::C0;
use num_complex::Complex64 as C;
use std::f64::consts::PI;

/// Field family of a sphere mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SphereFamily {
    /// Transverse electric (no radial E): magnetic multipole.
    Te,
    /// Transverse magnetic (no radial H): electric multipole.
    Tm,
}

/// One natural mode of a dielectric sphere.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SphereMode {
    /// Family.
    pub family: SphereFamily,
    /// Degree n (1 = dipole, 2 = quadrupole, …).
    pub n: u32,
    /// Complex root x = k0 a.
    pub x: C,
    /// Resonance frequency, Hz.
    pub freq_hz: f64,
    /// Radiation Q.
    pub q: f64,
}

impl SphereMode {
    /// Label, e.g. "TE1" or "TM2".
    pub fn label(&self) -> String {
        let f = match self.family {
            SphereFamily::Te => "TE",
            SphereFamily::Tm => "TM",
        };
        format!("{f}{}", self.n)
    }

    /// Whether the mode of order `m` survives a PEC plane through the centre
    /// (true) or needs a PMC plane (false).
    pub fn survives_pec_plane(&self, m: u32) -> bool {
        let even = (self.n + m) % 2 == 0;
        match self.family {
            SphereFamily::Te => even,
            SphereFamily::Tm => !even,
        }
    }
}

/// Spherical Bessel j_n(z), n ≤ 3, closed form (DLMF 10.49.3).
pub fn sph_j(n: u32, z: C) -> C {
    let (s, c) = (z.sin(), z.cos());
    let z2 = z * z;
    match n {
        0 => s / z,
        1 => s / z2 - c / z,
        2 => (3.0 / (z2 * z) - 1.0 / z) * s - 3.0 * c / z2,
        3 => (15.0 / (z2 * z2) - 6.0 / z2) * s - (15.0 / (z2 * z) - 1.0 / z) * c,
        _ => panic!("expected n ≤ 3, got {n}"),
    }
}

/// Spherical Hankel h_n⁽¹⁾(z) = j_n + i y_n, n ≤ 3 (DLMF 10.49.6).
pub fn sph_h1(n: u32, z: C) -> C {
    let i = C::i();
    let e = (i * z).exp() / z;
    let w = i / z; // powers of i/z
    match n {
        0 => -i * e,
        1 => -e * (1.0 + w),
        2 => i * e * (1.0 + 3.0 * w + 3.0 * w * w),
        3 => e * (1.0 + 6.0 * w + 15.0 * w * w + 15.0 * w * w * w),
        _ => panic!("expected n ≤ 3, got {n}"),
    }
}

/// Riccati–Bessel value and derivative (z f_n, (z f_n)' = z f_{n−1} − n f_n).
fn riccati(f: fn(u32, C) -> C, n: u32, z: C) -> (C, C) {
    (z * f(n, z), z * f(n - 1, z) - (n as f64) * f(n, z))
}

/// The characteristic function of `family`, degree n, at x for index N.
pub fn characteristic(family: SphereFamily, n: u32, big_n: f64, x: C) -> C {
    let (p, dp) = riccati(sph_j, n, x * big_n);
    let (xi, dxi) = riccati(sph_h1, n, x);
    match family {
        SphereFamily::Te => big_n * dp * xi - p * dxi,
        SphereFamily::Tm => dp * xi - big_n * p * dxi,
    }
}

/// Newton's method with a central-difference derivative, damped so a step
/// never exceeds a tenth of |x|. Returns the root or None.
fn newton(g: impl Fn(C) -> C, mut x: C) -> Option<C> {
    for _ in 0..200 {
        let h = 1e-7 * x.norm();
        let fx = g(x);
        let d = (g(x + h) - g(x - h)) / (2.0 * h);
        if d.norm() == 0.0 || !d.is_finite() {
            return None;
        }
        let mut step = fx / d;
        if step.norm() > 0.1 * x.norm() {
            step *= 0.1 * x.norm() / step.norm();
        }
        x -= step;
        if step.norm() < 1e-15 * x.norm() {
            return Some(x);
        }
    }
    None
}

/// The lowest (first radial order) mode of `family` and degree n (1 ≤ n ≤ 3)
/// of a sphere of relative permittivity `eps_r` (> 1.5) and `radius_m`.
///
/// The root is followed by continuation in N from N = 30, where the
/// large-index limits are accurate starting points, down to √ε_r. The
/// limits: for small x, ξ_n'/ξ_n ≈ −n/x is large, so TE_n needs
/// z ψ_n'(z) + n ψ_n(z) ≈ 0 at z = Nx, i.e. j_{n−1}(z) = 0; TM_n needs
/// ψ_n(z) ≈ 0, i.e. j_n(z) = 0 (the magnetic dipole of a high-index sphere
/// at N k0 a ≈ π, the electric dipole at ≈ 4.493).
pub fn sphere_mode(family: SphereFamily, n: u32, eps_r: f64, radius_m: f64) -> Option<SphereMode> {
    assert!((1..=3).contains(&n), "expected degree 1 … 3, got {n}");
    assert!(eps_r > 1.5, "expected ε_r > 1.5, got {eps_r}");
    let target = eps_r.sqrt();
    // First zeros of j_0 … j_3 (DLMF 10.21; rounded, refined by Newton).
    let zero = |k: u32| [PI, 4.4934, 5.7635, 6.9879][k as usize];
    let start = match family {
        SphereFamily::Te => zero(n - 1),
        SphereFamily::Tm => zero(n),
    };
    let mut big_n = target.max(30.0);
    let mut x = C::new(start / big_n, -1e-4 / big_n);
    loop {
        x = newton(|x| characteristic(family, n, big_n, x), x)?;
        if big_n <= target {
            break;
        }
        let next = (big_n * 0.97).max(target);
        x *= big_n / next; // N x is nearly constant along the path
        big_n = next;
    }
    if !(x.re > 0.0 && x.im < 0.0) {
        return None;
    }
    Some(SphereMode {
        family,
        n,
        x,
        freq_hz: x.re * C0 / (2.0 * PI * radius_m),
        q: x.re / (2.0 * x.im.abs()),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spherical_bessel_values() {
        // A&S Table 10.1 (from memory): j1(1) = 0.3011686789, j2(1) = 0.0620350520,
        // y1(1) = −1.3817732907.
        let one = C::new(1.0, 0.0);
        assert!((sph_j(1, one).re - 0.301_168_678_9).abs() < 1e-10);
        assert!((sph_j(2, one).re - 0.062_035_052_0).abs() < 1e-10);
        assert!((sph_h1(1, one).im + 1.381_773_290_7).abs() < 1e-10);
        // Wronskian j_n y_n' … in the form j_n y_{n−1} − j_{n−1} y_n = 1/z² (DLMF 10.50.1).
        for n in 1..=3 {
            let z = C::new(2.3, 0.4);
            let y = |k: u32| (sph_h1(k, z) - sph_j(k, z)) / C::i();
            let w = sph_j(n, z) * y(n - 1) - sph_j(n - 1, z) * y(n);
            assert!((w - 1.0 / (z * z)).norm() < 1e-12, "n = {n}: {w}");
        }
    }

    #[test]
    fn roots_solve_the_equation_and_behave_as_physics_says() {
        for fam in [SphereFamily::Te, SphereFamily::Tm] {
            for n in 1..=2 {
                let lo = sphere_mode(fam, n, 10.0, 5e-3).unwrap();
                let hi = sphere_mode(fam, n, 38.0, 5e-3).unwrap();
                for (m, e) in [(lo, 10.0f64), (hi, 38.0)] {
                    let res = characteristic(fam, n, e.sqrt(), m.x).norm();
                    assert!(res < 1e-10, "{} ε {e}: residual {res}", m.label());
                }
                // A denser sphere resonates lower and stores energy better.
                assert!(hi.freq_hz < lo.freq_hz && hi.q > lo.q, "{}", lo.label());
                // Large-index limit: N x → first zero of j_{n−1} (TE) or j_n (TM).
                let limit = [PI, 4.4934, 5.7635][(n - u32::from(fam == SphereFamily::Te)) as usize];
                let far = sphere_mode(fam, n, 4.0e4, 5e-3).unwrap();
                assert!(
                    (far.x.re * 200.0 / limit - 1.0).abs() < 2e-3,
                    "{}",
                    far.label()
                );
            }
        }
        // Frequency scales as 1/radius.
        let a = sphere_mode(SphereFamily::Te, 1, 38.0, 5e-3).unwrap();
        let b = sphere_mode(SphereFamily::Te, 1, 38.0, 2.5e-3).unwrap();
        assert!((b.freq_hz / a.freq_hz - 2.0).abs() < 1e-12);
    }
}
