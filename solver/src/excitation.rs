//! Sources and probes: the broadband pulse, and where it is injected and
//! observed.
//!
//! A mode is reached when a source and a probe both sit where its field is
//! not zero. Nobody should have to know where that is, so every run drives
//! several points with all three electric components at once and records
//! several points, each probe a weighted sum of all six components. The
//! points come from a low-discrepancy sequence (the R2 sequence, irrational
//! steps in r and z), so none sits on a symmetry plane or a Bessel node of the
//! region by construction; when the structure has a dielectric body, half of
//! the points are drawn inside the densest material, where the resonances
//! of a dielectric resonator live.
use crate::coefficients::Coefficients;
use crate::consts::ETA0;
use crate::fields::Fields;
use lathe_mesh::{Component, Grid, MaterialMap};
use std::f64::consts::PI;

/// The source waveform: the time derivative of a Gaussian-windowed cosine,
///
/// s(t) = −(1/ω_c) d/dt [ exp(−τ²/2σ_t²) cos(ω_c τ) ],  τ = t − t0,
///
/// scaled to a peak near 1. Being a derivative, it carries no net charge
/// (∫ s dt = 0): nothing static is left behind after the pulse. Its
/// spectrum is |S(f)| ∝ f·exp(−(f − f_c)²/2σ_f²) with σ_f = 1/(2πσ_t).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pulse {
    /// Centre frequency f_c, Hz.
    pub f_center: f64,
    /// Spectral width σ_f, Hz.
    pub sigma_f: f64,
    /// Temporal width σ_t, s.
    pub sigma_t: f64,
    /// Delay t0 of the peak, s (nine σ_t: the waveform starts at e^{−40.5}
    /// of its peak, below double-precision significance).
    pub t0: f64,
}

impl Pulse {
    /// The pulse for the band `[f_min, f_max]` (Hz): centred on it, with
    /// σ_f = max(half-width/2.5, f_c/10), so the band edges see at least
    /// e^{−3.1} ≈ 4 % of the peak spectrum.
    pub fn for_band(f_min: f64, f_max: f64) -> Pulse {
        let f_center = 0.5 * (f_min + f_max);
        let sigma_f = (0.5 * (f_max - f_min) / 2.5).max(0.1 * f_center);
        let sigma_t = 1.0 / (2.0 * PI * sigma_f);
        Pulse {
            f_center,
            sigma_f,
            sigma_t,
            t0: 9.0 * sigma_t,
        }
    }

    /// How long the source is on, s (2 t0).
    pub fn duration(&self) -> f64 {
        2.0 * self.t0
    }

    /// Frequency above which the spectrum is below ~1e-16 of its peak:
    /// f_c + 8.8 σ_f (e^{−8.8²/2} = 1.6e-17, times the f/f_c factor). Probe
    /// signals may be decimated as long as nothing above it folds into the
    /// band.
    pub fn f_top(&self) -> f64 {
        self.f_center + 8.8 * self.sigma_f
    }

    /// The waveform s(t).
    pub fn current(&self, t: f64) -> f64 {
        let tau = t - self.t0;
        let wc = 2.0 * PI * self.f_center;
        let s2 = self.sigma_t * self.sigma_t;
        let env = (-0.5 * tau * tau / s2).exp();
        env * ((tau / s2) * (wc * tau).cos() + wc * (wc * tau).sin()) / wc
    }
}

/// One node a source drives or a probe reads, with its weight.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tap {
    /// The component.
    pub component: Component,
    /// Flat index into that component's array.
    pub index: usize,
    /// Weight (for probes, H taps include η0 so E and H weigh alike).
    pub weight: f64,
}

/// A source or probe point.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// Radius, m.
    pub r: f64,
    /// z, m.
    pub z: f64,
    /// The nodes it touches.
    pub taps: Vec<Tap>,
    /// For probes of an m = 0 run: the family it reads (TE: E_φ, H_r, H_z;
    /// TM: E_r, E_z, H_φ), which decouple exactly at m = 0, so every mode
    /// it sees is of that family. `None` otherwise.
    pub family: Option<crate::modes::Family>,
}

/// R2 low-discrepancy sequence in the unit square (Roberts 2018: steps
/// 1/φ₂ and 1/φ₂², φ₂ the plastic number).
fn r2(k: usize) -> (f64, f64) {
    const A1: f64 = 0.754_877_666_246_692_8;
    const A2: f64 = 0.569_840_290_998_053_2;
    let x = (0.5 + A1 * k as f64).fract();
    let y = (0.5 + A2 * k as f64).fract();
    (x, y)
}

/// Nearest node of component `c` to (r, z), if it is a free node.
fn nearest_free(grid: &Grid, coeffs: &Coefficients, c: Component, r: f64, z: f64) -> Option<usize> {
    let (rh, zh) = c.staggering();
    let (ni, nj) = c.shape(grid);
    let fi = r / grid.dr - if rh { 0.5 } else { 0.0 };
    let fj = (z - grid.z0) / grid.dz - if zh { 0.5 } else { 0.0 };
    let i = (fi.round().max(0.0) as usize).min(ni - 1);
    let j = (fj.round().max(0.0) as usize).min(nj - 1);
    let k = i * nj + j;
    let free = match c {
        Component::Er | Component::Ephi | Component::Ez => coeffs.cb(c)[k] != 0.0,
        // An H node is useful when an electric neighbour is free; the E
        // check of the point covers that.
        _ => true,
    };
    free.then_some(k)
}

