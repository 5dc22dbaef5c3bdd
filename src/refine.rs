//! `--refine`: the same study on three grids and Richardson extrapolation
//! of f and Q, with an uncertainty from the grid convergence index.
//!
//! The grids have cells per wavelength c, c√2 and 2c (c the scenario's, 30
//! by default; or the given cell divided by 1, √2, 2). Since each extent is
//! divided into a whole number of cells, the actual steps h₁ > h₂ > h₃
//! (h = √(Δr Δz)) give ratios r₂₁ = h₁/h₂ and r₃₂ = h₂/h₃ near √2. For each
//! mode found on all three grids (matched by order, symmetry plane and
//! name, else by nearest frequency within 2 %), with values φ₁, φ₂, φ₃ from
//! coarse to fine, ε₂₁ = φ₂ − φ₁ and ε₃₂ = φ₃ − φ₂ of one sign:
//!
//! ```text
//! p   = |ln|ε₂₁/ε₃₂| + ln((r₃₂^p − 1)/(r₂₁^p − 1))| / ln r₃₂   (fixed point; p in [1, 3])
//! φ∞  = (r₃₂^p φ₃ − φ₂)/(r₃₂^p − 1)                            Richardson extrapolation
//! err = 1.25 |ε₃₂| / (r₃₂^p − 1)                               grid convergence index
//! ```
//!
//! (Richardson 1911; Roache, *J. Fluids Eng.* 116, 1994, for the index and
//! its factor 1.25; the order equation for unequal ratios as in Celik et
//! al., *J. Fluids Eng.* 130, 2008). When the differences change sign
//! (oscillating convergence) no order can be read: φ∞ is the finest value
//! and err is 1.25 × the largest difference of the three.
use crate::scenario::Scenario;
use crate::study::{run_study, Study, StudyError};
use lathe_solver::{Mode, ZWall};

/// Refinement ratio between successive grids.
pub const RATIO: f64 = std::f64::consts::SQRT_2;

/// A mode after refinement.
#[derive(Debug, Clone, PartialEq)]
pub struct RefinedMode {
    /// The mode on the finest grid (its label, m, error estimate …).
    pub finest: Mode,
    /// Symmetry plane of its run.
    pub plane: Option<ZWall>,
    /// Extrapolated frequency, Hz.
    pub freq_hz: f64,
    /// Its uncertainty, Hz.
    pub freq_err_hz: f64,
    /// Extrapolated Q.
    pub q: f64,
    /// Its uncertainty.
    pub q_err: f64,
    /// Observed order of convergence of f (None when oscillating).
    pub order_f: Option<f64>,
}

/// The three studies and the refined modes.
#[derive(Debug, Clone)]
pub struct Refined {
    /// Studies from coarse to fine.
    pub studies: Vec<Study>,
    /// Modes found on every grid, by frequency.
    pub modes: Vec<RefinedMode>,
}

/// Extrapolates three values from coarse to fine on steps `h` (see the
/// module docs): (value, uncertainty, observed order).
pub fn extrapolate(v: [f64; 3], h: [f64; 3]) -> (f64, f64, Option<f64>) {
    let (e21, e32) = (v[1] - v[0], v[2] - v[1]);
    if e32 == 0.0 {
        return (v[2], 0.0, None);
    }
    if e21 * e32 <= 0.0 {
        let spread = e21.abs().max(e32.abs()).max((v[0] - v[2]).abs());
        return (v[2], 1.25 * spread, None);
    }
    let (r21, r32) = (h[0] / h[1], h[1] / h[2]);
    // Celik et al. number the grids from fine to coarse; in ours (coarse
    // first) their equation reads as below.
    let mut p = 2.0f64;
    for _ in 0..100 {
        let q = ((r32.powf(p) - 1.0) / (r21.powf(p) - 1.0)).ln();
        let next = (((e21 / e32).abs().ln() + q).abs() / r32.ln()).clamp(1.0, 3.0);
        if (next - p).abs() < 1e-12 {
            p = next;
            break;
        }
        p = next;
    }
    let k = r32.powf(p) - 1.0;
    (v[2] + e32 / k, 1.25 * e32.abs() / k, Some(p))
}

