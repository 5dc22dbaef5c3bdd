//! From the poles of several probe signals to one list of modes.
//!
//! Each probe's signal is inverted on its own; a mode is then the cluster of
//! poles, at most one per probe, whose complex frequencies agree. Merging
//! rule (documented for users in DEVELOPERS.md):
//!
//! 1. Poles are sorted by frequency; a pole joins the current cluster when
//!    its probe is not yet in it and its complex frequency ω differs from the
//!    cluster's best pole by less than `merge_tol·|ω|`, with
//!    `merge_tol = min(1e-4, max(1e-7, 100 × (larger error estimate)))`.
//!    Distinct modes closer than 1e-4 in relative frequency are still kept
//!    apart when one probe sees both, since a cluster takes one pole per probe.
//! 2. The cluster's figures are those of its pole with the smallest error
//!    estimate; its reported error is the larger of that estimate and the
//!    spread of the cluster's well-determined poles (error within 10× the best).
//! 3. A cluster seen by a single probe, when three or more probes ran, is
//!    kept only if its error estimate is below 1e-8: a true mode with nodes
//!    at all probes but one is still resolved cleanly there, while the fits
//!    harmonic inversion makes to the early transient of one signal (weak,
//!    very low Q, error ~1e-5) are not repeated at other probes.
//! 4. The leapfrog scheme maps an exact mode of the spatial operator,
//!    ω, to a sampled rotation θ = ω̃Δt with sin(θ/2) = ωΔt/2. The poles give
//!    ω̃; the reported mode is ω = (2/Δt) sin(ω̃Δt/2) (complex), which removes
//!    the time-discretisation error and leaves only the spatial one.
use crate::harminv::Pole;
use num_complex::Complex64;
use std::f64::consts::PI;

/// A resonance of one azimuthal order.
#[derive(Debug, Clone, PartialEq)]
pub struct Mode {
    /// Azimuthal order.
    pub m: u32,
    /// Resonance frequency, Hz.
    pub freq_hz: f64,
    /// Field decay rate γ, 1/s (fields ∝ e^{−γt}).
    pub decay: f64,
    /// Q = π f / γ. When γ is not distinguishable from zero
    /// (`q_is_lower_bound`), Q = π f / δγ with δγ = error·|ω|, a lower bound.
    pub q: f64,
    /// Whether `q` is only a lower bound (lossless within resolution).
    pub q_is_lower_bound: bool,
    /// Estimated relative error of the complex frequency, |δω|/|ω|.
    pub error: f64,
    /// Largest amplitude over the probes, relative to the strongest mode of
    /// the same probe (0 … 1).
    pub amplitude: f64,
    /// How many probes saw the mode.
    pub probes: usize,
    /// The trade's name (TE01δ, TM01δ, HEM11δ, …), set by [`label_modes`];
    /// empty until then.
    pub label: String,
    /// For m = 0: TE or TM, known from which probes saw the mode.
    pub family: Option<Family>,
}

