//! `--refine`: the same study on three grids and Richardson extrapolation
//! of f and Q, with an uncertainty from the grid convergence index.
//!
//! The grids have cells per wavelength c, c√2 and 2c (c the scenario's, 30
//! by default; or the given cell divided by 1, √2, 2). Since each extent is
//! divided into a whole number of cells, the actual steps h₁ > h₂ > h₃
//! (h = √(Δr Δz)) give ratios r₂₁ = h₁/h₂ and r₃₂ = h₂/h₃ near √2. For each
//! mode found on all three grids (matched by order, symmetry plane and
//! name, else by nearest frequency within 2 %), with values φ₁, φ₂, φ₃ from
//! coarse to fine, ε₂₁ = φ₂ − φ₁ and ε₃₂ = φ₃ − φ₂ of one sign, the
//! observed order p solves (fixed point, searched in [½, 4])
//!
//! ```text
//! p   = |ln|ε₂₁/ε₃₂| + ln((r₃₂^p − 1)/(r₂₁^p − 1))| / ln r₃₂
//! ```
//!
//! and the extrapolation uses the order q and safety factor F_s:
//!
//! ```text
//! φ∞  = (r₃₂^q φ₃ − φ₂)/(r₃₂^q − 1)                  Richardson extrapolation
//! err = F_s |ε₃₂| / (r₃₂^q − 1)                      grid convergence index
//! ```
//!
//! - **In the asymptotic range** — p within a quarter of the scheme's formal
//!   order 2, i.e. 1.5 ≤ p ≤ 2.5 — q = p and F_s = 1.25: the three grids
//!   confirm the order, and the index with its factor 1.25 applies.
//! - **Outside it** the three values do not follow one power of h (a
//!   staircased curved surface moves its cut cells irregularly from grid to
//!   grid, and Q, a small imaginary part, shows it most). Extrapolating with
//!   such a p — large corrections for p near 1, none for p large — is not
//!   justified; q is the formal order 2 and F_s = 3, the factor for an
//!   order the data do not confirm.
//! - **Oscillating** (ε₂₁, ε₃₂ of opposite signs): no order can be read; φ∞
//!   is the finest value and err is 1.25 × the largest difference of the
//!   three.
//!
//! (Richardson 1911; Roache, *J. Fluids Eng.* 116, 1994, and *Verification
//! and Validation in Computational Science and Engineering*, 1998, for the
//! index and its factors 1.25 and 3 — from memory; the order equation for
//! unequal ratios as in Celik et al., *J. Fluids Eng.* 130, 2008.) The
//! observed order of f is printed either way, so a user sees which rule
//! applied.
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
    /// Whether f's observed order was in the asymptotic range (see the
    /// module docs); likewise for Q.
    pub asymptotic_f: bool,
    /// See `asymptotic_f`.
    pub asymptotic_q: bool,
    /// f on the three grids, coarse to fine, Hz.
    pub freq_hz_grids: [f64; 3],
    /// Q on the three grids, coarse to fine.
    pub q_grids: [f64; 3],
}

/// The three studies and the refined modes.
#[derive(Debug, Clone)]
pub struct Refined {
    /// Studies from coarse to fine.
    pub studies: Vec<Study>,
    /// Modes found on every grid, by frequency.
    pub modes: Vec<RefinedMode>,
}

/// Formal order of convergence of the scheme (Yee differences with
/// sub-cell averaging).
pub const FORMAL_ORDER: f64 = 2.0;

/// Observed orders that count as the asymptotic range: within a quarter of
/// [`FORMAL_ORDER`].
pub const ASYMPTOTIC_ORDERS: std::ops::RangeInclusive<f64> = 1.5..=2.5;

/// One quantity extrapolated from three grids.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extrapolated {
    /// Extrapolated value.
    pub value: f64,
    /// Its uncertainty (grid convergence index).
    pub err: f64,
    /// Observed order (None when the differences oscillate or vanish).
    pub observed: Option<f64>,
    /// Whether the observed order is in [`ASYMPTOTIC_ORDERS`], so that the
    /// extrapolation used it (else the formal order, with F_s = 3).
    pub asymptotic: bool,
}

/// The observed order of three values from coarse to fine with step ratios
/// `r21`, `r32` (the fixed point of the module docs' equation, in [½, 4]).
fn observed_order(e21: f64, e32: f64, r21: f64, r32: f64) -> f64 {
    let mut p = FORMAL_ORDER;
    for _ in 0..200 {
        let q = ((r32.powf(p) - 1.0) / (r21.powf(p) - 1.0)).ln();
        let next = (((e21 / e32).abs().ln() + q).abs() / r32.ln()).clamp(0.5, 4.0);
        if (next - p).abs() < 1e-12 {
            return next;
        }
        p = next;
    }
    p
}