/// Runs `s` on the three grids and extrapolates.
pub fn refine(s: &Scenario) -> Result<Refined, StudyError> {
    let base = s.cells_per_wavelength;
    let mut studies = Vec::new();
    for k in 0..3 {
        let mut g = s.clone();
        let factor = RATIO.powi(k);
        match s.cell {
            Some(c) => g.cell = Some(c / factor),
            None => g.cells_per_wavelength = base * factor,
        }
        studies.push(run_study(&g)?);
    }
    let lists: Vec<Vec<(Mode, Option<ZWall>)>> = studies.iter().map(|st| st.modes()).collect();
    let step = |k: usize| {
        let rep = &studies[k].runs[0].output.report;
        (rep.dr * rep.dz).sqrt()
    };
    let h = [step(0), step(1), step(2)];
    let find = |list: &[(Mode, Option<ZWall>)], m: &Mode, plane: Option<ZWall>| -> Option<Mode> {
        let same = |x: &&(Mode, Option<ZWall>)| x.0.m == m.m && x.1 == plane;
        list.iter()
            .filter(same)
            .find(|x| x.0.label == m.label && (x.0.freq_hz / m.freq_hz - 1.0).abs() < 0.02)
            .or_else(|| {
                list.iter()
                    .filter(same)
                    .filter(|x| (x.0.freq_hz / m.freq_hz - 1.0).abs() < 0.02)
                    .min_by(|a, b| {
                        (a.0.freq_hz - m.freq_hz)
                            .abs()
                            .total_cmp(&(b.0.freq_hz - m.freq_hz).abs())
                    })
            })
            .map(|x| x.0.clone())
    };
    let mut modes = Vec::new();
    for (fine, plane) in &lists[2] {
        let (Some(mid), Some(coarse)) =
            (find(&lists[1], fine, *plane), find(&lists[0], fine, *plane))
        else {
            continue;
        };
        let (freq_hz, freq_err_hz, order_f) =
            extrapolate([coarse.freq_hz, mid.freq_hz, fine.freq_hz], h);
        let (q, q_err, _) = if fine.q_is_lower_bound {
            (fine.q, 0.0, None)
        } else {
            extrapolate([coarse.q, mid.q, fine.q], h)
        };
        modes.push(RefinedMode {
            finest: fine.clone(),
            plane: *plane,
            freq_hz,
            freq_err_hz,
            q,
            q_err,
            order_f,
        });
    }
    Ok(Refined { studies, modes })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn richardson_recovers_a_polynomial_limit() {
        // φ(h) = 5 + 0.3 h² on h = 1, 1/√2, 1/2: exact limit 5, order 2.
        let h = [1.0, RATIO.recip(), 0.5];
        let v = h.map(|h: f64| 5.0 + 0.3 * h * h);
        let (x, err, p) = extrapolate(v, h);
        assert!((x - 5.0).abs() < 1e-12 && (p.unwrap() - 2.0).abs() < 1e-9);
        assert!((err - 1.25 * 0.075).abs() < 1e-12); // GCI = 1.25 × φ₂−φ₃ / (r² − 1)
                                                     // First order: φ = 2 − 0.1 h.
        let v = h.map(|h| 2.0 - 0.1 * h);
        let (x, _, p) = extrapolate(v, h);
        assert!((x - 2.0).abs() < 1e-12 && (p.unwrap() - 1.0).abs() < 1e-9);
        // Unequal ratios, second order: h = 1, 0.72, 0.5.
        let h2 = [1.0, 0.72, 0.5];
        let (x, _, p) = extrapolate(h2.map(|h: f64| 5.0 + 0.3 * h * h), h2);
        assert!(
            (x - 5.0).abs() < 1e-9 && (p.unwrap() - 2.0).abs() < 1e-6,
            "{x} {p:?}"
        );
        // Oscillating: no order; the finest value with the spread as error.
        let (x, err, p) = extrapolate([1.0, 1.2, 1.1], h);
        assert_eq!((x, p), (1.1, None));
        assert!((err - 1.25 * 0.2).abs() < 1e-12);
    }
}
