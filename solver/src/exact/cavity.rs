//! Closed-form resonances of a closed circular-cylinder cavity: the exact
//! answers that body-of-revolution FDTD runs of a cylinder are scored
//! against.
//!
//! # Geometry
//!
//! A cylinder of radius `a` and length `d` (axis `z`, ends at `z = 0` and
//! `z = d`), uniformly filled with relative permittivity `ε_r` and `μ_r = 1`.
//! The side wall `r = a` is a perfect electric conductor (PEC); each end
//! plane is chosen separately as PEC or as a perfect magnetic conductor
//! (PMC).
//!
//! # Modes
//!
//! Inside, every mode is either TM (to `z`, `H_z = 0`) or TE (`E_z = 0`), with
//! the longitudinal field `ψ = J_m(k_c r) e^{imφ} Z(z)` (Pozar, *Microwave
//! Engineering*, §3.4 and §6.3; Harrington, *Time-Harmonic Electromagnetic
//! Fields*, §5.4–5.5 and §5.8 — section numbers from memory). The side wall
//! fixes `k_c`:
//!
//! - TM: `E_z(a) = 0`, so `J_m(k_c a) = 0` and `k_c = j_{m,n}/a`;
//! - TE: `E_φ ∝ ∂H_z/∂r = 0` at `r = a`, so `J'_m(k_c a) = 0` and
//!   `k_c = j'_{m,n}/a`. For `m = 0` the root `k_c = 0` would make `H_z`
//!   uniform with no transverse field; it is not a mode, so `TE_0np` uses
//!   the nonzero zeros `j'_{0,n} = j_{1,n}`.
//!
//! With `Z(z)` built from `cos(k_z z)` and `sin(k_z z)`, the resonance is
//!
//! ```text
//! f = c / (2π √ε_r) · √(k_c² + k_z²) ,   k_z = p π / d ,
//! f_TM,mnp = c / (2π √ε_r) · √((j_{m,n}/a)² + (pπ/d)²) ,
//! f_TE,mnp = c / (2π √ε_r) · √((j'_{m,n}/a)² + (pπ/d)²)
//! ```
//!
//! (Pozar §6.3, Harrington §5.8), with `c = 299 792 458 m/s` exactly
//! ([`crate::consts::C0`]).
//!
//! # End conditions (derived here)
//!
//! The transverse fields follow from the longitudinal one: for TM,
//! `E_t ∝ ∇_t ∂E_z/∂z` and `H_t ∝ ẑ × ∇_t E_z`; for TE, `H_t ∝ ∇_t ∂H_z/∂z`
//! and `E_t ∝ ẑ × ∇_t H_z`. An end plane has normal `ẑ`, so
//!
//! - a PEC end needs tangential `E = 0` and normal `H = 0`:
//!   TM needs `∂E_z/∂z = 0` (a `cos` node of the derivative), TE needs
//!   `H_z = 0` (a `sin` node);
//! - a PMC end (the dual) needs tangential `H = 0` and normal `E = 0`:
//!   TM needs `E_z = 0`, TE needs `∂H_z/∂z = 0`.
//!
//! Hence, writing `p` for the axial index:
//!
//! | ends       | TM                                  | TE                                   |
//! |------------|-------------------------------------|--------------------------------------|
//! | PEC + PEC  | `E_z ∝ cos(pπz/d)`, `p = 0, 1, 2, …` | `H_z ∝ sin(pπz/d)`, `p = 1, 2, …`     |
//! | PMC + PMC  | `E_z ∝ sin(pπz/d)`, `p = 1, 2, …`   | `H_z ∝ cos(pπz/d)`, `p = 0, 1, 2, …`  |
//! | PEC + PMC  | `E_z ∝ cos(pπz/d)`, `p = ½, 3/2, …` | `H_z ∝ sin(pπz/d)`, `p = ½, 3/2, …`   |
//!
//! For PEC at `z = 0` and PMC at `z = d`, TM's `cos(k_z z)` already meets the
//! bottom and needs `cos(k_z d) = 0` at the top, i.e. `k_z d = (q + ½)π`; TE's
//! `sin(k_z z)` needs `cos(k_z d) = 0` as well. Swapping the ends mirrors the
//! field in `z` and leaves the spectrum unchanged. `p = 0` occurs only where
//! the longitudinal field may be uniform in `z`: `TM_mn0` between two PEC
//! ends, `TE_mn0` between two PMC ends.
//!
//! For `m ≥ 1` each `(m, n, p)` is a degenerate pair in the full 3-D cavity
//! (`cos mφ` and `sin mφ`, or `e^{±imφ}`); a body-of-revolution run at fixed
//! azimuthal order sees it once, and that is how it is listed here.

