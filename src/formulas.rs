//! Closed-form fits for a cylindrical dielectric resonator on a ground
//! plane, shown beside the full-wave result (`lathe modes
//! --compare-formulas`).
//!
//! Mongia & Bhartia, Int. J. Microwave & Millimeter-Wave CAE 4(3), 1994
//! (reproduced in Balanis, *Antenna Theory*, 4th ed., eqs. 14-108 … 14-110).
//! Here a is the radius and h the height **on the ground plane** (half the
//! height of the equivalent isolated resonator), z = a/h, and
//!
//! ```text
//! HEM11δ: k0 a = 6.324/√(ε_r+2) · (0.27 + 0.18 z + 0.005 z²)
//!         Q    = 0.01007 ε_r^1.3 z {1 + 100 exp[−2.05 (0.5 z − 0.0125 z²)]}
//! TE01δ:  k0 a = 2.327/√(ε_r+1) · (1 + 0.2123 z − 0.00898 z²)
//! TM01δ:  k0 a = √(3.83² + (π z/2)²) / √(ε_r+2)
//! ```
//!
//! Stated accuracy: a few percent in f, about 10 % in Q, for
//! 0.5 ≲ a/h ≲ 5. They fit bare cylinders on an infinite ground only.
use lathe_solver::consts::C0;
use std::f64::consts::PI;

/// One fitted mode.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// Mode name.
    pub label: &'static str,
    /// Resonance frequency, Hz.
    pub freq_hz: f64,
    /// Radiation Q, where the fit gives one.
    pub q: Option<f64>,
}

/// The range of a/h the fits claim.
pub const A_OVER_H: (f64, f64) = (0.5, 5.0);
/// The fits' stated accuracy in f (relative).
pub const F_ACCURACY: f64 = 0.03;
/// The fits' stated accuracy in Q (relative).
pub const Q_ACCURACY: f64 = 0.10;

/// The fits for a cylinder of relative permittivity `eps_r`, radius `a` and
/// height `h` on a ground plane (metres).
pub fn cylinder_on_ground(eps_r: f64, a: f64, h: f64) -> Vec<Fit> {
    let z = a / h;
    let f = |k0a: f64| k0a * C0 / (2.0 * PI * a);
    let hem = 6.324 / (eps_r + 2.0).sqrt() * (0.27 + 0.18 * z + 0.005 * z * z);
    let q_hem =
        0.01007 * eps_r.powf(1.3) * z * (1.0 + 100.0 * (-2.05 * (0.5 * z - 0.0125 * z * z)).exp());
    let te = 2.327 / (eps_r + 1.0).sqrt() * (1.0 + 0.2123 * z - 0.00898 * z * z);
    let tm = (3.83f64.powi(2) + (PI * z / 2.0).powi(2)).sqrt() / (eps_r + 2.0).sqrt();
    vec![
        Fit {
            label: "HEM11δ",
            freq_hz: f(hem),
            q: Some(q_hem),
        },
        Fit {
            label: "TE01δ",
            freq_hz: f(te),
            q: None,
        },
        Fit {
            label: "TM01δ",
            freq_hz: f(tm),
            q: None,
        },
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fits_evaluate_as_written() {
        // Evaluated separately (by hand, with a calculator) for ε_r 38,
        // a = 5.25 mm, h = 2.3 mm (z = 2.28261): HEM11δ k0a = 6.324/√40 ·
        // (0.27 + 0.41087 + 0.02605) = 0.70686 → 6.4241 GHz, Q = 31.25.
        let v = cylinder_on_ground(38.0, 5.25e-3, 2.3e-3);
        let hem = &v[0];
        assert!(
            (hem.freq_hz / 6.4241e9 - 1.0).abs() < 2e-5,
            "{}",
            hem.freq_hz
        );
        assert!((hem.q.unwrap() / 31.247 - 1.0).abs() < 1e-4, "{:?}", hem.q);
        // Q grows with ε_r (∝ ε_r^1.3) at fixed shape.
        let lo = cylinder_on_ground(10.0, 5e-3, 5e-3)[0].q.unwrap();
        let hi = cylinder_on_ground(80.0, 5e-3, 5e-3)[0].q.unwrap();
        assert!((hi / lo / 8f64.powf(1.3) - 1.0).abs() < 1e-12);
        // TM01δ is above HEM11δ for this squat cylinder, as measured.
        assert!(v[2].freq_hz > v[0].freq_hz);
    }
}

/// The scenario of an isolated cylinder of relative permittivity `eps_r`,
/// radius `a_mm` and height 2·`h_mm` (h the height on a ground plane),
/// centred on z = 0 with the region chosen by lathe, searched for m = 0, 1
/// from 0.85 × the lowest fitted frequency to 1.1 × the highest. Used to
/// set the fits against the solver.
pub fn isolated_cylinder(eps_r: f64, a_mm: f64, h_mm: f64) -> crate::scenario::Scenario {
    let fits = cylinder_on_ground(eps_r, a_mm * 1e-3, h_mm * 1e-3);
    let lo = fits.iter().map(|f| f.freq_hz).fold(f64::INFINITY, f64::min) / 1e9;
    let hi = fits.iter().map(|f| f.freq_hz).fold(0.0, f64::max) / 1e9;
    let text = format!(
        "[[body]]\nshape = \"cylinder\"\nradius = {a_mm}\nheight = {}\nbase = {}\neps_r = {eps_r}\n[search]\nm = [0, 1]\nf_min = {:.4}\nf_max = {:.4}\n",
        2.0 * h_mm,
        -h_mm,
        0.85 * lo,
        1.1 * hi
    );
    crate::scenario::Scenario::parse(&text, "isolated cylinder").expect("a well-formed scenario")
}

/// One fitted mode beside the full-wave one.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// The fit.
    pub fit: Fit,
    /// Full-wave frequency and Q of the mode of the same name, if found.
    pub full_wave: Option<(f64, f64)>,
}