/// Merges per-probe pole lists (already accepted by the estimator) into
/// modes of order `m`, correcting for the leapfrog time step `dt` (the FDTD
/// step, not the sample spacing). `families[p]` is the family probe `p`
/// reads (m = 0), or `None`; poles of probes of different families never
/// share a cluster.
pub fn merge(per_probe: &[Vec<Pole>], families: &[Option<Family>], m: u32, dt: f64) -> Vec<Mode> {
    let mut all: Vec<(usize, Pole, f64)> = Vec::new();
    for (p, poles) in per_probe.iter().enumerate() {
        let peak = poles.iter().map(|q| q.amplitude.norm()).fold(0.0, f64::max);
        for q in poles {
            let rel = if peak > 0.0 {
                q.amplitude.norm() / peak
            } else {
                0.0
            };
            all.push((p, *q, rel));
        }
    }
    all.sort_by(|a, b| a.1.freq.total_cmp(&b.1.freq).then(a.0.cmp(&b.0)));
    let mut clusters: Vec<Vec<(usize, Pole, f64)>> = Vec::new();
    for item in all {
        let joined = clusters.last_mut().is_some_and(|c| {
            let best = best_of(c);
            let tol = (100.0 * best.error.max(item.1.error)).clamp(1e-7, 1e-4);
            let close = (item.1.omega() - best.omega()).norm() <= tol * best.omega().norm();
            let free = c.iter().all(|x| x.0 != item.0);
            let fam = |p: usize| families.get(p).copied().flatten();
            let same_family = fam(c[0].0) == fam(item.0);
            if close && free && same_family {
                c.push(item);
                true
            } else {
                false
            }
        });
        if !joined {
            clusters.push(vec![item]);
        }
    }
    let probes_run = per_probe.len();
    clusters
        .iter()
        .filter(|c| probes_run < 3 || c.len() >= 2 || best_of(c).error < 1e-8)
        .map(|c| {
            let best = best_of(c);
            let spread = c
                .iter()
                .filter(|x| x.1.error <= 10.0 * best.error.max(1e-15))
                .map(|x| (x.1.omega() - best.omega()).norm() / best.omega().norm())
                .fold(0.0, f64::max);
            let error = best.error.max(spread);
            let w = leapfrog_correction(best.omega(), dt);
            let freq_hz = w.re / (2.0 * PI);
            let decay = -w.im;
            let dgamma = error * w.norm();
            let q_is_lower_bound = decay <= dgamma;
            let q = PI * freq_hz / if q_is_lower_bound { dgamma } else { decay };
            Mode {
                m,
                freq_hz,
                decay,
                q,
                q_is_lower_bound,
                error,
                amplitude: c.iter().map(|x| x.2).fold(0.0, f64::max),
                probes: c.len(),
                label: String::new(),
                family: families.get(c[0].0).copied().flatten(),
            }
        })
        .collect()
}

/// Field family of an m = 0 mode: E_φ, H_r, H_z (TE) or E_r, E_z, H_φ
/// (TM), which decouple exactly at m = 0.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Family {
    /// Transverse electric: E_φ, H_r, H_z.
    Te,
    /// Transverse magnetic: E_r, E_z, H_φ.
    Tm,
    /// Not known.
    Unclear,
}

/// Names every mode of a structure with the trade's labels.
///
/// `modes` holds every mode found for the structure — all orders m, and
/// both symmetry families when the structure was split by a symmetry plane —
/// each with its m = 0 family (ignored for m ≥ 1). Rule:
///
/// - m = 0: `TE0nδ` or `TM0nδ` by family (known from which probes saw the
///   mode, see [`crate::excitation::Point::family`]), n = rank by frequency
///   among the m = 0 modes of that family; a mode whose family is not known
///   is `TE/TM0nδ?`, ranked among those.
/// - m ≥ 1: `HEMmnδ`, n = rank by frequency among the modes of that m, over
///   both symmetry families (this reproduces the usual names of an isolated
///   cylinder: HEM11δ below HEM12δ, one in each family).
/// - Two-digit indices are written `HEM(12,3)δ`.
///
/// n counts from f_min: a mode below the band is not counted, so widen the
/// band down to the fundamental when the numbering matters. The δ says the
/// field varies along z without a whole number of half-waves, as in an
/// open or partly filled structure; for an empty closed cavity the exact
/// TE_mnp/TM_mnp names are the right ones (see `exact::cavity`).
pub fn label_modes(modes: &mut [(&mut Mode, Family)]) {
    let mut order: Vec<usize> = (0..modes.len()).collect();
    order.sort_by(|&a, &b| modes[a].0.freq_hz.total_cmp(&modes[b].0.freq_hz));
    let mut counts: std::collections::HashMap<(u32, u8), usize> = Default::default();
    for k in order {
        let (mode, fam) = &mut modes[k];
        let key = if mode.m == 0 {
            (0, *fam as u8)
        } else {
            (mode.m, 255)
        };
        let n = counts.entry(key).or_insert(0);
        *n += 1;
        let idx = |m: u32, n: usize| {
            if m < 10 && n < 10 {
                format!("{m}{n}")
            } else {
                format!("({m},{n})")
            }
        };
        mode.label = match (mode.m, *fam) {
            (0, Family::Te) => format!("TE{}δ", idx(0, *n)),
            (0, Family::Tm) => format!("TM{}δ", idx(0, *n)),
            (0, Family::Unclear) => format!("TE/TM{}δ?", idx(0, *n)),
            (m, _) => format!("HEM{}δ", idx(m, *n)),
        };
    }
}