use super::bessel::{bessel_j_prime_zeros_below, bessel_j_zeros_below};
use crate::consts::C0;
use std::f64::consts::PI;
use std::fmt;

/// Boundary condition on one end plane (`z = 0` or `z = d`) of the cavity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum EndWall {
    /// Perfect electric conductor: tangential `E = 0`, normal `H = 0`.
    Pec,
    /// Perfect magnetic conductor: tangential `H = 0`, normal `E = 0`.
    Pmc,
}

impl EndWall {
    /// The end wall matching a solver wall; `None` for an absorber (a closed
    /// cavity has none).
    pub fn from_wall(w: crate::boundary::ZWall) -> Option<EndWall> {
        match w {
            crate::boundary::ZWall::Pec => Some(EndWall::Pec),
            crate::boundary::ZWall::Pmc => Some(EndWall::Pmc),
            crate::boundary::ZWall::Pml(_) => None,
        }
    }
}

/// Mode family, relative to the cavity axis `z`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Family {
    /// Transverse electric: `E_z = 0`; radial roots `j'_{m,n}` (`J'_m = 0`).
    Te,
    /// Transverse magnetic: `H_z = 0`; radial roots `j_{m,n}` (`J_m = 0`).
    Tm,
}

impl Family {
    /// `"TE"` or `"TM"`.
    pub fn as_str(self) -> &'static str {
        match self {
            Family::Te => "TE",
            Family::Tm => "TM",
        }
    }
}

impl fmt::Display for Family {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One resonance `TE_mnp` or `TM_mnp` of the closed cylinder.
///
/// Its frequency is `f = c/(2π√ε_r) · √((χ_mn/a)² + (pπ/d)²)` with
/// `χ_mn = j_{m,n}` (TM) or `j'_{m,n}` (TE) and `p = p_half/2`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CavityMode {
    /// TE or TM.
    pub family: Family,
    /// Azimuthal order `m` (fields `∝ e^{imφ}`).
    pub m: u32,
    /// Radial index `n ≥ 1`: the `n`-th positive zero of `J_m` (TM) or `J'_m`
    /// (TE).
    pub n: u32,
    /// Twice the axial index, `2p`, so that the half-integer `p` of mixed
    /// PEC/PMC ends is exact: even for PEC+PEC and PMC+PMC, odd for mixed
    /// ends. `k_z = (p_half/2)·π/d`.
    pub p_half: u32,
    /// Resonant frequency in hertz.
    pub freq_hz: f64,
}

impl CavityMode {
    /// The axial index `p = p_half / 2` (integer or half-integer).
    pub fn p(&self) -> f64 {
        0.5 * f64::from(self.p_half)
    }