/// Chooses `n_sources` source points and `n_probes` probe points for one run.
/// Deterministic: depends only on the grid, the materials and the counts.
pub fn place(
    map: &MaterialMap,
    coeffs: &Coefficients,
    n_sources: usize,
    n_probes: usize,
) -> (Vec<Point>, Vec<Point>) {
    let g = &map.grid;
    let eps_max = map.max_eps_r();
    let dense = |r: f64, z: f64| -> bool {
        if eps_max < 1.5 {
            return true;
        }
        nearest_free(g, coeffs, Component::Ephi, r, z)
            .map(|k| map.ephi.eps_r[k] >= 0.5 * (1.0 + eps_max))
            .unwrap_or(false)
    };
    let mut k = 1usize;
    let mut pick = |count: usize, electric_only: bool, salt: f64| -> Vec<Point> {
        let mut out = Vec::new();
        let mut tries = 0;
        while out.len() < count && tries < 20_000 {
            tries += 1;
            let (x, y) = r2(k);
            k += 1;
            let r = g.radius() * (0.03 + 0.94 * x);
            let z = g.z0 + (g.z_top() - g.z0) * (0.03 + 0.94 * y);
            // First half of the points in the dense material (if any).
            if out.len() < count.div_ceil(2) && tries < 10_000 && !dense(r, z) {
                continue;
            }
            let comps: &[Component] = if electric_only {
                &Component::ALL[..3]
            } else {
                &Component::ALL
            };
            let mut taps = Vec::new();
            for (n, &c) in comps.iter().enumerate() {
                if let Some(index) = nearest_free(g, coeffs, c, r, z) {
                    // Weights of varied size and sign, fixed per slot.
                    let w = (1.0 + 0.37 * ((n as f64 + salt) * 2.399).sin())
                        * if (n + out.len()) % 2 == 0 { 1.0 } else { -1.0 };
                    let scale = if c.is_electric() { 1.0 } else { ETA0 };
                    taps.push(Tap {
                        component: c,
                        index,
                        weight: w * scale,
                    });
                }
            }
            if taps.iter().any(|t| t.component.is_electric()) {
                out.push(Point {
                    r,
                    z,
                    taps,
                    family: None,
                });
            }
        }
        out
    };
    let sources = pick(n_sources, true, 0.3);
    let mut probes = pick(n_probes, false, 1.1);
    if coeffs.m == 0 {
        // Read each family on its own (see `Point::family`).
        use crate::modes::Family;
        probes = probes
            .into_iter()
            .flat_map(|p| {
                [Family::Te, Family::Tm].into_iter().filter_map(move |fam| {
                    let taps: Vec<Tap> = p
                        .taps
                        .iter()
                        .filter(|t| {
                            let te = matches!(
                                t.component,
                                Component::Ephi | Component::Hr | Component::Hz
                            );
                            te == (fam == Family::Te)
                        })
                        .copied()
                        .collect();
                    (!taps.is_empty()).then_some(Point {
                        r: p.r,
                        z: p.z,
                        taps,
                        family: Some(fam),
                    })
                })
            })
            .collect();
    }
    (sources, probes)
}

/// Adds the source current `s` at every tap of `sources`: Ampère's law
/// with a current, ε ∂t E = ∇×H − J, so E −= (Δt/ε)·w·s at each tap (w the
/// tap's weight, Δt/ε the node's `cb`; held nodes stay at zero).
pub fn inject(f: &mut Fields, c: &Coefficients, sources: &[Point], s: f64) {
    for p in sources {
        for t in &p.taps {
            let cb = c.cb(t.component)[t.index];
            f.get_mut(t.component)[t.index] -= cb * t.weight * s;
        }
    }
}

/// The sample a probe records: Σ w·u over its taps (H taps carry η0 in
/// their weight, see [`Tap`]).
pub fn read(f: &Fields, p: &Point) -> f64 {
    p.taps
        .iter()
        .map(|t| t.weight * f.get(t.component)[t.index])
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pulse_has_no_net_charge_and_a_clean_spectrum() {
        let p = Pulse::for_band(5e9, 25e9);
        let dt = p.sigma_t / 50.0;
        let n = (p.duration() / dt) as usize;
        let sum: f64 = (0..n)
            .map(|k| p.current((k as f64 + 0.5) * dt))
            .sum::<f64>()
            * dt;
        let peak = (0..n)
            .map(|k| p.current((k as f64 + 0.5) * dt).abs())
            .fold(0.0, f64::max);
        assert!(sum.abs() < 1e-12 * peak * p.duration(), "net charge {sum}");
        // Spectrum at the band edges vs above f_top, by direct DFT.
        let spec = |f: f64| {
            let (mut re, mut im) = (0.0, 0.0);
            for k in 0..n {
                let t = (k as f64 + 0.5) * dt;
                let s = p.current(t);
                re += s * (2.0 * PI * f * t).cos();
                im += s * (2.0 * PI * f * t).sin();
            }
            (re * re + im * im).sqrt() * dt
        };
        let top = spec(p.f_center);
        assert!(spec(5e9) > 0.01 * top && spec(25e9) > 0.03 * top);
        assert!(spec(p.f_top()) < 1e-14 * top, "{}", spec(p.f_top()) / top);
    }
}