fn best_of(c: &[(usize, Pole, f64)]) -> Pole {
    c.iter()
        .min_by(|a, b| a.1.error.total_cmp(&b.1.error))
        .map(|x| x.1)
        .expect("clusters are never empty")
}

/// ω = (2/Δt)·sin(ω̃Δt/2): the spatial-operator frequency behind a sampled
/// leapfrog frequency ω̃ (see the module docs).
pub fn leapfrog_correction(omega_sampled: Complex64, dt: f64) -> Complex64 {
    (omega_sampled * (0.5 * dt)).sin() * (2.0 / dt)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pole(f: f64, q: f64, err: f64, amp: f64) -> Pole {
        Pole {
            freq: f,
            decay: PI * f / q,
            q,
            amplitude: Complex64::new(amp, 0.0),
            error: err,
        }
    }

    #[test]
    fn same_mode_at_several_probes_is_listed_once() {
        let a = vec![pole(5e9, 1e4, 1e-10, 1.0), pole(6e9, 50.0, 1e-9, 0.2)];
        let b = vec![pole(5e9 * (1.0 + 1e-9), 1e4, 1e-9, 0.5)];
        let c = vec![
            pole(6e9 * (1.0 - 2e-9), 50.0, 1e-9, 0.7),
            pole(6.006e9, 60.0, 1e-9, 1.0),
        ];
        let modes = merge(&[a, b, c], &[None, None, None], 1, 1e-15);
        assert_eq!(modes.len(), 3);
        assert_eq!(modes[0].probes, 2);
        assert_eq!(modes[1].probes, 2);
        assert_eq!(modes[2].probes, 1);
        assert!((modes[1].amplitude - 0.7).abs() < 1e-12);
        assert!(modes[1].error >= 2e-9 * 0.99);
    }

    #[test]
    fn labels_follow_the_documented_counting() {
        let mk = |m: u32, f: f64| Mode {
            m,
            freq_hz: f,
            decay: 0.0,
            q: 1.0,
            q_is_lower_bound: false,
            error: 0.0,
            amplitude: 1.0,
            probes: 1,
            label: String::new(),
            family: None,
        };
        let mut v = [
            mk(0, 4.86e9),
            mk(1, 6.34e9),
            mk(1, 6.65e9),
            mk(0, 7.53e9),
            mk(2, 7.76e9),
            mk(0, 8.3e9),
        ];
        let fams = [
            Family::Te,
            Family::Tm,
            Family::Tm,
            Family::Tm,
            Family::Tm,
            Family::Unclear,
        ];
        let mut refs: Vec<(&mut Mode, Family)> = v.iter_mut().zip(fams).collect();
        label_modes(&mut refs);
        let labels: Vec<&str> = v.iter().map(|m| m.label.as_str()).collect();
        assert_eq!(
            labels,
            ["TE01δ", "HEM11δ", "HEM12δ", "TM01δ", "HEM21δ", "TE/TM01δ?"]
        );
    }

    #[test]
    fn leapfrog_correction_inverts_the_dispersion_relation() {
        // sin(θ/2) = ωΔt/2 for a real ω: θ from ω, then back.
        let (w, dt) = (2.0 * PI * 7e9, 3e-13);
        let theta = 2.0 * (w * dt / 2.0).asin();
        let back = leapfrog_correction(Complex64::new(theta / dt, 0.0), dt);
        assert!((back.re - w).abs() < 1e-12 * w && back.im.abs() < 1e-6);
    }
}