    /// Conventional name of the mode.
    ///
    /// With single-digit `m` and `n` the indices are run together, the axial
    /// one in parentheses unless it is a single-digit integer: `"TE011"`,
    /// `"TM110"`, `"TE01(1/2)"`, `"TM12(3/2)"`, `"TE01(12)"`. Otherwise all
    /// three are listed: `"TM(12,3,4)"`, `"TE(1,10,5/2)"`.
    pub fn label(&self) -> String {
        let p = if self.p_half % 2 == 0 {
            (self.p_half / 2).to_string()
        } else {
            format!("{}/2", self.p_half)
        };
        if self.m < 10 && self.n < 10 {
            if self.p_half % 2 == 0 && self.p_half < 20 {
                format!("{}{}{}{}", self.family, self.m, self.n, p)
            } else {
                format!("{}{}{}({})", self.family, self.m, self.n, p)
            }
        } else {
            format!("{}({},{},{})", self.family, self.m, self.n, p)
        }
    }
}

impl fmt::Display for CavityMode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} at {} Hz", self.label(), self.freq_hz)
    }
}

/// Smallest allowed `p_half` for a family and pair of end walls; allowed
/// values then go up in steps of 2 (see the table in the module
/// documentation).
fn first_p_half(family: Family, bottom: EndWall, top: EndWall) -> u32 {
    match (bottom, top, family) {
        (EndWall::Pec, EndWall::Pec, Family::Tm) => 0,
        (EndWall::Pec, EndWall::Pec, Family::Te) => 2,
        (EndWall::Pmc, EndWall::Pmc, Family::Tm) => 2,
        (EndWall::Pmc, EndWall::Pmc, Family::Te) => 0,
        // One PEC and one PMC end: p = 1/2, 3/2, …
        _ => 1,
    }
}

