//! Removing the negative-frequency image from a ring-down transform.
//!
//! A real field of one decaying mode is u(t) = Re{U e^{jΩt}} =
//! ½(U e^{jΩt} + U* e^{−jΩ*t}), Ω = ω + jγ. The running transform
//! M = (2/N) Σ u(t_n) e^{−jωt_n} ([`crate::modefield`]) returns
//! M = S₁ (U + ρ U*) with S₁ = (1/N) Σ e^{j(Ω−ω)t_n} and
//! ρ = Σ e^{−j(Ω*+ω)t_n} / Σ e^{j(Ω−ω)t_n}: the image at −ω leaks in with
//! |ρ| ≈ γ Δt_s/(2 sin ωΔt_s) for sampling step Δt_s, about 1/(4Q) at four
//! samples per period, and the leaked field U* (the time-reversed mode)
//! does not satisfy Maxwell's equations at Ω. Its effect on energy and
//! flux depends on the local phase of U², i.e. on where the surface is: a
//! percent-level error at Q ≈ 40.
//!
//! ρ is one complex number for the whole field (H, sampled half a step
//! earlier, has ρ_H = ρ e^{jωΔt}), found here without knowing the sample
//! times: the FDTD fields satisfy Faraday's law of the scheme exactly at
//! every step, so the mode's phasors satisfy
//!
//! ```text
//! jΩμ0 h_r = (m/r) e_z + ∂z e_φ,  jΩμ0 h_φ = −∂z e_r + ∂r e_z,
//! jΩμ0 h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r
//! ```
//!
//! (the discrete forms of `kernel::update_h`, Ω the leapfrog-corrected
//! complex frequency; no material enters Faraday's law). With V the
//! transform and X the same residual applied to the conjugate fields
//! (H term times e^{jωΔt}), the residual of the cleaned field
//! U = (V − ρV*)/(1 − |ρ|²) is (R(V) − ρ X)/(1 − |ρ|²), linear in ρ: a
//! one-parameter least-squares fit over every H node of the physical
//! region (one cell away from absorbers and the axis). The fit's residual
//! before and after is reported ([`Leakage`]); after, it is at the level
//! of the other modes' leakage. H is also scaled by e^{−γΔt/2}, the decay
//! over the half step between E and H samples that the transform's phase
//! does not include.
use super::surface::Region;
use crate::consts::MU0;
use lathe_mesh::{Component, Grid};
use num_complex::Complex64 as C;

/// The negative-frequency leakage found in a transform, and the relative
/// Faraday residual before and after removing it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Leakage {
    /// ρ: the image's amplitude relative to the mode's.
    pub rho: C,
    /// RMS residual of Faraday's law relative to RMS jΩμ0H, before.
    pub residual_before: f64,
    /// The same after removal.
    pub residual_after: f64,
}

fn pos(c: Component) -> usize {
    Component::ALL.iter().position(|&x| x == c).unwrap()
}

/// Faraday residuals jΩμ0 h − (curl e) at the H nodes of the region, for
/// fields (e, h) given per component; also the reference jΩμ0 h.
fn residuals(
    g: &Grid,
    reg: &Region,
    m: u32,
    omega: C,
    comps: &[&[C]],
    conj: bool,
    h_phase: C,
) -> Vec<(C, C)> {
    let get = |c: Component, i: usize, j: usize| {
        let v = comps[pos(c)][i * c.shape(g).1 + j];
        if conj {
            v.conj()
        } else {
            v
        }
    };
    let mf = m as f64;
    let jw = C::i() * omega * MU0 * h_phase;
    let (dr, dz) = (g.dr, g.dz);
    let mut out = Vec::new();
    let (i_hi, j_lo, j_hi) = (reg.i_outer - 1, reg.j_bottom + 1, reg.j_top - 1);
    for i in 0..i_hi {
        for j in j_lo..j_hi {
            // h_r at (i, j+½), off the axis.
            if i >= 1 {
                let r = g.r_int(i);
                let curl = mf / r * get(Component::Ez, i, j)
                    + (get(Component::Ephi, i, j + 1) - get(Component::Ephi, i, j)) / dz;
                let l = jw * get(Component::Hr, i, j);
                out.push((l - curl, l));
            }
            // h_φ at (i+½, j+½).
            let curl = -(get(Component::Er, i, j + 1) - get(Component::Er, i, j)) / dz
                + (get(Component::Ez, i + 1, j) - get(Component::Ez, i, j)) / dr;
            let l = jw * get(Component::Hphi, i, j);
            out.push((l - curl, l));
        }
        for j in j_lo..=j_hi {
            // h_z at (i+½, j).
            let rh = g.r_half(i);
            let curl = -(g.r_int(i + 1) * get(Component::Ephi, i + 1, j)
                - g.r_int(i) * get(Component::Ephi, i, j))
                / (rh * dr)
                - mf / rh * get(Component::Er, i, j);
            let l = jw * get(Component::Hz, i, j);
            out.push((l - curl, l));
        }
    }
    out
}

/// Removes the image in place; returns what was found. `omega` is the
/// mode's complex frequency 2πf + jγ, `dt` the FDTD step.
pub(crate) fn remove_image(
    g: &Grid,
    reg: &Region,
    m: u32,
    omega: C,
    dt: f64,
    comps: &mut [Vec<C>],
) -> Leakage {
    let gamma = omega.im;
    let half = (-0.5 * gamma * dt).exp();
    for c in [Component::Hr, Component::Hphi, Component::Hz] {
        comps[pos(c)].iter_mut().for_each(|v| *v *= half);
    }
    let view: Vec<&[C]> = comps.iter().map(|v| v.as_slice()).collect();
    let one = C::new(1.0, 0.0);
    let phase = C::from_polar(1.0, omega.re * dt);
    let r = residuals(g, reg, m, omega, &view, false, one);
    let x = residuals(g, reg, m, omega, &view, true, phase);
    let (mut num, mut den, mut r0, mut l2) = (C::new(0.0, 0.0), 0.0, 0.0, 0.0);
    for ((rv, lv), (xv, _)) in r.iter().zip(&x) {
        num += xv.conj() * rv;
        den += xv.norm_sqr();
        r0 += rv.norm_sqr();
        l2 += lv.norm_sqr();
    }
    if den == 0.0 || l2 == 0.0 {
        return Leakage {
            rho: C::new(0.0, 0.0),
            residual_before: 0.0,
            residual_after: 0.0,
        };
    }
    let rho = num / den;
    let r1: f64 = r
        .iter()
        .zip(&x)
        .map(|((rv, _), (xv, _))| (rv - rho * xv).norm_sqr())
        .sum();
    let scale = 1.0 / (1.0 - rho.norm_sqr());
    for (k, c) in Component::ALL.iter().enumerate() {
        let rc = if c.is_electric() { rho } else { rho * phase };
        for v in comps[k].iter_mut() {
            *v = (*v - rc * v.conj()) * scale;
        }
    }
    Leakage {
        rho,
        residual_before: (r0 / l2).sqrt(),
        residual_after: (r1 / l2).sqrt(),
    }
}