/// Extrapolates three values from coarse to fine on steps `h` (see the
/// module docs).
pub fn extrapolate(v: [f64; 3], h: [f64; 3]) -> Extrapolated {
    let (e21, e32) = (v[1] - v[0], v[2] - v[1]);
    let finest = |err: f64| Extrapolated {
        value: v[2],
        err,
        observed: None,
        asymptotic: false,
    };
    if e32 == 0.0 {
        return finest(0.0);
    }
    if e21 * e32 <= 0.0 {
        let spread = e21.abs().max(e32.abs()).max((v[0] - v[2]).abs());
        return finest(1.25 * spread);
    }
    let (r21, r32) = (h[0] / h[1], h[1] / h[2]);
    let p = observed_order(e21, e32, r21, r32);
    let asymptotic = ASYMPTOTIC_ORDERS.contains(&p);
    let (q, fs) = if asymptotic {
        (p, 1.25)
    } else {
        (FORMAL_ORDER, 3.0)
    };
    let k = r32.powf(q) - 1.0;
    Extrapolated {
        value: v[2] + e32 / k,
        err: fs * e32.abs() / k,
        observed: Some(p),
        asymptotic,
    }
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
        let freq_hz_grids = [coarse.freq_hz, mid.freq_hz, fine.freq_hz];
        let q_grids = [coarse.q, mid.q, fine.q];
        let f = extrapolate(freq_hz_grids, h);
        let q = if fine.q_is_lower_bound {
            Extrapolated {
                value: fine.q,
                err: 0.0,
                observed: None,
                asymptotic: false,
            }
        } else {
            extrapolate(q_grids, h)
        };
        modes.push(RefinedMode {
            finest: fine.clone(),
            plane: *plane,
            freq_hz: f.value,
            freq_err_hz: f.err,
            q: q.value,
            q_err: q.err,
            order_f: f.observed,
            asymptotic_f: f.asymptotic,
            asymptotic_q: q.asymptotic,
            freq_hz_grids,
            q_grids,
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
        let x = extrapolate(h.map(|h: f64| 5.0 + 0.3 * h * h), h);
        assert!((x.value - 5.0).abs() < 1e-12 && (x.observed.unwrap() - 2.0).abs() < 1e-9);
        assert!(x.asymptotic);
        // GCI = 1.25 × (φ₂ − φ₃)/(r² − 1) = 1.25 × 0.075.
        assert!((x.err - 1.25 * 0.075).abs() < 1e-12);
        // Order 1.6 (a field singularity at an edge): still asymptotic,
        // extrapolated with the observed order.
        let x = extrapolate(h.map(|h: f64| 5.0 + 0.3 * h.powf(1.6)), h);
        assert!((x.value - 5.0).abs() < 1e-9 && (x.observed.unwrap() - 1.6).abs() < 1e-6);
        assert!(x.asymptotic);
        // Unequal ratios, second order: h = 1, 0.72, 0.5.
        let h2 = [1.0, 0.72, 0.5];
        let x = extrapolate(h2.map(|h: f64| 5.0 + 0.3 * h * h), h2);
        assert!(
            (x.value - 5.0).abs() < 1e-9 && (x.observed.unwrap() - 2.0).abs() < 1e-6,
            "{x:?}"
        );
    }

    #[test]
    fn an_order_the_grids_do_not_confirm_takes_the_formal_order_and_factor_three() {
        let h = [1.0, RATIO.recip(), 0.5];
        // First order, φ = 2 − 0.1 h: p = 1 is read but not used.
        let v = h.map(|h| 2.0 - 0.1 * h);
        let x = extrapolate(v, h);
        assert!((x.observed.unwrap() - 1.0).abs() < 1e-9 && !x.asymptotic);
        let e32 = v[2] - v[1];
        // r₃₂² − 1 = 1: φ∞ = φ₃ + ε₃₂, err = 3|ε₃₂|.
        assert!((x.value - (v[2] + e32)).abs() < 1e-12);
        assert!((x.err - 3.0 * e32.abs()).abs() < 1e-12);
        // The bar still covers the true limit here.
        assert!((x.value - 2.0).abs() < x.err);
        // A second-order term plus an irregular one the grids sample
        // (cut cells of a curved face landing differently on each grid):
        // φ = 1 + 0.2 h² + d with d = 0.02 on the middle grid only. The
        // observed order (≈ 0.4) would extrapolate far past the limit; the
        // formal order's value and bar cover it.
        let v = [1.2, 1.12, 1.05];
        let x = extrapolate(v, h);
        assert!(x.observed.unwrap() < 1.0 && !x.asymptotic, "{x:?}");
        assert!((x.value - 1.0).abs() < x.err, "{x:?}");
        assert!((x.value - 0.98).abs() < 1e-12);
        // Oscillating: no order; the finest value with the spread as error.
        let x = extrapolate([1.0, 1.2, 1.1], h);
        assert_eq!((x.value, x.observed), (1.1, None));
        assert!((x.err - 1.25 * 0.2).abs() < 1e-12);
    }
}