/// Every `TE_mnp` and `TM_mnp` mode of azimuthal order `m` with
/// `f_min_hz ≤ f ≤ f_max_hz`, sorted by frequency.
///
/// The cavity has radius `radius_m` and length `length_m` (metres), a PEC
/// side wall, filling `ε_r = eps_r` (`μ_r = 1`) and end walls `bottom`
/// (`z = 0`) and `top` (`z = d`). Frequencies are
/// `f = c/(2π√ε_r) · √((χ_mn/a)² + (pπ/d)²)` with `χ_mn = j_{m,n}` for TM and
/// `j'_{m,n}` (nonzero) for TE (Pozar §6.3); the allowed `p` for each end
/// combination are derived in the [module documentation](self). Modes of
/// equal frequency are ordered TE before TM, then by `n`, then by `p`.
///
/// # Panics
///
/// If `radius_m`, `length_m` or `eps_r` is not finite and positive, or if
/// `f_max_hz` is not finite or `f_min_hz` is NaN. An empty band
/// (`f_min_hz > f_max_hz`) gives an empty list.
#[allow(clippy::too_many_arguments)] // the eight physical inputs are the API
pub fn cylinder_cavity_modes(
    radius_m: f64,
    length_m: f64,
    eps_r: f64,
    bottom: EndWall,
    top: EndWall,
    m: u32,
    f_min_hz: f64,
    f_max_hz: f64,
) -> Vec<CavityMode> {
    assert!(
        radius_m.is_finite() && radius_m > 0.0,
        "cavity radius must be finite and positive, got {radius_m}"
    );
    assert!(
        length_m.is_finite() && length_m > 0.0,
        "cavity length must be finite and positive, got {length_m}"
    );
    assert!(
        eps_r.is_finite() && eps_r > 0.0,
        "relative permittivity must be finite and positive, got {eps_r}"
    );
    assert!(
        f_max_hz.is_finite(),
        "f_max_hz must be finite, got {f_max_hz}"
    );
    assert!(!f_min_hz.is_nan(), "f_min_hz must not be NaN");

    let mut modes = Vec::new();
    if f_min_hz > f_max_hz || f_max_hz <= 0.0 {
        return modes;
    }

    // f = scale · √(k_c² + k_z²).
    let scale = C0 / (2.0 * PI * eps_r.sqrt());
    // No radial root above k_max·a can fit; the small margin only widens the
    // search, the band test below is on the frequency itself.
    let x_max = f_max_hz / scale * radius_m * (1.0 + 1e-12);

    for family in [Family::Te, Family::Tm] {
        let roots = match family {
            Family::Te => bessel_j_prime_zeros_below(m, x_max),
            Family::Tm => bessel_j_zeros_below(m, x_max),
        };
        for (index, chi) in roots.into_iter().enumerate() {
            let k_c = chi / radius_m;
            let mut p_half = first_p_half(family, bottom, top);
            loop {
                let k_z = 0.5 * f64::from(p_half) * PI / length_m;
                let freq_hz = scale * k_c.hypot(k_z);
                if freq_hz > f_max_hz {
                    break;
                }
                if freq_hz >= f_min_hz {
                    modes.push(CavityMode {
                        family,
                        m,
                        n: index as u32 + 1,
                        p_half,
                        freq_hz,
                    });
                }
                p_half += 2;
            }
        }
    }

    modes.sort_by(|a, b| {
        a.freq_hz
            .total_cmp(&b.freq_hz)
            .then(a.family.cmp(&b.family))
            .then(a.n.cmp(&b.n))
            .then(a.p_half.cmp(&b.p_half))
    });
    modes
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(modes: &[CavityMode]) -> Vec<String> {
        modes.iter().map(CavityMode::label).collect()
    }

    fn find(modes: &[CavityMode], label: &str) -> CavityMode {
        *modes
            .iter()
            .find(|mode| mode.label() == label)
            .unwrap_or_else(|| panic!("{label} not in {:?}", labels(modes)))
    }

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    /// Frequencies for a = 5 cm, d = 10 cm, vacuum, PEC ends, worked by hand
    /// (with a calculator — Python's `math` module — using the zeros j_{0,1} = 2.404825557695773,
    /// j_{1,1} = 3.831705970207512, j'_{1,1} = 1.841183781340659 from A&S
    /// Table 9.5, from memory): c·χ/(2πa) and c/(2π)·√((χ/a)² + (π/d)²).
    #[test]
    fn hand_computed_frequencies() {
        let (a, d) = (0.05, 0.10);
        let m0 = cylinder_cavity_modes(a, d, 1.0, EndWall::Pec, EndWall::Pec, 0, 0.0, 6e9);
        let m1 = cylinder_cavity_modes(a, d, 1.0, EndWall::Pec, EndWall::Pec, 1, 0.0, 6e9);
        // TM010: 299792458 · 2.404825557695773 / (2π · 0.05).
        assert!(close(
            find(&m0, "TM010").freq_hz,
            2.294_850_556_704e9,
            1e-12
        ));
        // TE011: √((3.831705970207512/0.05)² + (π/0.1)²) · c/(2π).
        assert!(close(
            find(&m0, "TE011").freq_hz,
            3.951_799_823_544e9,
            1e-12
        ));
        // TE111: √((1.841183781340659/0.05)² + (π/0.1)²) · c/(2π).
        assert!(close(
            find(&m1, "TE111").freq_hz,
            2.309_520_092_581e9,
            1e-12
        ));
        // TM110: c · 3.831705970207512 / (2π · 0.05).
        assert!(close(
            find(&m1, "TM110").freq_hz,
            3.656_478_346_514e9,
            1e-12
        ));
    }

    /// a = d = 1 m, vacuum, m = 0, band k a ≤ 6.5 (f ≤ 6.5 c/2π). By hand:
    /// TM010 ka = 2.405, TM011 √(2.405² + π²) = 3.956, TE011 √(3.832² + π²)
    /// = 4.955, TM020 5.520, TM021 √(5.520² + π²) = 6.351; just outside are
    /// TM012 (6.728), TE021 (7.016) and TE012 (7.36).
    #[test]
    fn count_and_order_in_a_small_band() {
        let f = |ka: f64| ka * C0 / (2.0 * PI);
        let modes =
            cylinder_cavity_modes(1.0, 1.0, 1.0, EndWall::Pec, EndWall::Pec, 0, 0.0, f(6.5));
        assert_eq!(
            labels(&modes),
            ["TM010", "TM011", "TE011", "TM020", "TM021"]
        );
        assert!(close(modes[0].freq_hz, f(2.404_825_557_695_773), 1e-14));
        assert!(close(modes[4].freq_hz, f(6.351_446_035_727), 1e-12));
        assert!(modes.windows(2).all(|w| w[0].freq_hz <= w[1].freq_hz));

        // Lower edge is inclusive and cuts the list.
        let upper = cylinder_cavity_modes(
            1.0,
            1.0,
            1.0,
            EndWall::Pec,
            EndWall::Pec,
            0,
            modes[2].freq_hz,
            f(6.5),
        );
        assert_eq!(labels(&upper), ["TE011", "TM020", "TM021"]);
    }

    /// Same a = d = 1 m box with PMC ends: TM needs p ≥ 1, TE allows p = 0.
    /// By hand (m = 0, ka ≤ 6.5): TE010 3.832, TM011 3.956, TE011 4.955,
    /// TM021 6.351.
    #[test]
    fn pmc_ends_allow_te_p0_and_forbid_tm_p0() {
        let f = |ka: f64| ka * C0 / (2.0 * PI);
        let modes =
            cylinder_cavity_modes(1.0, 1.0, 1.0, EndWall::Pmc, EndWall::Pmc, 0, 0.0, f(6.5));
        assert_eq!(labels(&modes), ["TE010", "TM011", "TE011", "TM021"]);
        assert!(close(modes[0].freq_hz, f(3.831_705_970_207_512), 1e-14));
    }

    /// Mixed ends give p = 1/2, 3/2, … for both families. By hand (m = 0,
    /// ka ≤ 6.5): TM01(1/2) √(2.405² + (π/2)²) = 2.872, TM01(3/2) 5.291,
    /// TE01(1/2) 4.141, TM02(1/2) 5.739, TE01(3/2) 6.074.
    #[test]
    fn mixed_ends_give_half_integer_p() {
        let f = |ka: f64| ka * C0 / (2.0 * PI);
        let modes =
            cylinder_cavity_modes(1.0, 1.0, 1.0, EndWall::Pec, EndWall::Pmc, 0, 0.0, f(6.5));
        assert_eq!(
            labels(&modes),
            [
                "TM01(1/2)",
                "TE01(1/2)",
                "TM01(3/2)",
                "TM02(1/2)",
                "TE01(3/2)"
            ]
        );
        let ka = (2.404_825_557_695_773_f64.powi(2) + (PI / 2.0).powi(2)).sqrt();
        assert!(close(modes[0].freq_hz, f(ka), 1e-14));
        assert!(modes.iter().all(|mode| mode.p_half % 2 == 1));

        let swapped =
            cylinder_cavity_modes(1.0, 1.0, 1.0, EndWall::Pmc, EndWall::Pec, 0, 0.0, f(6.5));
        assert_eq!(swapped, modes);
    }

    #[test]
    fn te0np_is_degenerate_with_tm1np() {
        // j'_{0,n} = j_{1,n} because J'_0 = −J_1.
        let (a, d, eps) = (0.031, 0.047, 2.25);
        let te0 = cylinder_cavity_modes(a, d, eps, EndWall::Pec, EndWall::Pec, 0, 0.0, 2e10);
        let tm1 = cylinder_cavity_modes(a, d, eps, EndWall::Pec, EndWall::Pec, 1, 0.0, 2e10);
        let mut pairs = 0;
        for te in te0.iter().filter(|mode| mode.family == Family::Te) {
            let tm = tm1
                .iter()
                .find(|mode| {
                    mode.family == Family::Tm && mode.n == te.n && mode.p_half == te.p_half
                })
                .expect("partner TM_1np");
            assert!(close(te.freq_hz, tm.freq_hz, 1e-14));
            pairs += 1;
        }
        assert!(pairs >= 5);
    }

    #[test]
    fn frequency_scales_as_inverse_sqrt_eps() {
        let base = cylinder_cavity_modes(0.02, 0.03, 1.0, EndWall::Pec, EndWall::Pec, 2, 0.0, 3e10);
        let filled =
            cylinder_cavity_modes(0.02, 0.03, 4.0, EndWall::Pec, EndWall::Pec, 2, 0.0, 1.5e10);
        assert_eq!(labels(&base), labels(&filled));
        for (b, f) in base.iter().zip(&filled) {
            assert!(close(f.freq_hz, 0.5 * b.freq_hz, 1e-14));
        }
    }

    #[test]
    fn every_listed_mode_is_in_band_and_none_is_missing() {
        // Cross-check the enumeration against a brute-force sweep over
        // (n, p) with the tabulated-by-count zeros.
        use crate::exact::bessel::{bessel_j_prime_zeros, bessel_j_zeros};
        let (a, d) = (0.04, 0.07);
        let (f_min, f_max) = (3e9, 1.6e10);
        for (bottom, top) in [
            (EndWall::Pec, EndWall::Pec),
            (EndWall::Pmc, EndWall::Pmc),
            (EndWall::Pec, EndWall::Pmc),
        ] {
            for m in 0..4 {
                let modes = cylinder_cavity_modes(a, d, 1.0, bottom, top, m, f_min, f_max);
                let mut expected = 0;
                for family in [Family::Te, Family::Tm] {
                    let zeros = match family {
                        Family::Te => bessel_j_prime_zeros(m, 20),
                        Family::Tm => bessel_j_zeros(m, 20),
                    };
                    for chi in zeros {
                        for p_half in (first_p_half(family, bottom, top)..60).step_by(2) {
                            let f = C0 / (2.0 * PI)
                                * ((chi / a).powi(2)
                                    + (f64::from(p_half) * PI / (2.0 * d)).powi(2))
                                .sqrt();
                            if (f_min..=f_max).contains(&f) {
                                expected += 1;
                            }
                        }
                    }
                }
                assert_eq!(modes.len(), expected, "m = {m}, {bottom:?}/{top:?}");
                assert!(modes
                    .iter()
                    .all(|mode| (f_min..=f_max).contains(&mode.freq_hz)));
                assert!(modes.windows(2).all(|w| w[0].freq_hz <= w[1].freq_hz));
            }
        }
    }

    #[test]
    fn labels_are_unambiguous() {
        let mode = |family, m, n, p_half| CavityMode {
            family,
            m,
            n,
            p_half,
            freq_hz: 1.0,
        };
        assert_eq!(mode(Family::Te, 0, 1, 2).label(), "TE011");
        assert_eq!(mode(Family::Tm, 1, 1, 0).label(), "TM110");
        assert_eq!(mode(Family::Te, 0, 1, 1).label(), "TE01(1/2)");
        assert_eq!(mode(Family::Tm, 1, 2, 3).label(), "TM12(3/2)");
        assert_eq!(mode(Family::Te, 0, 1, 24).label(), "TE01(12)");
        assert_eq!(mode(Family::Tm, 12, 3, 8).label(), "TM(12,3,4)");
        assert_eq!(mode(Family::Te, 1, 10, 5).label(), "TE(1,10,5/2)");
        assert_eq!(mode(Family::Te, 1, 10, 5).p(), 2.5);
    }

    #[test]
    fn empty_band_gives_no_modes() {
        assert!(
            cylinder_cavity_modes(0.05, 0.1, 1.0, EndWall::Pec, EndWall::Pec, 0, 5e9, 1e9)
                .is_empty()
        );
        assert!(
            cylinder_cavity_modes(0.05, 0.1, 1.0, EndWall::Pec, EndWall::Pec, 0, 0.0, 1e9)
                .is_empty()
        );
    }
}