impl Comparison {
    /// Relative difference fit/full-wave − 1 in f, and in Q where both exist.
    pub fn differences(&self) -> Option<(f64, Option<f64>)> {
        self.full_wave.map(|(f, q)| {
            (
                self.fit.freq_hz / f - 1.0,
                self.fit.q.map(|fq| fq / q - 1.0),
            )
        })
    }

    /// Whether the difference exceeds the fits' stated accuracy.
    pub fn outside_stated_accuracy(&self) -> bool {
        match self.differences() {
            Some((df, dq)) => df.abs() > F_ACCURACY || dq.is_some_and(|d| d.abs() > Q_ACCURACY),
            None => false,
        }
    }
}

/// The plain cylinder a scenario models, as (ε_r, radius, height on the
/// ground plane, on a ground plane?) in metres: one dielectric cylinder
/// standing on a PEC bottom wall, or centred in an isolated region
/// (mid-plane symmetry, whose half-height is the height on a ground plane).
/// `None` otherwise.
pub fn plain_cylinder(s: &crate::scenario::Scenario) -> Option<(f64, f64, f64, bool)> {
    use lathe_mesh::{Material, Shape};
    use lathe_solver::ZWall;
    let [body] = s.bodies.as_slice() else {
        return None;
    };
    let (
        Shape::Cylinder {
            radius,
            height,
            base,
        },
        Material::Dielectric { eps_r, .. },
    ) = (&body.shape, body.material)
    else {
        return None;
    };
    let tol = 1e-6 * height;
    if s.walls.bottom == ZWall::Pec && (base - s.z_min).abs() <= tol {
        return Some((eps_r, *radius, *height, true));
    }
    if crate::study::halves(s).is_some() {
        return Some((eps_r, *radius, 0.5 * height, false));
    }
    None
}

/// Compares the fits with the modes of `study`. Each fit is set against
/// the mode it describes, picked by symmetry rather than by name: HEM11δ is
/// the lowest m = 1 mode with E tangential zero on the mid-plane (the PEC
/// half, or the ground-plane run), TM01δ the lowest m = 0 TM mode there, and
/// TE01δ the lowest m = 0 TE mode with H tangential zero on it (the PMC
/// half). On a ground plane the TE01δ fit (a mode the PEC plane does not
/// support) is left out.
pub fn compare(
    eps_r: f64,
    a: f64,
    h: f64,
    on_ground: bool,
    study: &crate::study::Study,
) -> Vec<Comparison> {
    use lathe_solver::modes::Family;
    use lathe_solver::ZWall;
    let modes = study.modes();
    let lowest = |m: u32, fam: Option<Family>, plane: ZWall| {
        modes
            .iter()
            .filter(|(md, p)| {
                md.m == m && (fam.is_none() || md.family == fam) && p.is_none_or(|p| p == plane)
            })
            .map(|(md, _)| (md.freq_hz, md.q))
            .next()
    };
    cylinder_on_ground(eps_r, a, h)
        .into_iter()
        .filter(|f| !(on_ground && f.label == "TE01δ"))
        .map(|fit| {
            let full_wave = match fit.label {
                "HEM11δ" => lowest(1, None, ZWall::Pec),
                "TM01δ" => lowest(0, Some(Family::Tm), ZWall::Pec),
                _ => lowest(0, Some(Family::Te), ZWall::Pmc),
            };
            Comparison { fit, full_wave }
        })
        .collect()
}

/// The comparison as text for the `lathe modes` output.
pub fn comparison_text(s: &crate::scenario::Scenario, study: &crate::study::Study) -> String {
    let Some((eps, a, h, on_ground)) = plain_cylinder(s) else {
        return "closed-form fits: not shown — they cover one dielectric cylinder on a PEC ground plane (or centred in an isolated region) only\n".into();
    };
    let z = a / h;
    let mut out = format!(
        "closed-form fits (Mongia & Bhartia 1994; stated accuracy {:.0} % in f, {:.0} % in Q, for a/h {}–{}), ε_r {eps}, a/h = {z:.3}{}\n",
        100.0 * F_ACCURACY,
        100.0 * Q_ACCURACY,
        A_OVER_H.0,
        A_OVER_H.1,
        if z < A_OVER_H.0 || z > A_OVER_H.1 { " — OUTSIDE the fits' range" } else { "" }
    );
    out.push_str("  mode      fit f (GHz)  full-wave f   diff   fit Q   full-wave Q   diff\n");
    for c in compare(eps, a, h, on_ground, study) {
        let fq = c.fit.q.map_or("—".to_string(), |q| format!("{q:.1}"));
        match (c.full_wave, c.differences()) {
            (Some((f, q)), Some((df, dq))) => out.push_str(&format!(
                "  {:<8} {:>11.4}  {:>11.4}  {:>+5.1} %  {:>6}  {:>11.1}  {}{}\n",
                c.fit.label,
                c.fit.freq_hz / 1e9,
                f / 1e9,
                100.0 * df,
                fq,
                q,
                dq.map_or("   —".to_string(), |d| format!("{:>+5.1} %", 100.0 * d)),
                if c.outside_stated_accuracy() { "   beyond the fit's stated accuracy" } else { "" }
            )),
            _ => out.push_str(&format!(
                "  {:<8} {:>11.4}  {:>11}          {:>6}   (no full-wave mode of that kind in the band)\n",
                c.fit.label,
                c.fit.freq_hz / 1e9,
                "—",
                fq
            )),
        }
    }
    out
}
